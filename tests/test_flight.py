"""The ascent integration against closed forms, conservation laws and a tight reference."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from propulsion import ascent, flight
from propulsion.ascent import fly, osculating_orbit
from propulsion.mission import load_mission, parse_mission
from propulsion.reference import reference_flight

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
EXAMPLES = sorted(MISSIONS.glob("*.toml"))
G0 = 9.80665  # standard gravity, exact (3rd CGPM, 1901)
MU = 3.986004418e14  # WGS 84 GM [m^3/s^2] (NIMA TR8350.2)
RE = 6378137.0  # WGS 84 equatorial radius [m] (NIMA TR8350.2)


def engine_rocket(
    *,
    thrust: float = 2000.0,
    isp: float = 200.0,
    propellant: float = 20.0,
    inert: float = 30.0,
    payload: float = 10.0,
    earth: str = "flat",
    drag: bool = False,
    extra: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """A one-stage engine rocket, vertical, no rail; drag-free unless asked."""
    vehicle: dict[str, Any] = {"payload": f"{payload!r} kg"}
    if drag:
        vehicle.update(diameter="100 mm", drag_curve="slender_finned")
    doc: dict[str, Any] = {
        "vehicle": vehicle,
        "stage": [
            {
                "name": "only",
                "inert_mass": f"{inert!r} kg",
                "propellant_mass": f"{propellant!r} kg",
                "engine": {
                    "thrust_vacuum": f"{thrust!r} N",
                    "isp_vacuum": f"{isp!r} s",
                    "exit_area": "0 m^2",
                },
            }
        ],
        "flight": {"earth": earth},
    }
    for key, value in (extra or {}).items():
        doc.setdefault(key, {}).update(value)
    return doc


def test_vertical_constant_thrust_matches_closed_form() -> None:
    # Drag-free vertical flight with constant thrust and mass flow in uniform gravity
    # (G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., chapter 4,
    # "Flight performance": v_b = c ln(m0/mf) - g tb; h_b = c tb - c (mf/mdot) ln(m0/mf)
    # - g tb^2 / 2; apogee h_b + v_b^2 / (2 g); the equation numbers recalled from memory,
    # the formulas follow from integrating dv/dt = c mdot / m - g twice).
    thrust, isp, propellant, inert, payload = 2000.0, 200.0, 20.0, 30.0, 10.0
    result = fly(parse_mission(engine_rocket()), margin=False)
    c = isp * G0
    mdot = thrust / c
    m0, mf = propellant + inert + payload, inert + payload
    tb = propellant / mdot
    vb = c * math.log(m0 / mf) - G0 * tb
    hb = c * tb - c * (mf / mdot) * math.log(m0 / mf) - 0.5 * G0 * tb**2
    apogee = hb + vb**2 / (2 * G0)
    stage = result.stages[0]
    assert stage.burnout_time == pytest.approx(tb, rel=1e-12)
    assert stage.burnout_speed == pytest.approx(vb, rel=1e-8)
    assert stage.burnout_altitude == pytest.approx(hb, rel=1e-8)
    assert result.apogee == pytest.approx(apogee, rel=1e-8)
    assert result.apogee_time == pytest.approx(tb + vb / G0, rel=1e-8)
    # in vacuum and uniform gravity the whole loss is gravity: g times the time to apogee
    assert result.total.gravity_loss == pytest.approx(G0 * (tb + vb / G0), rel=1e-7)
    assert result.total.drag_loss == 0.0


def _coast_core(speed: float, altitude: float, max_time: float) -> flight.FlightCore:
    doc = engine_rocket(earth="round", extra={"flight": {"max_time": f"{max_time} s"}})
    core = flight.build_core(parse_mission(doc))
    core.airborne = True
    core.stop_at_ground = True
    core.site_altitude[:] = altitude
    core.rotation_speed[:] = speed
    core.usable[:] = 0.0  # no burn: the stage coasts from the start
    return core


@pytest.mark.parametrize(("rtol", "tolerance"), [(1e-8, 1e-6), (1e-10, 1e-8)])
def test_coast_conserves_energy_and_angular_momentum(rtol: float, tolerance: float) -> None:
    # Two-body motion conserves specific energy v^2/2 - mu/r and angular momentum r x v
    # (H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., eqs. 2.31, 2.80).
    core = _coast_core(7900.0, 300e3, 5000.0)  # above the atmosphere, elliptic, ~0.9 orbit
    outcome = flight.simulate(core, rtol=rtol)
    assert outcome.status[0] == "time limit"
    r0, v0 = RE + 300e3, 7900.0
    energy0, momentum0 = 0.5 * v0**2 - MU / r0, r0 * v0
    x, y, vx, vy = outcome.final_state[:4, 0]
    energy = 0.5 * (vx**2 + vy**2) - MU / math.hypot(x, y)
    momentum = abs(x * vy - y * vx)
    assert abs(energy - energy0) / abs(energy0) < tolerance
    assert abs(momentum - momentum0) / momentum0 < tolerance
    assert math.hypot(x, y) > r0  # it really moved along the ellipse


def test_osculating_orbit_matches_kepler_elements() -> None:
    # Kepler elements from a state by the published vector formulas (Curtis, 3rd ed.,
    # Algorithm 4.2): h = r x v, e = (v x h)/mu - r/|r|, a = h^2 / (mu (1 - e^2)).
    result = fly(load_mission(MISSIONS / "orbital_launcher.toml"), margin=False)
    assert result.status == "orbit"
    x, y, vx, vy = result.outcome.final_state[:4, 0]
    r = np.array([x, y, 0.0])
    v = np.array([vx, vy, 0.0])
    h = np.cross(r, v)
    e = np.cross(v, h) / MU - r / np.linalg.norm(r)
    ecc = np.linalg.norm(e)
    a = np.dot(h, h) / (MU * (1 - ecc**2))
    orbit = osculating_orbit(x, y, vx, vy)
    assert orbit.eccentricity == pytest.approx(ecc, rel=1e-9)
    assert orbit.semi_major_axis == pytest.approx(a, rel=1e-10)
    assert orbit.perigee_altitude == pytest.approx(a * (1 - ecc) - RE, rel=1e-8)
    assert orbit.apogee_altitude == pytest.approx(a * (1 + ecc) - RE, rel=1e-8)
    # the cutoff put the orbit's energy on the target circle's (semi-major axis = r target)
    assert orbit.semi_major_axis == pytest.approx(RE + 200e3, rel=1e-9)


def test_orbital_losses_are_in_the_textbook_range() -> None:
    # Plausibility, not an exact value: gravity losses of launch vehicles are quoted at
    # roughly 0.7-1.6 km/s and drag losses at 0.05-0.4 km/s (J. R. Wertz and W. J. Larson,
    # Space Mission Analysis and Design, 3rd ed., section 18 on launch systems; ranges
    # recalled from memory).
    result = fly(load_mission(MISSIONS / "orbital_launcher.toml"), margin=False)
    assert 700.0 <= result.total.gravity_loss <= 1600.0
    assert 50.0 <= result.total.drag_loss <= 400.0


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_ledger_closes_on_every_example(path: Path) -> None:
    result = fly(load_mission(path), margin=False)
    for row in result.ledger:
        assert abs(row.closure) < 1e-5 * max(row.ideal, 1.0), row
    total = result.total
    parts = sum(row.ideal for row in result.ledger[:-1])
    assert total.ideal == pytest.approx(parts, rel=1e-12)
    # the ideal delta-v of the flight equals the budget's rocket equation for motors
    # burnt to depletion (integral of F / m with mdot proportional to F)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_agrees_with_tight_solve_ivp_reference(path: Path) -> None:
    # the same model through scipy's DOP853 at rtol 1e-10: 0.05 % in apogee and burnout
    # speed is the requirement; the batched path is much closer than that
    mission = load_mission(path)
    core = flight.build_core(mission, ascent._flown_stages(mission))
    outcome = flight.simulate(core)
    reference = reference_flight(core, method="DOP853", rtol=1e-10, atol=1e-10)
    assert reference.status == outcome.status[0]
    for k in range(core.stages):
        speed = float(ascent._speed(outcome.events[f"burnout:{k}"][1])[0])
        if math.isfinite(reference.burnout_speed[k]):
            assert speed == pytest.approx(reference.burnout_speed[k], rel=5e-4)
    if math.isfinite(reference.apogee_altitude):
        apogee = float(ascent._altitude(core, outcome.events["apogee"][1])[0])
        assert apogee == pytest.approx(reference.apogee_altitude, rel=5e-4)
    final_speed = float(ascent._speed(outcome.final_state)[0])
    reference_speed = math.hypot(*reference.final_state[2:4])
    assert final_speed == pytest.approx(reference_speed, rel=5e-4)


def test_events_are_exact_on_the_dense_output() -> None:
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = fly(mission, margin=False)
    core = flight.build_core(mission)
    model = flight._Model(core, flight._initial(core)[1])
    _, rail_state = result.outcome.events["rail_exit"]
    distance = model.rail_distance(np.zeros(1), rail_state)
    assert distance[0] == pytest.approx(mission.launch.rail_length, rel=1e-9)
    _, apogee_state = result.outcome.events["apogee"]
    _, _, up_x, up_y = model.geometry(apogee_state)
    vertical = apogee_state[flight.VX] * up_x + apogee_state[flight.VY] * up_y
    assert abs(vertical[0]) < 1e-7
    # max dynamic pressure is a maximum: slightly before and after are lower
    times = result.trajectory["time_s"].to_numpy()
    q = result.trajectory["dynamic_pressure_pa"].to_numpy()
    assert result.max_dynamic_pressure >= q.max() * (1 - 1e-12)
    assert result.max_dynamic_pressure <= q.max() * 1.01
    assert times[0] == 0.0


def test_no_liftoff_is_reported_not_hung() -> None:
    doc = engine_rocket(thrust=100.0)  # weight ~590 N, thrust 100 N
    result = fly(parse_mission(doc), margin=False)
    assert result.status == "no liftoff"
    assert result.verdict.meets_targets is None
    assert any("never left the pad" in finding.message for finding in result.findings)
    # the pad held it: no height gained and the ledger still closes
    assert result.trajectory["altitude_m"].abs().max() < 1e-9
    assert abs(result.total.closure) < 1e-6 * result.total.ideal


def test_time_limit_stops_a_flight_that_never_ends() -> None:
    doc = engine_rocket(extra={"flight": {"max_time": "5 s"}})
    result = fly(parse_mission(doc), margin=False)
    assert result.status == "time limit"
    assert result.outcome.final_time[0] == pytest.approx(5.0)
    assert any("did not reach its end" in finding.message for finding in result.findings)


def test_wind_turns_the_rocket_into_it() -> None:
    # Flying along the air-relative velocity, a rocket in a wind blowing downrange turns
    # to face it and drifts upwind (weathercocking).
    base = load_mission(MISSIONS / "hobby_single_stage.toml").document
    calm = fly(parse_mission(base, base_dir=MISSIONS), margin=False)
    windy_doc = {
        **base,
        "launch": {**base["launch"], "wind": [["0 m", "6 m/s"], ["2 km", "10 m/s"]]},
    }
    windy = fly(parse_mission(windy_doc, base_dir=MISSIONS), margin=False)
    drift = windy.trajectory["downrange_m"].iloc[-1]
    assert calm.trajectory["downrange_m"].iloc[-1] > 0  # the rail leans downrange
    assert drift < calm.trajectory["downrange_m"].iloc[-1] - 10.0
    assert windy.apogee < calm.apogee
    assert abs(windy.total.closure) < 1e-5 * windy.total.ideal


def test_back_pressure_loss_is_pressure_times_exit_area() -> None:
    # At the pad the thrust deficit is p0 * Ae (p0 = 101325 Pa, U.S. Standard Atmosphere
    # 1976); with a larger nozzle the back-pressure loss grows and the apogee drops.
    small = engine_rocket(drag=True)
    large = engine_rocket(drag=True)
    large["stage"][0]["engine"]["exit_area"] = "0.005 m^2"
    a = fly(parse_mission(small), margin=False)
    b = fly(parse_mission(large), margin=False)
    assert a.total.pressure_loss == 0.0
    assert b.total.pressure_loss > 0.0
    assert b.apogee < a.apogee
    # upper bound: the loss cannot exceed p0 Ae / m_final times the burn time
    tb = b.stages[0].burnout_time
    assert b.total.pressure_loss < 101325.0 * 0.005 / 40.0 * tb


def test_margin_root_finding_just_meets_the_target() -> None:
    mission = load_mission(MISSIONS / "hobby_single_stage.toml")
    result = fly(mission)
    added = result.verdict.margin_mass
    assert added > 0
    doc = mission.document
    doc["vehicle"]["payload"] = f"{mission.vehicle.payload_mass + added!r} kg"
    heavier = fly(parse_mission(doc, base_dir=MISSIONS), margin=False)
    target = mission.legs[0].fields["altitude"]
    assert heavier.apogee == pytest.approx(target, rel=1e-4)


def test_flight_json_keys() -> None:
    data = fly(load_mission(MISSIONS / "two_stage_competition.toml")).to_dict()
    for key in (
        "apogee_m",
        "apogee_time_s",
        "max_dynamic_pressure_pa",
        "max_mach",
        "rail_exit_speed_m_s",
        "meets_targets",
    ):
        assert key in data
    for key in ("burnout_time_s", "burnout_altitude_m", "burnout_speed_m_s"):
        assert all(key in stage for stage in data["stages"])
    for key in (
        "ideal_m_s",
        "gravity_loss_m_s",
        "drag_loss_m_s",
        "steering_loss_m_s",
        "pressure_loss_m_s",
        "achieved_m_s",
    ):
        assert key in data["ledger"]


@settings(max_examples=25, deadline=None)
@given(
    thrust=st.floats(800.0, 5000.0),
    isp=st.floats(120.0, 320.0),
    propellant=st.floats(2.0, 30.0),
    inert=st.floats(5.0, 40.0),
    earth=st.sampled_from(["flat", "round"]),
)
def test_losses_and_achieved_add_up_to_ideal(
    thrust: float, isp: float, propellant: float, inert: float, earth: str
) -> None:
    doc = engine_rocket(
        thrust=thrust, isp=isp, propellant=propellant, inert=inert, earth=earth, drag=True
    )
    result = fly(parse_mission(doc), margin=False)
    total = result.total
    if result.status == "no liftoff":
        assert total.achieved == pytest.approx(0.0, abs=1e-9)
    losses = total.gravity_loss + total.drag_loss + total.steering_loss + total.pressure_loss
    assert total.ideal - losses - total.achieved == pytest.approx(0.0, abs=1e-5 * total.ideal)
    # ideal delta-v of a full burn is the rocket equation (Tsiolkovsky)
    m0 = propellant + inert + 10.0
    assert total.ideal == pytest.approx(isp * G0 * math.log(m0 / (m0 - propellant)), rel=1e-7)
