"""The split runner: ideal optimum on a mission, the loss-aware search, refusals."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest
from typer.testing import CliRunner

from propulsion.ascent import fly
from propulsion.cli import app
from propulsion.mission import load_mission, parse_mission
from propulsion.stage_split import SplitError, split, stack_for_split

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
G0 = 9.80665  # standard gravity, exact (3rd CGPM, 1901)
runner = CliRunner()


def two_stage_engine(apogee: str = "60 km") -> dict[str, Any]:
    """A two-stage engine sounding rocket over a flat Earth, without drag."""

    def stage(name: str, inert: str, propellant: str, thrust: str, isp: str) -> dict[str, Any]:
        return {
            "name": name,
            "inert_mass": inert,
            "propellant_mass": propellant,
            "engine": {"thrust_vacuum": thrust, "isp_vacuum": isp, "exit_area": "0 m^2"},
        }

    return {
        "vehicle": {"payload": "5 kg"},
        "stage": [
            stage("lower", "12 kg", "60 kg", "4000 N", "230 s"),
            stage("upper", "4 kg", "15 kg", "1000 N", "250 s"),
        ],
        "leg": [
            {
                "name": "up",
                "stages": ["lower", "upper"],
                "target": "apogee",
                "altitude": apogee,
                "loss_allowance": "250 m/s",
            }
        ],
        "flight": {"earth": "flat"},
    }


def test_ideal_split_of_the_launcher_agrees_two_ways() -> None:
    result = split(load_mission(MISSIONS / "orbital_launcher.toml"), losses=False)
    assert result.lagrange.feasible and result.direct.converged
    assert result.lagrange.liftoff_mass == pytest.approx(result.direct.liftoff_mass, rel=1e-6)
    np.testing.assert_allclose(result.lagrange.delta_v, result.direct.delta_v, rtol=1e-6)
    assert result.lagrange.delta_v.sum() == pytest.approx(result.required_delta_v, rel=1e-12)
    # the optimum is no heavier than the current design delivering the same requirement
    masses = stack_for_split(
        result.current_delta_v / result.current_delta_v.sum() * result.required_delta_v,
        result.specific_impulse * G0,
        result.structural_coefficient,
        result.mission.vehicle.payload_mass,
    )
    assert masses is not None
    assert result.lagrange.liftoff_mass <= result.mission.vehicle.payload_mass + masses.sum()
    # one stage cannot do it; three identical-ish stages are lighter than two
    one, two, three = result.counts
    assert not one.feasible and two.feasible and three.liftoff_mass < two.liftoff_mass


def test_stack_for_split_gives_each_stage_its_delta_v() -> None:
    # Tsiolkovsky per stage with everything above riding along (Curtis 3rd ed. sec. 11.5)
    dv = np.array([3000.0, 2500.0])
    c = np.array([300.0, 330.0]) * G0
    eps = np.array([0.1, 0.12])
    masses = stack_for_split(dv, c, eps, 100.0)
    assert masses is not None
    above = 100.0 + masses[1]
    assert c[1] * np.log(above / (100.0 + eps[1] * masses[1])) == pytest.approx(2500.0, rel=1e-12)
    full = above + masses[0]
    assert c[0] * np.log(full / (above + eps[0] * masses[0])) == pytest.approx(3000.0, rel=1e-12)
    assert stack_for_split(np.array([30000.0]), c[:1], eps[:1], 100.0) is None


def _resized(doc: dict[str, Any], masses: np.ndarray, eps: np.ndarray) -> dict[str, Any]:
    """The mission with its stages resized, engines scaled with their stack (as split does)."""
    out = {**doc, "stage": [dict(stage, engine=dict(stage["engine"])) for stage in doc["stage"]]}
    old = [72.0 + 19.0 + 5.0, 19.0 + 5.0]  # stack mass at each ignition in two_stage_engine
    for k, stage in enumerate(out["stage"]):
        usable = float((1 - eps[k]) * masses[k])
        stage["propellant_mass"] = f"{usable!r} kg"
        stage["inert_mass"] = f"{float(masses[k]) - usable!r} kg"
        new = 5.0 + float(masses[k:].sum())
        thrust = float(stage["engine"]["thrust_vacuum"].split()[0]) * new / old[k]
        stage["engine"]["thrust_vacuum"] = f"{thrust!r} N"
    return out


def test_loss_aware_split_flies_and_meets_the_target() -> None:
    doc = two_stage_engine()
    result = split(parse_mission(doc))
    loss = result.loss_aware
    assert loss is not None and loss.found, loss
    assert loss.flights > 20
    eps = result.structural_coefficient
    # flown again through the ordinary path, the stack meets the 60 km target ...
    flown = fly(parse_mission(_resized(doc, loss.stage_mass, eps)), margin=False)
    assert flown.apogee >= 60e3 * (1 - 2e-3)
    # ... and one with 3 % less delta-v in each stage does not (the search found the edge)
    smaller = stack_for_split(
        loss.delta_v * 0.97, result.specific_impulse * G0, eps, mission_payload(doc)
    )
    assert smaller is not None
    short = fly(parse_mission(_resized(doc, smaller, eps)), margin=False)
    assert short.apogee < 60e3


def mission_payload(doc: dict[str, Any]) -> float:
    return float(doc["vehicle"]["payload"].split()[0])


def test_split_refuses_motor_stages() -> None:
    with pytest.raises(SplitError, match="flies a motor"):
        split(load_mission(MISSIONS / "two_stage_competition.toml"))
    result = runner.invoke(app, ["split", str(MISSIONS / "hobby_single_stage.toml")])
    assert result.exit_code == 2
    assert "propulsion pick" in result.stderr


def test_split_command_table() -> None:
    result = runner.invoke(app, ["split", str(MISSIONS / "orbital_launcher.toml"), "--no-losses"])
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())
    assert "Lagrange optimum" in text and "Stage counts compared" in text
    assert "Safety caution" in text
