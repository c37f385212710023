"""Sizing against closed forms, and its answers to bad requests."""

from __future__ import annotations

import copy
import math
import re
from pathlib import Path
from typing import Any

import pytest
from scipy.optimize import brentq
from typer.testing import CliRunner

from propulsion import fields
from propulsion.ascent import fly
from propulsion.cli import app
from propulsion.fields import FieldError
from propulsion.ledger import budget
from propulsion.mission import load_mission, parse_mission
from propulsion.sizing import SizingError, size

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
G0 = 9.80665  # standard gravity, exact (3rd CGPM, 1901)
MU = 3.986004418e14  # WGS 84 GM [m^3/s^2] (NIMA TR8350.2)
RE = 6378137.0  # WGS 84 equatorial radius [m] (NIMA TR8350.2)
runner = CliRunner()


def flat_rocket(apogee: str = "2 km") -> dict[str, Any]:
    """A drag-free constant-thrust rocket over a flat Earth, aiming at an apogee."""
    return {
        "mission": {"name": "closed form"},
        "vehicle": {"payload": "10 kg"},
        "stage": [
            {
                "name": "only",
                "inert_mass": "30 kg",
                "propellant_mass": "20 kg",
                "engine": {"thrust_vacuum": "2000 N", "isp_vacuum": "200 s", "exit_area": "0 m^2"},
            }
        ],
        "leg": [
            {
                "name": "up",
                "stages": ["only"],
                "target": "apogee",
                "altitude": apogee,
                "loss_allowance": "0 m/s",
            }
        ],
        "flight": {"earth": "flat"},
    }


def closed_form_apogee(propellant: float, thrust: float = 2000.0, isp: float = 200.0) -> float:
    # Drag-free vertical flight in uniform gravity, constant thrust and mass flow
    # (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., chapter 4; integrate
    # dv/dt = c mdot / m - g twice): burnout speed, burnout height, then the coast.
    c = isp * G0
    mdot = thrust / c
    m0, mf = propellant + 40.0, 40.0
    tb = propellant / mdot
    vb = c * math.log(m0 / mf) - G0 * tb
    hb = c * tb - c * (mf / mdot) * math.log(m0 / mf) - 0.5 * G0 * tb**2
    return hb + vb**2 / (2 * G0)


def test_flight_sizing_reproduces_the_closed_form_propellant() -> None:
    mission = parse_mission(flat_rocket("2 km"))
    result = size(mission, "stage.only.propellant_mass")
    expected = brentq(lambda mp: closed_form_apogee(mp) - 2000.0, 1.0, 100.0, xtol=1e-12)
    assert result.flight.found
    assert result.flight.value == pytest.approx(expected, rel=2e-4)
    assert "held fixed" in result.inert_rule


def test_budget_sizing_matches_the_rocket_equation() -> None:
    # Budget: required delta-v = sqrt(2 GM (1/r0 - 1/r1)) (energy conservation, Curtis 3rd ed.
    # eq. 2.80) with no allowance; Tsiolkovsky then gives the propellant in closed form:
    # mp = (mi + pl) (exp(dv / c) - 1).
    mission = parse_mission(flat_rocket("2 km"))
    result = size(mission, "stage.only.propellant_mass")
    dv = math.sqrt(2 * MU * (1 / RE - 1 / (RE + 2000.0)))
    expected = 40.0 * (math.exp(dv / (200.0 * G0)) - 1.0)
    assert result.budget.value == pytest.approx(expected, rel=1e-8)
    assert result.budget_result is not None and result.budget_result.verdict.meets_targets


def test_tank_fraction_grows_the_inert_mass() -> None:
    doc = flat_rocket("60 km")  # needs more than the 20 kg in the file (budget and flight)
    doc["stage"][0]["tank_fraction"] = "10 %"
    result = size(parse_mission(doc), "stage.only.propellant_mass")
    assert "10.0%" in result.inert_rule
    mission = result.budget_result.mission  # type: ignore[union-attr]
    stage = mission.vehicle.stages[0]
    assert stage.inert_mass == pytest.approx(30.0 + 0.1 * (stage.propellant_mass - 20.0), rel=1e-9)
    # the heavier structure costs propellant: more is needed than with a fixed inert mass
    fixed = size(parse_mission(flat_rocket("60 km")), "stage.only.propellant_mass")
    assert result.budget.value > fixed.budget.value > 20.0
    assert result.flight.value > fixed.flight.value > 20.0


def test_payload_sizing_on_an_example_just_meets_the_target() -> None:
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = size(mission, "vehicle.payload")
    assert result.budget.found and result.flight.found
    assert result.flight.sensitivity < 0  # more payload, lower apogee
    # at the budget's solution, the budget's margin equals the required margin
    solved = result.budget_result
    assert solved is not None
    assert solved.verdict.margin == pytest.approx(solved.verdict.required_margin, abs=1e-6)
    assert result.flight_result is not None and result.flight_result.verdict.meets_targets


def test_whole_number_fields_are_scanned() -> None:
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = size(mission, "stage.sustainer.motor.count", target="1.6 km")
    assert result.flight.value == 2.0
    assert result.flight_result is not None and result.flight_result.apogee > 1600.0
    one = budget(mission)
    assert one.verdict.meets_targets  # one motor was enough for the 1 km in the file


def test_unreachable_target_is_reported_not_guessed() -> None:
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = size(mission, "vehicle.payload", target="20 km")
    assert not result.budget.found and not result.flight.found
    assert "no value between" in result.flight.message
    assert math.isnan(result.flight.value)


def test_field_paths_resolve_and_suggest() -> None:
    document = load_mission(MISSIONS / "orbital_launcher.toml").document
    ref = fields.resolve(document, "stage.core.engine.thrust_sea_level")
    assert ref.path == ("stage", 0, "engine", "thrust_sea_level") and ref.dimension == "force"
    assert fields.resolve(document, "stage[2].inert_mass").path == ("stage", 1, "inert_mass")
    assert (
        fields.get_value(document, fields.resolve(document, "stage.core.propellant_mass"))
        == 18000.0
    )
    with pytest.raises(FieldError, match=r"did you mean 'stage\.core\.inert_mass'"):
        fields.resolve(document, "stage.core.inert_mas")
    with pytest.raises(FieldError, match="no stage is called"):
        fields.resolve(document, "stage.booster.inert_mass")
    changed = fields.set_value(document, ref, 40000.0)
    assert changed["stage"][0]["engine"]["thrust_sea_level"] == "40000.0 N"
    assert document["stage"][0]["engine"]["thrust_sea_level"] == "32 kN"  # copy, not in place


def test_sizing_without_a_target_is_an_error() -> None:
    doc = flat_rocket()
    del doc["leg"]
    with pytest.raises(SizingError, match="no legs"):
        size(parse_mission(doc), "vehicle.payload")


def test_size_command(tmp_path: Path) -> None:
    path = str(MISSIONS / "hobby_single_stage.toml")
    result = runner.invoke(app, ["size", path, "--vary", "vehicle.payload"])
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())
    assert "ideal budget" in text and "flight simulation" in text
    assert "Safety caution" in text
    bad = runner.invoke(app, ["size", path, "--vary", "vehicle.paylod"])
    assert bad.exit_code == 2
    assert "did you mean 'vehicle.payload'" in bad.stderr
    short = runner.invoke(app, ["size", path, "--vary", "vehicle.payload", "--target", "20 km"])
    assert short.exit_code == 1
    json_result = runner.invoke(
        app, ["size", path, "--vary", "vehicle.payload", "--json", "--range", "0 kg..2 kg"]
    )
    assert json_result.exit_code == 0
    assert '"field": "vehicle.payload"' in json_result.stdout


# --- reachability, ranges and the current value ------------------------------------------


def test_a_maximum_inside_the_range_is_reported_with_where_it_lies() -> None:
    # The hobby rocket's apogee against its inert mass rises (less drag deceleration per
    # unit mass) and then falls (more mass to lift): a maximum near 0.41 kg of 1,623 m.
    # A 2 km target is out of reach, and `size` says where the best lies.
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = size(mission, "stage.sustainer.inert_mass", target="2 km")
    assert not result.flight.found
    assert "peaks at" in result.flight.message and "inside the range" in result.flight.message
    peak, best = result.flight.peak_value, result.flight.peak_achieved
    assert 0.2 < peak < 0.7 and 1500.0 < best < 2000.0
    # checked on the flight: the apogee there beats the apogee 20 g to either side
    doc = copy.deepcopy(mission.document)

    def apogee(inert: float) -> float:
        doc["stage"][0]["inert_mass"] = f"{inert!r} kg"
        return fly(parse_mission(doc, base_dir=MISSIONS), margin=False).apogee

    assert apogee(peak) == pytest.approx(best, rel=1e-9)
    assert apogee(peak - 0.02) < best and apogee(peak + 0.02) < best


def test_a_scale_field_is_searched_over_its_whole_allowed_range() -> None:
    # impulse_scale may be up to 10 in a mission file; a target that needs more impulse
    # than the motor has is found above 1 (the old range stopped at 0.999999).
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = size(mission, "stage.sustainer.motor.impulse_scale", target="1.3 km")
    assert result.flight.found and 1.0 < result.flight.value < 10.0
    assert result.flight_result is not None and result.flight_result.apogee >= 1300.0 * 0.999


def test_the_current_value_is_the_value_itself_even_at_zero() -> None:
    # payload 0 kg: the search starts at 0 itself, so "the current value" and "0" in the
    # message are the same flight with the same margin
    doc = copy.deepcopy(load_mission(MISSIONS / "hobby_single_stage.toml").document)
    doc["vehicle"]["payload"] = "0 kg"
    result = size(parse_mission(doc, base_dir=MISSIONS), "vehicle.payload", target="20 km")
    message = result.flight.message
    # the numbers in plain decimals with thousands separators ("-19,800")
    current = re.search(r"margin ([-+0-9.,]+) at the current value", message)
    at_zero = re.search(r", ([-+0-9.,]+) at 0,", message)
    assert current is not None and at_zero is not None, message
    assert float(current.group(1).replace(",", "")) == float(at_zero.group(1).replace(",", ""))
