"""Shared fixtures: the example mission folder and two example missions as parsed TOML."""

from __future__ import annotations

import os
import tomllib
from pathlib import Path
from typing import Any

import pytest
from hypothesis import settings

# CI runs the property tests on a fixed sequence of examples, so a red build can be
# reproduced; on a developer's machine they explore new examples on every run.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI") == "true":
    settings.load_profile("ci")

MISSIONS_DIR = Path(__file__).resolve().parent.parent / "missions"


@pytest.fixture
def missions_dir() -> Path:
    """The folder of example missions shipped with the repository."""
    return MISSIONS_DIR


@pytest.fixture
def hobby_doc() -> dict[str, Any]:
    """missions/hobby_single_stage.toml as the dictionary tomllib gives."""
    return tomllib.loads((MISSIONS_DIR / "hobby_single_stage.toml").read_text(encoding="utf-8"))


@pytest.fixture
def orbital_doc() -> dict[str, Any]:
    """missions/orbital_launcher.toml as the dictionary tomllib gives."""
    return tomllib.loads((MISSIONS_DIR / "orbital_launcher.toml").read_text(encoding="utf-8"))
