"""Shared fixtures: the example mission folder and two example missions as parsed TOML."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

import pytest

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
