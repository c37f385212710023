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


def open_loop(doc: dict[str, Any]) -> dict[str, Any]:
    """The orbital example as it flew before guidance to the orbit (in place, returned):
    due east with a fixed 15 deg pitch kick and the plain linear-tangent law, 350 kg,
    perigee and apogee judged within 200 +- 40 km. The tests of open-loop behaviour (an
    orbit's shape left to the kick) fly this vehicle."""
    doc["flight"].update(guidance="linear_tangent", pitch_kick_angle="15 deg")
    doc["launch"]["azimuth"] = "90 deg"
    doc["leg"][0].pop("inclination", None)
    doc["leg"][0]["tolerance"] = "40 km"
    doc["vehicle"]["payload"] = "350 kg"
    return doc
