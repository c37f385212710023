# Quick start: `make demo` runs the main job on an example mission; `make test` runs the checks.
PYTHON ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
DEMO_MISSION ?= missions/two_stage_competition.toml

.PHONY: demo test lint typecheck docs unit bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@ $(VENV)/.installed

demo: $(VENV)/.installed
	$(BIN)/propulsion fly $(DEMO_MISSION)

lint: $(VENV)/.installed-test
	$(BIN)/ruff check propulsion tests
	$(BIN)/ruff format --check propulsion tests

typecheck: $(VENV)/.installed-test
	$(BIN)/mypy

# The documentation site (docs/, mkdocs.yml) into site/; strict, so a broken link fails.
docs: $(VENV)/.installed-test
	$(BIN)/mkdocs build --strict --site-dir site

unit: $(VENV)/.installed-test
	$(BIN)/python -m pytest

test: lint typecheck docs unit

bench: $(VENV)/.installed-test
	$(BIN)/python -m pytest tests/benchmarks --benchmark-only -p no:cacheprovider -o addopts=""

clean:
	rm -rf $(VENV) .pytest_cache .mypy_cache .ruff_cache site
