"""Guidance to a target orbit: the launch azimuth, the guided insertion of the orbital
example, its robustness, its ledger, the payload-to-orbit curve and dispersions.

The launch azimuth is checked against its closed form, its limits and an orbit built
apart with numpy; the guided flights against orbital elements computed here from the
final state with WGS 84's constants; `capacity` against `size`; and guided flights
against the open-loop pitch programme the example flew before (``conftest.open_loop``).
"""

from __future__ import annotations

import copy
import itertools
import json
import math
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
import pytest
from conftest import open_loop
from typer.testing import CliRunner

from propulsion.ascent import FlightResult, fly
from propulsion.cli import app
from propulsion.errors import MissionError
from propulsion.flight import layout
from propulsion.guidance import InclinationError, inertial_azimuth, launch_azimuth
from propulsion.mission import Mission, parse_mission
from propulsion.sizing import size
from propulsion.studies.capacity import capacity
from propulsion.studies.scatter import ScatterResult, scatter
from propulsion.units import parse_quantity

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
ORBITAL = MISSIONS / "orbital_launcher.toml"
runner = CliRunner()

# WGS 84 (NIMA TR8350.2): GM, equatorial radius, rotation rate; written here, apart from
# propulsion.constants, so the orbital elements below are computed independently.
MU = 3.986004418e14
RADIUS = 6378137.0
OMEGA = 7.292115e-5
DEG = math.pi / 180.0


def orbital_doc() -> dict[str, Any]:
    """missions/orbital_launcher.toml as tomllib reads it (a fresh copy)."""
    return tomllib.loads(ORBITAL.read_text(encoding="utf-8"))


def mission_of(doc: dict[str, Any]) -> Mission:
    return parse_mission(doc, source=str(MISSIONS / "variant.toml"), base_dir=MISSIONS)


def elements(state: npt.NDArray[np.float64]) -> tuple[float, float, float]:
    """Perigee and apogee altitudes above the equatorial radius [m] and the inclination
    [rad] of an inertial state, from vis-viva and the angular momentum (H. D. Curtis,
    Orbital Mechanics for Engineering Students, 3rd ed., Algorithm 4.2 (from memory))."""
    r = state[layout.Y_R : layout.Y_R + 3]
    v = state[layout.Y_V : layout.Y_V + 3]
    energy = float(v @ v) / 2.0 - MU / float(np.linalg.norm(r))
    a = -MU / (2.0 * energy)
    h = np.cross(r, v)
    e = math.sqrt(max(0.0, 1.0 - float(h @ h) / (MU * a)))
    inclination = math.acos(float(h[2]) / float(np.linalg.norm(h)))
    return a * (1.0 - e) - RADIUS, a * (1.0 + e) - RADIUS, inclination


def site_frame(latitude: float, longitude: float) -> tuple[Any, Any, Any]:
    """Position on a sphere of WGS 84's equatorial radius and the local east and north
    unit vectors (Earth-centred, z along the rotation axis)."""
    cl, sl = math.cos(latitude), math.sin(latitude)
    co, so = math.cos(longitude), math.sin(longitude)
    position = RADIUS * np.array([cl * co, cl * so, sl])
    east = np.array([-so, co, 0.0])
    north = np.array([-sl * co, -sl * so, cl])
    return position, east, north


# -- 1. the launch azimuth ---------------------------------------------------------------

CASES = [(40.0, 38.0), (51.6, 28.5), (97.0, 38.0), (63.4, 5.2), (45.0, -30.0), (120.0, 45.0)]


@pytest.mark.parametrize(("inclination", "latitude"), CASES)
def test_inertial_azimuth_is_the_spherical_closed_form(inclination: float, latitude: float) -> None:
    # sin beta = cos i / cos phi (spherical trigonometry of the ground track at the site;
    # Curtis, Orbital Mechanics for Engineering Students, launch azimuth (from memory)),
    # computed here with math; the descending pass flies 180 deg - beta
    beta = math.asin(math.cos(inclination * DEG) / math.cos(latitude * DEG))
    north = inertial_azimuth(inclination * DEG, latitude * DEG)
    south = inertial_azimuth(inclination * DEG, latitude * DEG, southward=True)
    assert math.sin(north) == pytest.approx(math.sin(beta), abs=1e-15)
    assert math.cos(north) == pytest.approx(math.cos(beta), abs=1e-15)
    assert math.sin(south) == pytest.approx(math.sin(math.pi - beta), abs=1e-15)
    assert math.cos(south) == pytest.approx(math.cos(math.pi - beta), abs=1e-15)


def test_azimuth_limits() -> None:
    # i = latitude: the orbit's most northerly point is the site, so due east exactly;
    # i = 90 deg: due north; the descending pass is the mirror image about east
    for latitude in (5.0, 28.5, 38.0, 62.0):
        assert inertial_azimuth(latitude * DEG, latitude * DEG) == math.pi / 2
    assert inertial_azimuth(90.0 * DEG, 38.0 * DEG) == pytest.approx(0.0, abs=1e-15)
    beta = inertial_azimuth(40.0 * DEG, 38.0 * DEG)
    assert inertial_azimuth(40.0 * DEG, 38.0 * DEG, southward=True) == pytest.approx(
        math.pi - beta, abs=1e-15
    )


def test_inertial_azimuth_worked_example() -> None:
    # A site at 28.5 deg to an orbit of 51.6 deg: an inertial launch azimuth of about
    # 44.97 deg (a textbook worked example, from memory; printed to two decimals)
    assert math.degrees(inertial_azimuth(51.6 * DEG, 28.5 * DEG)) == pytest.approx(44.97, abs=0.01)


def test_retrograde_azimuths_lie_in_one_turn() -> None:
    # Azimuths are clockwise from north in [0, 360) deg: the flown azimuth is; the
    # inertial one, shown beside it (fly --json guidance), must be too. A retrograde orbit
    # (i > 90 deg) is reached heading north-west: 360 deg - asin(|cos i| / cos phi).
    for inclination, latitude in ((97.0, 38.0), (141.9, 38.0), (120.0, -45.0)):
        azimuth = launch_azimuth(inclination * DEG, latitude * DEG, 7784.0)
        expected = 2 * math.pi - math.asin(-math.cos(inclination * DEG) / math.cos(latitude * DEG))
        assert 0.0 <= azimuth.inertial < 2 * math.pi
        assert azimuth.inertial == pytest.approx(expected, abs=1e-12)
        assert 0.0 <= azimuth.flown < 2 * math.pi
        difference = (azimuth.flown - azimuth.inertial + math.pi) % (2 * math.pi) - math.pi
        assert azimuth.correction == pytest.approx(difference, abs=1e-12)


@pytest.mark.parametrize(("inclination", "latitude"), CASES)
@pytest.mark.parametrize("southward", [False, True])
def test_rotating_earth_velocity_triangle(
    inclination: float, latitude: float, southward: bool
) -> None:
    # The velocity to add to the ground's is the orbit's inertial velocity minus the
    # ground's omega x r (Vallado, Fundamentals of Astrodynamics, launch azimuth over a
    # rotating Earth (from memory)), built here as 3-D vectors at the site
    speed = 7784.0
    az = launch_azimuth(inclination * DEG, latitude * DEG, speed, southward, OMEGA, RADIUS)
    position, east, north = site_frame(latitude * DEG, 0.7)
    beta = az.inertial
    inertial = speed * (math.sin(beta) * east + math.cos(beta) * north)
    relative = inertial - np.cross([0.0, 0.0, OMEGA], position)
    flown = math.atan2(float(relative @ east), float(relative @ north)) % (2 * math.pi)
    assert az.flown == pytest.approx(flown, abs=1e-12)
    difference = (az.flown - az.inertial + math.pi) % (2 * math.pi) - math.pi
    assert az.correction == pytest.approx(difference, abs=1e-12)
    # taking the ground's eastward speed away turns the azimuth away from east (further
    # north or south of it, or nearer west for a retrograde orbit): a smaller east share
    assert math.sin(az.flown) < math.sin(az.inertial)
    # without rotation the flown azimuth is the inertial one
    still = launch_azimuth(inclination * DEG, latitude * DEG, speed, southward, 0.0, RADIUS)
    assert still.flown == pytest.approx(still.inertial % (2 * math.pi), abs=1e-15)


@pytest.mark.parametrize(("inclination", "latitude"), CASES)
@pytest.mark.parametrize("longitude", [0.0, 2.0, -1.1])
def test_a_velocity_along_the_inertial_azimuth_gives_the_inclination(
    inclination: float, latitude: float, longitude: float
) -> None:
    # Independent check: the orbit speed along the inertial azimuth, at the site on a
    # sphere, has angular momentum h = r x v with cos i = h_z / |h| (Curtis, Algorithm 4.2)
    speed = math.sqrt(MU / (RADIUS + 200e3))
    position, east, north = site_frame(latitude * DEG, longitude)
    for southward in (False, True):
        beta = inertial_azimuth(inclination * DEG, latitude * DEG, southward)
        velocity = speed * (math.sin(beta) * east + math.cos(beta) * north)
        h = np.cross(position, velocity)
        reached = math.acos(float(h[2]) / float(np.linalg.norm(h)))
        assert reached == pytest.approx(inclination * DEG, abs=1e-12)


def test_an_unreachable_inclination_raises() -> None:
    # a direct launch from latitude phi reaches phi..180 deg - phi (cos i <= cos phi)
    with pytest.raises(InclinationError, match=r"35\.00 deg cannot be reached"):
        inertial_azimuth(35.0 * DEG, 38.0 * DEG)
    with pytest.raises(InclinationError, match=r"direct launch reaches 38\.00 to 142\.00 deg"):
        launch_azimuth(142.5 * DEG, 38.0 * DEG, 7784.0)


def test_an_unreachable_inclination_in_a_file_is_bad_input(tmp_path: Path) -> None:
    # Project rule: bad input names the file and the field, exit code 2. Leg paths count
    # from 1 (fields.py: leg[1].altitude), so the first leg's inclination is leg[1].
    text = ORBITAL.read_text(encoding="utf-8")
    good = tmp_path / "good.toml"
    good.write_text(text, encoding="utf-8")
    assert runner.invoke(app, ["check", str(good)]).exit_code == 0
    bad = tmp_path / "low.toml"
    bad.write_text(text.replace('inclination = "40 deg"', 'inclination = "35 deg"'), "utf-8")
    result = runner.invoke(app, ["check", str(bad)])
    assert result.exit_code == 2
    assert "low.toml" in result.stderr and "leg[1].inclination" in result.stderr
    assert "38.00 to 142.00 deg" in result.stderr
    assert "Traceback" not in result.output


def test_an_inclination_needs_the_latitude() -> None:
    doc = orbital_doc()
    del doc["launch"]["latitude"]
    with pytest.raises(MissionError, match="latitude") as info:
        mission_of(doc)
    assert info.value.field == "leg[1].inclination"


def test_orbit_guidance_needs_a_first_leg_to_an_orbit() -> None:
    doc = orbital_doc()
    doc["leg"] = [
        {
            "name": "up",
            "stages": ["core", "upper"],
            "target": "apogee",
            "altitude": "200 km",
            "loss_allowance": "1.5 km/s",
        }
    ]
    with pytest.raises(MissionError, match="circular_orbit") as info:
        mission_of(doc)
    assert info.value.field == "flight.guidance"


# -- 2. guided insertion of the shipped example -------------------------------------------


@pytest.fixture(scope="module")
def guided() -> FlightResult:
    """The shipped orbital example flown as it is (guided, kick chosen), without the
    margins' root finding."""
    return fly(mission_of(orbital_doc()), margin=False)


def test_guided_insertion_of_the_example(guided: FlightResult) -> None:
    # the file's target: 200 km circular at 40 deg; perigee and apogee from vis-viva on
    # the final inertial state, with WGS 84's constants written in this file
    perigee, apogee, inclination = elements(guided.outcome.state("final")[0])
    assert guided.status == "orbit"
    assert abs(perigee - 200e3) < 1e3 and abs(apogee - 200e3) < 1e3
    assert math.degrees(inclination) == pytest.approx(40.0, abs=0.01)
    summary = guided.guidance
    assert summary is not None and summary.converged and summary.kick_chosen
    # the summary reports the same orbit (its own elements, same state)
    assert summary.perigee == pytest.approx(perigee, abs=1.0)
    assert summary.apogee == pytest.approx(apogee, abs=1.0)
    assert summary.inclination == pytest.approx(inclination, abs=1e-9)
    assert summary.inertial_azimuth == pytest.approx(inertial_azimuth(40 * DEG, 38 * DEG))


def test_propellant_left_is_usable_minus_burnt(guided: FlightResult) -> None:
    # usable = loaded propellant less the residual fraction (file values); the upper
    # stage lights carrying itself and the payload, and burns down to the final mass
    doc = orbital_doc()
    upper = doc["stage"][1]
    loaded = parse_quantity(upper["propellant_mass"], "mass")
    usable = loaded * (1.0 - parse_quantity(upper["residual_fraction"], "dimensionless"))
    stack = (
        parse_quantity(doc["vehicle"]["payload"], "mass")
        + parse_quantity(upper["inert_mass"], "mass")
        + loaded
    )
    outcome = guided.outcome
    lit = float(outcome.state("ignition:1")[0, layout.Y_M])
    assert lit == pytest.approx(stack, rel=1e-12)
    burnt = lit - float(outcome.state("final")[0, layout.Y_M])
    assert guided.guidance is not None
    assert guided.guidance.propellant_left > 0.0
    assert guided.guidance.propellant_left == pytest.approx(usable - burnt, rel=1e-9)


def test_a_due_east_launch_reaches_the_latitude_inclination() -> None:
    # i = latitude is reachable (the loader accepts it: cos i <= cos phi), by a launch
    # due east; the guided flight must put the vehicle into orbit near that plane
    # (found: with the kick left open, no kick angle met the plane to 1e-4 deg, the
    # closest plane lies ~0.002 deg above it, and the fall-back kick of 0 deg flew
    # straight up and came down)
    doc = orbital_doc()
    doc["leg"][0]["inclination"] = "38 deg"
    result = fly(mission_of(doc), margin=False)
    assert result.status == "orbit"
    perigee, apogee, inclination = elements(result.outcome.state("final")[0])
    assert abs(perigee - 200e3) < 1e3 and abs(apogee - 200e3) < 1e3
    assert math.degrees(inclination) == pytest.approx(38.0, abs=0.01)
    assert result.guidance is not None and result.guidance.kick_angle > 0.0


# -- 3. robustness of the verdict -----------------------------------------------------------


@pytest.fixture(scope="module")
def judged() -> FlightResult:
    """The shipped example flown with its verdict's payload margin."""
    return fly(mission_of(orbital_doc()))


def test_the_example_passes(judged: FlightResult) -> None:
    # the file judges the payload margin against 5 % of the payload
    assert judged.verdict.meets_targets is True
    assert judged.verdict.payload_margin_fraction >= 0.05


@pytest.mark.parametrize("change", [-1.0, 1.0])
def test_the_verdict_holds_with_the_kick_one_degree_off(
    judged: FlightResult, change: float
) -> None:
    # guidance flies the orbit whatever the kick: +-1 deg off the chosen one still PASS
    assert judged.guidance is not None
    doc = orbital_doc()
    kick = math.degrees(judged.guidance.kick_angle) + change
    doc["flight"]["pitch_kick_angle"] = f"{kick!r} deg"
    result = fly(mission_of(doc))
    assert result.guidance is not None and not result.guidance.kick_chosen
    assert result.verdict.meets_targets is True, result.verdict


@pytest.mark.parametrize("factor", [0.99, 1.01])
def test_the_verdict_holds_with_one_percent_thrust_off(factor: float) -> None:
    # 1 % thrust on each stage (file: 32 kN per core engine at sea level, 25 kN upper)
    doc = orbital_doc()
    core, upper = doc["stage"][0]["engine"], doc["stage"][1]["engine"]
    core["thrust_sea_level"] = f"{parse_quantity(core['thrust_sea_level'], 'force') * factor!r} N"
    upper["thrust_vacuum"] = f"{parse_quantity(upper['thrust_vacuum'], 'force') * factor!r} N"
    result = fly(mission_of(doc))
    assert result.verdict.meets_targets is True, result.verdict


@pytest.mark.parametrize(("kick", "passes"), [(14.5, False), (15.0, True), (15.5, False)])
def test_the_open_loop_verdict_turns_on_half_a_degree(kick: float, passes: bool) -> None:
    # contrast, the behaviour guidance removed: the open-loop pitch programme (the example
    # as it flew before) passed at 15 deg and fell short at 14.5 and 15.5 deg (measured
    # when the issue was raised: the orbit's shape left the 40 km band)
    doc = open_loop(orbital_doc())
    doc["flight"]["pitch_kick_angle"] = f"{kick} deg"
    result = fly(mission_of(doc))
    assert result.verdict.meets_targets is passes
    if not passes:
        assert result.verdict.miss == "shape"


# -- 4. the ledger to orbit --------------------------------------------------------------


def test_losses_and_delta_v_to_orbit_are_plausible(guided: FlightResult) -> None:
    total = guided.total
    losses = total.gravity_loss + total.drag_loss + total.steering_loss + total.pressure_loss
    # common practice, no source: a small launcher to LEO loses 1.0-2.0 km/s to gravity,
    # drag and steering, and needs 9.0-10.5 km/s of ideal delta-v; drag is a small part
    # of the losses (tens to a few hundred m/s) and gravity the largest
    assert 1.0e3 <= losses <= 2.0e3
    assert 9.0e3 <= total.ideal <= 10.5e3
    assert 30.0 <= total.drag_loss <= 400.0
    assert total.gravity_loss > 0.5 * losses
    # the ledger closes on the circular speed at 200 km, sqrt(mu / r) (vis-viva)
    assert total.achieved == pytest.approx(math.sqrt(MU / (RADIUS + 200e3)), abs=2.0)
    assert abs(total.closure) < 1.0
    # the rotation credit: the ground's eastward speed omega R cos(phi) along the inertial
    # azimuth (the velocity triangle); 5 %: the vehicle is ~1000 km downrange by then
    beta = inertial_azimuth(40 * DEG, 38 * DEG)
    credit = OMEGA * RADIUS * math.cos(38 * DEG) * math.sin(beta)
    assert total.rotation_credit == pytest.approx(credit, rel=0.05)


# -- 5. payload to orbit ----------------------------------------------------------------


@pytest.fixture(scope="module")
def curve(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict[str, Any], Path]:
    """`propulsion capacity` of the example at 200, 350, 500 and 650 km, JSON and SVG."""
    svg = tmp_path_factory.mktemp("capacity") / "curve.svg"
    result = runner.invoke(
        app,
        ["capacity", str(ORBITAL), "--altitudes", "200 km..650 km:4", "--json", "--plot", str(svg)],
    )
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout), svg


def test_capacity_falls_with_altitude(curve: tuple[dict[str, Any], Path]) -> None:
    # a higher orbit costs more delta-v (vis-viva), so less payload gets there
    data, _ = curve
    points = data["points"]
    assert [p["altitude_m"] for p in points] == pytest.approx([200e3, 350e3, 500e3, 650e3])
    payloads = [p["payload_kg"] for p in points]
    assert all(p["bounded"] for p in points)
    assert all(a > b > 0.0 for a, b in itertools.pairwise(payloads))


def test_capacity_agrees_with_size(curve: tuple[dict[str, Any], Path]) -> None:
    # the same question asked of `size`: the payload that just reaches 200 km with the
    # mission's reserve, on a one-leg copy without a flight margin or tolerance (measured
    # by the lead: capacity 455.72 kg, size 455.66 kg); 0.5 %: the two roots' tolerances
    # and the kick each tunes
    data, _ = curve
    doc = orbital_doc()
    doc["leg"] = doc["leg"][:1]
    doc["leg"][0].pop("tolerance")
    doc["margins"].pop("flight")
    result = size(mission_of(doc), "vehicle.payload")
    assert result.flight.found
    assert data["points"][0]["payload_kg"] == pytest.approx(result.flight.value, rel=0.005)


def test_capacity_plot_names_its_curve(curve: tuple[dict[str, Any], Path]) -> None:
    # matplotlib writes an artist's gid as the SVG element's id (report/plots.py gids)
    _, svg = curve
    text = svg.read_text(encoding="utf-8")
    assert text.lstrip().startswith("<?xml") and "<svg" in text
    assert 'id="capacity:file"' in text


def test_capacity_against_inclination() -> None:
    # From latitude 38 deg, 50 deg of inclination takes less of Earth's eastward speed
    # than 40 deg (omega R cos(phi) sin(beta): sin beta 0.97 against 0.82), so less
    # payload; 40 deg is the file's own plane and gives the file-plane value again
    mission = mission_of(orbital_doc())
    planes = capacity(mission, [200e3], [40 * DEG, 50 * DEG]).points
    own = capacity(mission, [200e3]).points[0]
    assert planes[0].payload == pytest.approx(own.payload, rel=1e-6)
    assert 0.0 < planes[1].payload < planes[0].payload - 5.0


@pytest.mark.parametrize(
    ("arguments", "shown"),
    [
        (["--altitudes", "200 km..800 km:x"], "--altitudes"),
        (["--altitudes", "200 km..800 km:1"], "--altitudes"),
        (["--altitudes", "200 km, 300"], "--altitudes"),  # a bare number
        (["--altitudes", "200 kg"], "--altitudes"),  # the wrong dimension
        (["--altitudes", "200 km.."], "--altitudes"),  # no end
        (["--altitudes", "200 km", "--inclinations", "40"], "--inclinations"),
        (["--altitudes", "50 km"], "out of range"),
        (["--altitudes", "200 km", "--inclinations", "35 deg"], "leg[1].inclination"),
    ],
)
def test_capacity_bad_requests_exit_2(arguments: list[str], shown: str) -> None:
    # project rule: bad input is exit code 2 with a message naming what is wrong, never an
    # internal error (exit 3)
    result = runner.invoke(app, ["capacity", str(ORBITAL), *arguments])
    assert result.exit_code == 2, result.output
    assert shown in result.stderr
    assert "internal error" not in result.output


def test_capacity_refuses_an_unguided_mission() -> None:
    result = runner.invoke(app, ["capacity", str(MISSIONS / "two_stage_competition.toml")])
    assert result.exit_code == 2
    assert "guided to an orbit" in result.stderr


# -- 6. dispersions under guidance ------------------------------------------------------

# 1 % thrust, 1 s of Isp, 1 % inert mass on each stage (the file's values: 32 kN per core
# engine, 25 kN upper, 1600 kg and 300 kg)
DISPERSIONS = [
    {"field": "stage.core.engine.thrust_sea_level", "distribution": "normal", "sigma": "0.32 kN"},
    {"field": "stage.upper.engine.thrust_vacuum", "distribution": "normal", "sigma": "0.25 kN"},
    {"field": "stage.core.engine.isp_vacuum", "distribution": "normal", "sigma": "1 s"},
    {"field": "stage.upper.engine.isp_vacuum", "distribution": "normal", "sigma": "1 s"},
    {"field": "stage.core.inert_mass", "distribution": "normal", "sigma": "16 kg"},
    {"field": "stage.upper.inert_mass", "distribution": "normal", "sigma": "3 kg"},
]
SAMPLES = 300


def dispersed(doc: dict[str, Any]) -> ScatterResult:
    doc["dispersion"] = copy.deepcopy(DISPERSIONS)
    return scatter(mission_of(doc), SAMPLES, seed=7)


@pytest.fixture(scope="module")
def study() -> ScatterResult:
    return dispersed(orbital_doc())


def test_guided_samples_meet_the_target(study: ScatterResult) -> None:
    # the lead measured 99.5 % of 2,000 samples; 0.97 leaves room for 300
    assert study.valid == SAMPLES
    assert study.probability >= 0.97


def test_guided_samples_reach_the_orbit_they_aim_at(study: ScatterResult) -> None:
    perigee = study.values["perigee_error_m"]
    apogee = study.values["apogee_error_m"]
    plane = study.values["inclination_error_deg"]
    reached = np.isfinite(perigee)
    assert reached.sum() >= study.meets
    assert np.all(np.abs(perigee[reached]) < 1e3) and np.all(np.abs(apogee[reached]) < 1e3)
    assert np.all(np.abs(plane[reached]) < 0.01)
    left = study.percentiles["propellant_left_kg"]
    assert all(math.isfinite(value) for value in left.values())
    assert left[95.0] > left[5.0] > 0.0


def test_open_loop_samples_meet_the_target_far_less_often(study: ScatterResult) -> None:
    # the same dispersions on the open-loop pitch programme: the orbit's shape follows
    # every change of the vehicle (the issue measured 51.5 %, with its own dispersions)
    contrast = dispersed(open_loop(orbital_doc()))
    assert contrast.valid == SAMPLES
    assert contrast.probability < 0.75
    assert study.probability - contrast.probability > 0.2
    # open loop, nothing reports guided insertion errors
    assert np.all(np.isnan(contrast.values["perigee_error_m"]))


# --- an elliptical target -----------------------------------------------------------------


def test_an_elliptical_target_is_met_at_both_apsides() -> None:
    # apogee_altitude turns the first leg's circle into an ellipse entered at its perigee:
    # the budget asks the vis-viva speed there, sqrt(mu (2/r_p - 1/a)) (Curtis, 3rd ed.,
    # eq. 2.71), and the guided flight lands on both apsides
    doc = orbital_doc()
    doc["leg"][0]["apogee_altitude"] = "400 km"
    mission = mission_of(doc)
    rp, ra = RADIUS + 200e3, RADIUS + 400e3
    speed = math.sqrt(MU * (2 / rp - 2 / (rp + ra)))
    requirement = mission.legs[0].requirement
    assert dict(requirement.terms)["perigee speed of the orbit"] == pytest.approx(speed, rel=1e-12)
    result = fly(mission, margin=False)
    perigee, apogee, inclination = elements(result.outcome.state("final")[0])
    assert abs(perigee - 200e3) < 1e3 and abs(apogee - 400e3) < 1e3
    assert abs(math.degrees(inclination) - 40.0) < 0.01
    assert result.verdict.meets_targets
    assert result.verdict.required_apogee == pytest.approx(400e3)
    # judged against the circle at 200 km instead, the same ellipse misses in shape
    from propulsion import margins

    core = result.outcome  # the ellipse's flight
    circle = mission_of(orbital_doc())
    from propulsion import flight
    from propulsion.ascent import flown_stages

    circle_core = flight.build_core(circle, flown_stages(circle))
    judged = margins.Target(circle, circle_core).judge(circle_core, core)
    assert not judged.meets[0] and judged.miss[0] == "shape"


def test_an_apogee_below_the_perigee_is_refused() -> None:
    doc = orbital_doc()
    doc["leg"][0]["apogee_altitude"] = "150 km"
    with pytest.raises(MissionError, match="apogee_altitude"):
        mission_of(doc)


def test_capacity_stays_monotonic_where_the_kick_runs_out() -> None:
    # Found when the docs were written: at 400 km the kick re-chosen at the payload found
    # had nothing to spare and fell back to 0 deg ("out of reach"), and at 800 km an
    # unconverged steering solve counted as an orbit (155.6 kg, more than at 700 km).
    result = capacity(mission_of(orbital_doc()), [400e3, 700e3, 800e3])
    at400, at700, at800 = (point.payload for point in result.points)
    assert result.points[0].bounded and 250.0 < at400 < 400.0
    assert not at800 >= at700  # out of reach (NaN) or less
