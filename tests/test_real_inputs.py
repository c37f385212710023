"""Real inputs: units in every table header, the motor's ambient-pressure correction, and
where things come down (dropped stages, footprints), each against the outside world."""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy import stats
from scipy.integrate import solve_ivp
from typer.testing import CliRunner

from propulsion import flight
from propulsion.ascent import flown_stages, fly
from propulsion.cli import app
from propulsion.impacts import dropped_stage_core, ellipse_probability, footprint
from propulsion.mission import load_mission, parse_mission
from propulsion.studies.scatter import scatter

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
G0 = 9.80665  # standard gravity, exact (3rd CGPM, 1901)
P0 = 101325.0  # sea-level pressure of the U.S. Standard Atmosphere 1976 [Pa]
runner = CliRunner()


def curve_mission(folder: Path, header: str, rows: str, extra: str = "") -> Path:
    """A one-stage rocket flying a motor file of our own."""
    (folder / "curve.csv").write_text(
        "# propulsion thrust curve\n# name = own\n# propellant_mass = 0.1 kg\n"
        f"{extra}{header}\n{rows}",
        encoding="utf-8",
    )
    path = folder / "m.toml"
    path.write_text(
        '[vehicle]\npayload = "0.1 kg"\n[[stage]]\nname = "s"\ninert_mass = "1 kg"\n'
        '[stage.motor]\nfile = "curve.csv"\n',
        encoding="utf-8",
    )
    return path


# --- units in a table's header ----------------------------------------------------------------


@pytest.mark.parametrize(
    ("header", "rows"),
    [
        ("time (ms),thrust (N)", "0,0\n100,100\n1000,100\n1100,0\n"),
        ("time [ms],thrust [N]", "0,0\n100,100\n1000,100\n1100,0\n"),
        ("time (s),thrust (kgf)", f"0,0\n0.1,{100 / G0!r}\n1.0,{100 / G0!r}\n1.1,0\n"),
        (
            "time [s],thrust [lbf]",
            f"0,0\n0.1,{100 / 4.4482216152605!r}\n1.0,{100 / 4.4482216152605!r}\n1.1,0\n",
        ),
    ],
)
def test_header_units_in_either_bracket_are_read(tmp_path: Path, header: str, rows: str) -> None:
    # The finding: "time (ms),thrust (N)" was taken as seconds, giving 1.4 million N s and
    # class U. The trapezoid of 0.1 s rise, 0.9 s at 100 N and 0.1 s fall is 100 N s
    # (closed form); 1 kgf = 9.80665 N and 1 lbf = 4.4482216152605 N exactly (NIST SP 811,
    # 2008, appendix B).
    mission = load_mission(curve_mission(tmp_path, header, rows))
    motor = mission.vehicle.stages[0].propulsion
    assert motor.total_impulse == pytest.approx(100.0, rel=1e-12)  # type: ignore[union-attr]
    assert motor.burn_time == pytest.approx(1.1, rel=1e-12)  # type: ignore[union-attr]


def test_an_unknown_header_unit_names_the_file_line_and_column(tmp_path: Path) -> None:
    path = curve_mission(tmp_path, "time (ms),thrust (furlongs)", "0,0\n100,100\n200,0\n")
    result = runner.invoke(app, ["check", str(path)])
    assert result.exit_code == 2, result.output
    message = " ".join(result.stderr.split())
    assert "curve.csv" in message and "line 4" in message and "thrust" in message


# --- the motor's ambient-pressure correction ------------------------------------------------------


def test_motor_thrust_follows_the_thrust_equation(tmp_path: Path) -> None:
    # A motor file that gives its nozzle exit is corrected from its test pressure to the
    # ambient one: F = F_test + (p_test - p_a) A_e (G. P. Sutton and O. Biblarz, Rocket
    # Propulsion Elements, 9th ed., 2017, chapter 3). Flown from a 3 km site, every recorded
    # step of the burn must satisfy it, with p_a the flight's own ambient pressure.
    exit_diameter = 0.04
    area = math.pi * exit_diameter**2 / 4
    rows = "0,0\n0.1,300\n1.5,280\n1.6,0\n"
    extra = f"# nozzle_exit_diameter = {exit_diameter * 1000:g} mm\n# test_pressure = 95 kPa\n"
    path = curve_mission(tmp_path, "time [s],thrust [N]", rows, extra)
    text = path.read_text(encoding="utf-8") + '[launch]\nsite_altitude = "3 km"\n'
    path.write_text(text, encoding="utf-8")
    result = fly(load_mission(path), margin=False)
    trajectory = result.outcome.trajectory
    assert trajectory is not None
    time = trajectory.time
    burning = (time > 0.0) & (time < 1.6)
    measured = np.interp(time[burning], [0, 0.1, 1.5, 1.6], [0, 300, 280, 0])
    expected = measured + (95_000.0 - trajectory["pressure"][burning]) * area
    np.testing.assert_allclose(trajectory["thrust"][burning], expected, rtol=1e-12, atol=1e-9)
    # at 3 km the ambient pressure is about 70 kPa: a few percent more thrust than tested
    assert np.all(trajectory["thrust"][burning] > measured)
    # the ledger books the difference from vacuum thrust as back-pressure loss
    assert result.total.pressure_loss > 0.0


def test_without_a_nozzle_exit_the_curve_is_flown_as_measured(tmp_path: Path) -> None:
    path = curve_mission(tmp_path, "time [s],thrust [N]", "0,0\n0.1,300\n1.5,280\n1.6,0\n")
    result = fly(load_mission(path), margin=False)
    assert result.total.pressure_loss == 0.0


# --- where things come down --------------------------------------------------------------------


def two_stage_engines(drag: bool, stop_at: str = "apogee") -> dict[str, Any]:
    """A two-stage engine rocket over a flat Earth, tilted 60 deg, drag-free unless asked."""
    vehicle: dict[str, Any] = {"payload": "2 kg"}
    if drag:
        vehicle.update(diameter="150 mm", drag_curve="slender_finned")
    return {
        "vehicle": vehicle,
        "launch": {"elevation": "60 deg", "azimuth": "90 deg"},
        "stage": [
            {
                "name": "booster",
                "inert_mass": "20 kg",
                "propellant_mass": "30 kg",
                "separation_delay": "0.5 s",
                "engine": {"thrust_vacuum": "4 kN", "isp_vacuum": "200 s", "exit_area": "0 m^2"},
            },
            {
                "name": "upper",
                "inert_mass": "8 kg",
                "propellant_mass": "10 kg",
                "ignition_delay": "1 s",
                "engine": {"thrust_vacuum": "1 kN", "isp_vacuum": "220 s", "exit_area": "0 m^2"},
            },
        ],
        "flight": {"earth": "flat", "stop_at": stop_at},
    }


def test_a_drag_free_dropped_stage_lands_where_the_closed_form_says() -> None:
    # A body thrown at (x, z) with velocity (vx, vz) over a flat Earth in uniform gravity
    # lands after t = (vz + sqrt(vz^2 + 2 g z)) / g, at x + vx t (projectile motion, e.g.
    # D. Halliday, R. Resnick and J. Walker, Fundamentals of Physics, chapter 4).
    mission = parse_mission(two_stage_engines(drag=False))
    result = fly(mission, margin=False)
    booster = next(impact for impact in result.impacts if impact.body == "booster")
    core = flight.build_core(mission, flown_stages(mission))
    outcome = flight.simulate(core)
    state = outcome.state("separation:0")[0]
    x, y, z, vx, vy, vz = state[:6]
    fall = (vz + math.sqrt(vz * vz + 2 * G0 * z)) / G0
    assert booster.east == pytest.approx(x + vx * fall, rel=1e-9)
    assert booster.north == pytest.approx(y + vy * fall, abs=1e-6)
    assert booster.time == pytest.approx(outcome.time("separation:0")[0] + fall, rel=1e-9)
    assert booster.speed == pytest.approx(math.hypot(vx, vz - G0 * fall), rel=1e-9)


def test_a_dropped_stage_with_drag_lands_where_an_independent_integration_says() -> None:
    # The same fall with drag, written apart here with scipy's solve_ivp on a few lines of
    # numpy: U.S. Standard Atmosphere 1976 density and sound speed (the checked atmosphere
    # module), the booster's drag curve, its area and its spent mass.
    from propulsion.atmosphere import ussa1976
    from propulsion.catalog import load_drag_curve

    mission = parse_mission(two_stage_engines(drag=True))
    core = flight.build_core(mission, flown_stages(mission))
    outcome = flight.simulate(core, rtol=1e-10)
    falling, _ = dropped_stage_core(core, outcome, 0)
    landed = flight.simulate(falling, rtol=1e-10)
    curve = load_drag_curve("slender_finned")
    area = math.pi * 0.15**2 / 4
    mass = float(falling.mass_initial[0])

    def rates(_: float, s: np.ndarray) -> list[float]:
        air = ussa1976(max(float(s[1]), 0.0))
        speed = math.hypot(s[2], s[3])
        cd = float(np.interp(speed / air.speed_of_sound, curve.mach, curve.drag_coefficient))
        k = 0.5 * air.density * speed * cd * area / mass
        return [s[2], s[3], -k * s[2], -k * s[3] - G0]

    def ground(_: float, s: np.ndarray) -> float:
        return float(s[1])

    ground.terminal = True  # type: ignore[attr-defined]
    ground.direction = -1  # type: ignore[attr-defined]
    state = outcome.state("separation:0")[0]
    start = [state[0], state[2], state[3], state[5]]
    done = solve_ivp(
        rates, (0.0, 1000.0), start, method="DOP853", rtol=1e-11, atol=1e-9, events=ground
    )
    assert landed.value("ground", "east")[0] == pytest.approx(done.y_events[0][0][0], rel=1e-6)
    fall = done.t_events[0][0]
    assert landed.time("ground")[0] == pytest.approx(
        outcome.time("separation:0")[0] + fall, rel=1e-7
    )


def test_a_mission_flown_to_the_ground_lands_every_body() -> None:
    result = fly(parse_mission(two_stage_engines(drag=True, stop_at="ground")), margin=False)
    assert [impact.body for impact in result.impacts] == ["booster", "upper"]
    assert result.landing == (result.impacts[-1].east, result.impacts[-1].north)
    assert all(impact.east > 0 for impact in result.impacts)  # launched east
    data = result.to_dict()["impacts"]
    assert {item["body"] for item in data} == {"booster", "upper"}
    shown = runner.invoke(app, ["fly", str(MISSIONS / "two_stage_competition.toml")])
    text = " ".join(shown.output.split())
    assert "Where things come down" in text and "not the range safety analysis" in text


def test_footprint_ellipses_are_the_covariance_level_sets() -> None:
    # The kσ ellipse's semi-axes are k sqrt(eigenvalues) of the sample covariance, its
    # major axis the eigenvector of the larger one (T. W. Anderson, An Introduction to
    # Multivariate Statistical Analysis, 3rd ed., section 3.2); the share of a 2-D normal
    # inside it is the chi-square CDF with 2 degrees of freedom at k^2.
    rng = np.random.default_rng(8)
    covariance = np.array([[400.0, 150.0], [150.0, 100.0]])
    points = rng.multivariate_normal([50.0, -20.0], covariance, size=20_000)
    result = footprint("body", points[:, 0], points[:, 1])
    sample = np.cov(points.T)
    values, vectors = np.linalg.eigh(sample)
    one, three = result.ellipses
    assert one.major == pytest.approx(math.sqrt(values[1]), rel=1e-12)
    assert three.minor == pytest.approx(3 * math.sqrt(values[0]), rel=1e-12)
    east, north = vectors[:, 1]
    bearing = math.atan2(east, north) % math.pi
    assert one.bearing == pytest.approx(bearing, abs=1e-12)
    for k in (1.0, 3.0):
        assert ellipse_probability(k) == pytest.approx(stats.chi2.cdf(k * k, 2), rel=1e-12)
    # and the points obey it: the share inside the 3σ ellipse is 98.9 % within sampling
    centred = points - np.array(result.mean)
    distance = np.einsum("ij,jk,ik->i", centred, np.linalg.inv(sample), centred)
    assert np.mean(distance <= 9.0) == pytest.approx(ellipse_probability(3.0), abs=0.003)
    assert result.farthest == pytest.approx(np.max(np.hypot(points[:, 0], points[:, 1])))


def test_scatter_gives_the_footprint_of_every_body(tmp_path: Path) -> None:
    document = copy.deepcopy(load_mission(MISSIONS / "two_stage_competition.toml").document)
    document["launch"]["azimuth"] = "45 deg"
    mission = parse_mission(document, source="fp.toml", base_dir=MISSIONS)
    result = scatter(mission, 300, seed=4, footprint=True)
    assert [item.body for item in result.footprints] == ["booster", "sustainer"]
    assert all(item.count == result.valid for item in result.footprints)
    sustainer = result.footprints[-1]
    assert sustainer.farthest > 0 and sustainer.ellipses[1].major > sustainer.ellipses[0].major
    # the same flights as a plain study: the footprint adds flights, not differences
    plain = scatter(mission, 300, seed=4)
    np.testing.assert_array_equal(plain.values["apogee_m"], result.values["apogee_m"])
    done = runner.invoke(
        app,
        [
            "scatter",
            str(MISSIONS / "two_stage_competition.toml"),
            "-n",
            "200",
            "--footprint",
            "--json",
        ],
    )
    assert done.exit_code == 0, done.output
    data = json.loads(done.stdout)
    assert [item["body"] for item in data["footprints"]] == ["booster", "sustainer"]
    assert data["footprints"][0]["ellipses"][1]["sigmas"] == 3.0
    picture = tmp_path / "fp.svg"
    drawn = runner.invoke(
        app,
        [
            "scatter",
            str(MISSIONS / "two_stage_competition.toml"),
            "-n",
            "200",
            "--footprint",
            "--plot",
            str(picture),
        ],
    )
    assert drawn.exit_code == 0, drawn.output
    svg = picture.read_text(encoding="utf-8")
    assert 'id="impacts:sustainer"' in svg and 'id="pad"' in svg


def test_a_flight_to_the_ground_books_its_ledger_to_apogee() -> None:
    # The ledger is the ascent's: flown on to the ground, the fall added speed with
    # gravity's help and the whole-flight sums showed a gravity "loss" of -41 m/s (the
    # launch-day example). Ended at apogee, every loss is a loss and the books still close.
    from propulsion.ascent import fly
    from propulsion.mission import load_mission

    result = fly(load_mission(MISSIONS / "launch_day_team_motor.toml"), margin=False)
    assert result.status == "ground"
    total = result.total
    assert total.gravity_loss > 0 and total.drag_loss > 0
    apogee_speed = float(result.outcome.value("apogee", "ledger_speed")[0])
    start_speed = float(result.outcome.value("ignition:0", "ledger_speed")[0])
    assert total.achieved == pytest.approx(apogee_speed - start_speed, abs=1e-9)
    assert abs(total.closure) < 1e-3
