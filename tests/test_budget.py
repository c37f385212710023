"""The ideal ledger against closed forms, published constants and invariants."""

from __future__ import annotations

import copy
import math
import tomllib
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from propulsion import budget, load_mission, parse_mission
from propulsion.ledger import BudgetResult

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
G0 = 9.80665  # standard gravity, exact by definition (3rd CGPM, 1901)
MU = 3.986004418e14  # WGS 84 GM [m^3/s^2], NIMA TR8350.2 table 3.1
RE = 6378137.0  # WGS 84 equatorial radius [m], NIMA TR8350.2 table 3.1
OMEGA = 7.292115e-5  # WGS 84 rotation rate [rad/s], NIMA TR8350.2 table 3.1


def _engine_doc(
    *,
    payload: str = "100 kg",
    stages: list[tuple[str, str, str, str]] | None = None,
    legs: list[dict[str, Any]] | None = None,
    margins: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """A mission with engine stages: (name, inert, propellant, isp_vacuum)."""
    stages = stages or [
        ("first", "1000 kg", "9000 kg", "300 s"),
        ("second", "200 kg", "1800 kg", "350 s"),
    ]
    doc: dict[str, Any] = {
        "mission": {"name": "closed form"},
        "vehicle": {"payload": payload},
        "stage": [
            {
                "name": name,
                "inert_mass": inert,
                "propellant_mass": propellant,
                "engine": {"thrust_vacuum": "300 kN", "isp_vacuum": isp, "exit_area": "0.1 m^2"},
            }
            for name, inert, propellant, isp in stages
        ],
    }
    if legs is not None:
        doc["leg"] = legs
    if margins is not None:
        doc["margins"] = margins
    return doc


def _load(name: str) -> dict[str, Any]:
    return tomllib.loads((MISSIONS / name).read_text())


def test_two_stage_stack_matches_closed_form() -> None:
    # Closed form: Tsiolkovsky per stage with everything above riding along
    # (H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., eq. 11.30, 11.47).
    result = budget(parse_mission(_engine_doc()))
    m0_1, mf_1 = 100 + 200 + 1800 + 1000 + 9000, 100 + 200 + 1800 + 1000
    m0_2, mf_2 = 100 + 200 + 1800, 100 + 200
    dv1 = 300 * G0 * math.log(m0_1 / mf_1)
    dv2 = 350 * G0 * math.log(m0_2 / mf_2)
    first, second = result.stages
    assert first.initial_mass == pytest.approx(m0_1, rel=1e-15)
    assert second.final_mass == pytest.approx(mf_2, rel=1e-15)
    assert first.ideal_delta_v == pytest.approx(dv1, rel=1e-12)
    assert second.ideal_delta_v == pytest.approx(dv2, rel=1e-12)
    assert result.total_ideal_delta_v == pytest.approx(dv1 + dv2, rel=1e-12)
    # Definitions from Curtis, section 11.6: epsilon = mE/(mE+mP), lambda = mPL/(mE+mP).
    assert first.structural_coefficient == pytest.approx(1000 / 10000, rel=1e-15)
    assert second.payload_ratio == pytest.approx(100 / 2000, rel=1e-15)
    assert first.mass_ratio == pytest.approx(m0_1 / mf_1, rel=1e-15)


def test_residual_propellant_is_not_burnt() -> None:
    doc = _engine_doc(margins={"residual_fraction": "2 %"})
    result = budget(parse_mission(doc))
    second = result.stages[1]
    # closed form: only 98 % of the propellant leaves the stage
    assert second.final_mass == pytest.approx(100 + 200 + 0.02 * 1800, rel=1e-15)
    assert second.usable_propellant == pytest.approx(0.98 * 1800, rel=1e-15)


def test_apogee_requirement_is_energy_conservation() -> None:
    # Energy law with inverse-square gravity (Curtis, 3rd ed., eq. 2.80), plus the allowance.
    doc = _load("hobby_single_stage.toml")
    result = budget(parse_mission(doc))
    r0 = RE + 150.0
    expected = math.sqrt(2 * MU * (1 / r0 - 1 / (r0 + 1000.0))) + 45.0
    assert result.legs[0].required_delta_v == pytest.approx(expected, rel=1e-12)
    # For a 1 km climb this is close to sqrt(2 g0 h) (uniform gravity): 0.1 % apart at most.
    assert expected - 45.0 == pytest.approx(math.sqrt(2 * G0 * 1000.0), rel=1e-3)


def test_orbit_requirement_with_earth_rotation() -> None:
    # Circular speed sqrt(GM/r) and the eastward surface speed omega R cos(latitude)
    # (Curtis, 3rd ed., eq. 2.63; section 11.2 on launch from a rotating Earth).
    doc = _load("orbital_launcher.toml")
    del doc["leg"][0]["inclination"]
    doc["launch"]["azimuth"] = "90 deg"
    result = budget(parse_mission(doc))
    ascent = result.legs[0]
    speed = math.sqrt(MU / (RE + 200e3))
    expected = speed + 1500.0 - OMEGA * RE * math.cos(math.radians(38))
    assert ascent.required_delta_v == pytest.approx(expected, rel=1e-12)
    # The shipped example names a 40 deg inclination instead: the azimuth flown is the
    # velocity triangle's, sin(beta) = cos(i) / cos(latitude) inertial (Curtis, 3rd ed.,
    # launch azimuth), less the ground's eastward speed; the credit is that speed along it.
    latitude, inclination = math.radians(38), math.radians(40)
    beta = math.asin(math.cos(inclination) / math.cos(latitude))
    ground = OMEGA * RE * math.cos(latitude)
    flown = math.atan2(speed * math.sin(beta) - ground, speed * math.cos(beta))
    shipped = budget(parse_mission(_load("orbital_launcher.toml"))).legs[0]
    assert shipped.required_delta_v == pytest.approx(
        speed + 1500.0 - ground * math.sin(flown), rel=1e-12
    )


def test_legs_sum_to_the_stack_ideal_delta_v() -> None:
    # Splitting a burn into pieces does not change its delta-v (ln is additive), so the
    # delivered delta-v of all legs plus the delta-v of what is left equals the stack total.
    result = budget(load_mission(MISSIONS / "orbital_launcher.toml"))
    delivered = sum(leg.delivered_delta_v for leg in result.legs)
    assert delivered + result.leftover_delta_v == pytest.approx(
        result.total_ideal_delta_v, rel=1e-12
    )
    upper = result.mission.vehicle.stages[1]
    used = (
        sum(leg.propellant_used for leg in result.legs)
        - result.mission.vehicle.stages[0].usable_propellant
    )
    assert used + result.legs[-1].propellant_remaining == pytest.approx(
        upper.usable_propellant, rel=1e-12
    )


def test_restartable_stage_consumes_propellant_by_the_rocket_equation() -> None:
    legs = [
        {"name": "boost", "stages": ["first", "second"], "target": "delta_v", "delta_v": "5 km/s"},
        {"name": "burn two", "stages": ["second"], "target": "delta_v", "delta_v": "300 m/s"},
    ]
    result = budget(parse_mission(_engine_doc(legs=legs)))
    second = result.legs[1]
    mass_start = 100 + 200 + second.propellant_used + second.propellant_remaining
    # Inverse rocket equation: mp = m0 (1 - exp(-dv / (Isp g0)))
    expected = mass_start * (1 - math.exp(-300.0 / (350 * G0)))
    assert second.propellant_used == pytest.approx(expected, rel=1e-12)
    assert second.delivered_delta_v == pytest.approx(300.0, rel=1e-12)


def test_verdict_falls_short_and_names_the_leg() -> None:
    legs = [{"name": "too far", "stages": ["first", "second"], "delta_v": "20 km/s"}]
    result = budget(parse_mission(_engine_doc(legs=legs)))
    assert result.verdict.meets_targets is False
    assert result.verdict.margin == pytest.approx(result.total_ideal_delta_v - 20e3, rel=1e-12)
    assert "'too far'" in result.verdict.text
    assert "Falls short" in result.verdict.text


def test_verdict_required_margin_as_percentage() -> None:
    total = budget(parse_mission(_engine_doc())).total_ideal_delta_v
    need = total / 1.05  # exactly 5 % below what the stack gives
    legs = [{"name": "all", "stages": ["first", "second"], "delta_v": f"{need * 1.001} m/s"}]
    short = budget(parse_mission(_engine_doc(legs=legs, margins={"required_margin": "5 %"})))
    assert short.verdict.meets_targets is False
    assert "required margin" in short.verdict.text
    legs[0]["delta_v"] = f"{need * 0.999} m/s"
    ok = budget(parse_mission(_engine_doc(legs=legs, margins={"required_margin": "5 %"})))
    assert ok.verdict.meets_targets is True


def test_no_legs_means_no_verdict() -> None:
    result = budget(parse_mission(_engine_doc()))
    assert result.verdict.meets_targets is None
    assert result.leftover_delta_v == pytest.approx(result.total_ideal_delta_v, rel=1e-12)


def test_motor_cluster_impulse_class() -> None:
    # Two pd-H113 (about 288 N s each) give about 576 N s: class I (320.01-640 N s,
    # NFPA 1127 impulse classification, recalled from memory).
    doc = _load("hobby_single_stage.toml")
    doc["stage"][0]["motor"]["count"] = 2
    result = budget(parse_mission(doc))
    row = result.stages[0]
    motor = result.mission.vehicle.stages[0].propulsion
    assert row.total_impulse == pytest.approx(2 * motor.total_impulse, rel=1e-15)  # type: ignore[union-attr]
    assert row.impulse_class == "I"
    assert result.stages[0].propellant_mass == pytest.approx(2 * 0.1432, rel=1e-12)


def test_frames_carry_units_in_column_names() -> None:
    result = budget(load_mission(MISSIONS / "two_stage_competition.toml"))
    stages = result.stages.to_frame()
    legs = result.legs.to_frame()
    assert list(stages["name"]) == ["booster", "sustainer"]
    assert stages["ideal_delta_v_m_s"].sum() == pytest.approx(result.total_ideal_delta_v)
    assert "initial_mass_kg" in stages.columns and "required_delta_v_m_s" in legs.columns


# -- invariants (hypothesis) ------------------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(
    propellant=st.floats(1.0, 50_000.0),
    extra=st.floats(0.0, 50_000.0),
    isp=st.floats(50.0, 460.0),
)
def test_more_propellant_never_lowers_ideal_delta_v(
    propellant: float, extra: float, isp: float
) -> None:
    def total(mp: float) -> float:
        doc = _engine_doc(stages=[("only", "500 kg", f"{mp!r} kg", f"{isp!r} s")])
        return budget(parse_mission(doc)).total_ideal_delta_v

    assert total(propellant + extra) >= total(propellant)


@settings(max_examples=40, deadline=None)
@given(
    masses=st.lists(
        st.tuples(st.floats(10.0, 5000.0), st.floats(10.0, 50_000.0), st.floats(150.0, 450.0)),
        min_size=1,
        max_size=4,
    ),
    payload=st.floats(0.0, 2000.0),
)
def test_stage_delta_v_sums_to_stack_total(
    masses: list[tuple[float, float, float]], payload: float
) -> None:
    stages = [
        (f"s{i}", f"{inert!r} kg", f"{prop!r} kg", f"{isp!r} s")
        for i, (inert, prop, isp) in enumerate(masses)
    ]
    result = budget(parse_mission(_engine_doc(payload=f"{payload!r} kg", stages=stages)))
    # chain the whole stack at once: sum over stages of Isp g0 ln(m0/mf)
    above = payload
    chain = 0.0
    for inert, prop, isp in reversed(masses):
        chain += isp * G0 * math.log((above + inert + prop) / (above + inert))
        above += inert + prop
    assert result.total_ideal_delta_v == pytest.approx(chain, rel=1e-9)
    assert result.total_ideal_delta_v == pytest.approx(
        sum(row.ideal_delta_v for row in result.stages), rel=1e-12
    )


# Exact conversion factors: international yard and pound agreement (1959) for ft and lb;
# lbf = lb * g0 (exact); statute mile = 5280 ft.
_CONVERSIONS = {
    "kg": ("lb", 1 / 0.45359237),
    "t": ("lb", 1000 / 0.45359237),
    "m": ("ft", 1 / 0.3048),
    "mm": ("in", 1 / 25.4),
    "km": ("mi", 1000 / (0.3048 * 5280)),
    "m/s": ("ft/s", 1 / 0.3048),
    "km/s": ("ft/s", 1000 / 0.3048),
    "kN": ("lbf", 1000 / (0.45359237 * 9.80665)),
    "m^2": ("ft^2", 1 / 0.3048**2),
    "deg": ("rad", math.pi / 180),
}


def _convert(value: Any) -> Any:
    if isinstance(value, dict):
        return {key: _convert(item) for key, item in value.items()}
    if isinstance(value, list):
        return [_convert(item) for item in value]
    if isinstance(value, str):
        parts = value.split(" ", 1)
        if len(parts) == 2 and parts[1] in _CONVERSIONS:
            unit, factor = _CONVERSIONS[parts[1]]
            return f"{float(parts[0]) * factor!r} {unit}"
    return value


def _numbers(result: BudgetResult) -> list[float]:
    values: list[float] = []
    for row in [*result.stages, *result.legs]:
        values += [v for v in row.to_dict().values() if isinstance(v, float)]
    return [*values, result.total_ideal_delta_v, result.leftover_delta_v, result.verdict.margin]


@pytest.mark.parametrize(
    "name", ["hobby_single_stage.toml", "two_stage_competition.toml", "orbital_launcher.toml"]
)
def test_changing_units_leaves_results_unchanged(name: str) -> None:
    doc = _load(name)
    converted = _convert(copy.deepcopy(doc))
    assert converted != doc  # the conversion really changed the text
    base = _numbers(budget(parse_mission(doc, base_dir=MISSIONS)))
    other = _numbers(budget(parse_mission(converted, base_dir=MISSIONS)))
    assert other == pytest.approx(base, rel=1e-9, abs=1e-9)
