"""Pictures: files that decode at the right size and are not blank, series equal to the
results they draw (in SI and US units), waterfall bars that add up, histograms that count
every sample, the sweep's target contour, and the --plot option of the commands."""

from __future__ import annotations

import dataclasses
import io
import math
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from typer.testing import CliRunner

from propulsion.ascent import FlightResult, fly
from propulsion.cli import app
from propulsion.errors import OutputExistsError
from propulsion.ledger import budget
from propulsion.mission import Mission, load_mission, parse_mission
from propulsion.report import plots
from propulsion.report.tables import sparkline
from propulsion.stage_split import LossAwareSplit, SplitResult, split
from propulsion.studies.scatter import ScatterResult, scatter
from propulsion.studies.sweep import SweepResult, parse_axis, sweep
from propulsion.units import DisplayUnits, display_units

matplotlib = pytest.importorskip("matplotlib")
from matplotlib.collections import PathCollection  # noqa: E402
from matplotlib.contour import ContourSet  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Rectangle  # noqa: E402
from matplotlib.path import Path as Path2D  # noqa: E402

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
TWO_STAGE = MISSIONS / "two_stage_competition.toml"
ORBITAL = MISSIONS / "orbital_launcher.toml"
HOBBY = MISSIONS / "hobby_single_stage.toml"
SI = display_units("si")
US = display_units("us")
runner = CliRunner()

# 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959).
FOOT = 0.3048
# 1 psi = 1 lbf/in² = 0.45359237 kg x 9.80665 m/s² / (0.0254 m)², exact from the definitions
# of the pound (1959 agreement), standard gravity (3rd CGPM, 1901) and the inch (1959);
# NIST SP 811 (2008), appendix B.8, lists 6.894 757 E+03 Pa.
PSI = 0.45359237 * 9.80665 / 0.0254**2
# Exact conversions go through one multiplication by a rounded factor: allow two roundings.
EXACT = 1e-15


# --- fixtures (module scope: each study runs once) ----------------------------------------


@pytest.fixture(scope="module")
def two_stage() -> Mission:
    return load_mission(TWO_STAGE)


@pytest.fixture(scope="module")
def orbital() -> Mission:
    return load_mission(ORBITAL)


@pytest.fixture(scope="module")
def flight(two_stage: Mission) -> FlightResult:
    return fly(two_stage, margin=False)


@pytest.fixture(scope="module")
def orbital_flight(orbital: Mission) -> FlightResult:
    return fly(orbital, margin=False)


@pytest.fixture(scope="module")
def dispersed(two_stage: Mission) -> ScatterResult:
    return scatter(two_stage, 200, seed=3, workers=1)


@pytest.fixture(scope="module")
def payload_sweep(two_stage: Mission) -> SweepResult:
    return sweep(two_stage, [parse_axis(two_stage.document, "vehicle.payload=0.1 kg..0.5 kg:5")])


@pytest.fixture(scope="module")
def grid_sweep(two_stage: Mission) -> SweepResult:
    axes = [
        parse_axis(two_stage.document, "vehicle.payload=0.1 kg..0.5 kg:4"),
        parse_axis(two_stage.document, "stage.booster.inert_mass=0.5 kg..1 kg:3"),
    ]
    return sweep(two_stage, axes)


@pytest.fixture(scope="module")
def orbital_split(orbital: Mission) -> SplitResult:
    return split(orbital, losses=False)


# --- helpers ------------------------------------------------------------------------------


def decoded_png(data: bytes) -> np.ndarray[Any, Any]:
    """The PNG's pixels as grey levels 0..1 (PIL when present, else matplotlib's reader)."""
    try:
        from PIL import Image
    except ImportError:  # pragma: no cover - PIL comes with matplotlib
        import matplotlib.image

        pixels = matplotlib.image.imread(io.BytesIO(data), format="png")
        return np.asarray(pixels[..., :3].mean(axis=-1), dtype=float)
    with Image.open(io.BytesIO(data)) as image:
        assert image.format == "PNG"
        return np.asarray(image.convert("L"), dtype=float) / 255.0


def assert_picture(data: bytes, width: int, height: int) -> None:
    """Decodes as PNG at width x height pixels, and is not blank."""
    grey = decoded_png(data)
    assert grey.shape == (height, width)
    assert grey.std() > 0.05  # a blank figure has 0
    assert (grey < 0.9).mean() > 0.01  # at least 1 % of the pixels carry ink


def assert_svg(data: bytes, width_in: float, height_in: float) -> None:
    """Parses as SVG with the figure's size in points (72 pt = 1 in) and draws paths."""
    root = ET.fromstring(data)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert float(root.attrib["width"].removesuffix("pt")) == pytest.approx(width_in * 72)
    assert float(root.attrib["height"].removesuffix("pt")) == pytest.approx(height_in * 72)
    paths = root.findall(".//{http://www.w3.org/2000/svg}path")
    assert len(paths) > 50


def lines(figure: Figure, gid: str) -> list[Line2D]:
    return [
        artist
        for ax in figure.axes
        for artist in ax.get_lines()
        if isinstance(artist, Line2D) and artist.get_gid() == gid
    ]


def line(figure: Figure, gid: str) -> Line2D:
    (found,) = lines(figure, gid)
    return found


def bars(figure: Figure, gid: str) -> list[Rectangle]:
    return [
        patch
        for ax in figure.axes
        for patch in ax.patches
        if isinstance(patch, Rectangle) and patch.get_gid() == gid
    ]


def bar(figure: Figure, gid: str) -> Rectangle:
    (found,) = bars(figure, gid)
    return found


def ydata(artist: Line2D) -> np.ndarray[Any, Any]:
    return np.asarray(artist.get_ydata(), dtype=float)


def xdata(artist: Line2D) -> np.ndarray[Any, Any]:
    return np.asarray(artist.get_xdata(), dtype=float)


# --- import cost --------------------------------------------------------------------------


def test_matplotlib_is_not_imported_on_the_command_lines_start_up_path() -> None:
    code = (
        "import sys, propulsion.cli, propulsion.report.plots, propulsion.report.tables; "
        "print('matplotlib' in sys.modules)"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, timeout=60
    )
    assert out.stdout.strip() == "False"


# --- flight -------------------------------------------------------------------------------


def test_flight_png_decodes_at_8_by_9_inches_and_is_not_blank(flight: FlightResult) -> None:
    figure = plots.flight_figure(flight, SI)
    assert_picture(plots.figure_bytes(figure, "png"), 800, 900)


def test_flight_svg_parses_at_8_by_9_inches(flight: FlightResult) -> None:
    assert_svg(plots.figure_bytes(plots.flight_figure(flight, SI), "svg"), 8, 9)


def test_flight_series_are_the_trajectory_in_si(flight: FlightResult) -> None:
    figure = plots.flight_figure(flight, SI)
    frame = flight.trajectory
    time = frame["time_s"].to_numpy()
    for gid, column, factor in (
        ("altitude", "altitude_m", 1.0),
        ("speed", "speed_m_s", 1.0),
        ("acceleration", "acceleration_g", 1.0),
        ("mach", "mach", 1.0),
        ("dynamic_pressure", "dynamic_pressure_pa", 1e-3),  # shown in kPa
    ):
        drawn = line(figure, gid)
        np.testing.assert_array_equal(xdata(drawn), time)
        np.testing.assert_allclose(ydata(drawn), frame[column].to_numpy() * factor, rtol=EXACT)
    # no Earth's rotation in this mission: the inertial speed would lie on the ground speed
    # (tests/test_screens_pick_compare.py checks where it is drawn)
    assert not lines(figure, "inertial_speed")
    assert len(figure.axes) == 6  # five time panels and the event strip; no downrange panel
    assert not lines(figure, "altitude_downrange")


def test_flight_series_in_us_units_are_si_over_exact_factors(flight: FlightResult) -> None:
    figure = plots.flight_figure(flight, US)
    frame = flight.trajectory
    np.testing.assert_allclose(
        ydata(line(figure, "altitude")), frame["altitude_m"].to_numpy() / FOOT, rtol=EXACT
    )
    np.testing.assert_allclose(
        ydata(line(figure, "speed")), frame["speed_m_s"].to_numpy() / FOOT, rtol=EXACT
    )
    np.testing.assert_allclose(
        ydata(line(figure, "dynamic_pressure")),
        frame["dynamic_pressure_pa"].to_numpy() / PSI,
        rtol=1e-12,  # pint's psi goes through more exact factors than one division
    )
    # g and Mach have no US unit of their own
    np.testing.assert_array_equal(
        ydata(line(figure, "acceleration")), frame["acceleration_g"].to_numpy()
    )
    labels = [ax.get_ylabel() for ax in figure.axes]
    assert "Altitude (ft)" in labels and "Speed (ft/s)" in labels
    assert "Dyn. pressure (psi)" in labels


def test_flight_events_are_marked_at_their_times(flight: FlightResult) -> None:
    figure = plots.flight_figure(flight, SI)
    times = {event.name: event.time for event in flight.events}
    (strip,) = [ax for ax in figure.axes if ax.get_gid() == "event_strip"]
    for name in ("rail exit", "booster burnout", "booster separation", "sustainer ignition"):
        marks = lines(figure, f"event:{name}")
        assert len(marks) == 1 and marks[0].axes is strip  # one tick, on the event strip
        assert all(xdata(mark)[0] == times[name] for mark in marks)
    for name in ("max dynamic pressure", "apogee", "sustainer burnout"):
        assert lines(figure, f"event:{name}")
    texts = {text.get_text() for text in strip.texts}
    assert {"rail exit", "booster b/o", "booster sep.", "sustainer ign.", "max q", "apogee"} <= (
        texts
    )
    caption = " ".join(text.get_text() for text in figure.texts)
    assert "Bramble" in caption and "propulsion 0.1.0" in caption


def test_orbital_flight_adds_altitude_against_downrange(orbital_flight: FlightResult) -> None:
    figure = plots.flight_figure(orbital_flight, SI)
    assert len(figure.axes) == 7  # five time panels, the event strip, altitude against downrange
    frame = orbital_flight.trajectory
    drawn = line(figure, "altitude_downrange")
    np.testing.assert_array_equal(xdata(drawn), frame["downrange_m"].to_numpy())
    np.testing.assert_array_equal(ydata(drawn), frame["altitude_m"].to_numpy())
    # above 86 km geometric (the top of the U.S. Standard Atmosphere, 1976) Mach is not drawn
    above = frame["altitude_m"].to_numpy() + orbital_flight.mission.launch.altitude > 86_000.0
    assert above.any() and (~above).any()
    mach = ydata(line(figure, "mach"))
    assert np.isnan(mach[above]).all()
    np.testing.assert_array_equal(mach[~above], frame["mach"].to_numpy()[~above])
    assert_picture(plots.figure_bytes(figure), 800, 900)


# --- ledgers ------------------------------------------------------------------------------


@pytest.mark.parametrize("units, factor", [(SI, 1.0), (US, 1 / FOOT)], ids=["si", "us"])
def test_flight_ledger_bars_add_up_within_the_closure(
    flight: FlightResult, units: DisplayUnits, factor: float
) -> None:
    figure = plots.flight_ledger_figure(flight, units)
    total = flight.total
    ideal = bar(figure, "ideal").get_height()
    gids = ["gravity_loss", "drag_loss", "steering_loss", "pressure_loss"]
    # the booster's motor spends a little thrust before the rocket leaves the pad
    assert total.pad_loss > 0
    gids.append("pad_loss")
    losses = [bar(figure, gid) for gid in gids]
    achieved = bar(figure, "achieved").get_height()
    assert ideal == pytest.approx(total.ideal * factor, rel=EXACT)
    assert bar(figure, "pad_loss").get_height() == pytest.approx(total.pad_loss * factor, rel=EXACT)
    assert achieved == pytest.approx(total.achieved * factor, rel=EXACT, abs=1e-12)
    # ideal - losses = achieved, up to the ledger's closure (integration error); no
    # Earth's rotation in this mission, so no credit bar
    assert not any(p.get_gid() == "rotation_credit" for p in figure.axes[0].patches)
    closure = ideal - sum(rect.get_height() for rect in losses) - achieved
    assert abs(closure) <= abs(total.closure) * factor + 1e-9 * ideal
    # each loss hangs from where the one before it ended: a waterfall
    level = ideal
    for rect in losses:
        assert rect.get_y() + rect.get_height() == pytest.approx(level, rel=1e-12)
        level = rect.get_y()
    # the budget's requirement of the first leg, with its 130 m/s loss allowance (mission
    # file) inside it
    required = bar(figure, "required").get_height()
    need = budget(flight.mission).legs[0].required_delta_v
    assert required == pytest.approx(need * factor, rel=EXACT)
    assert bar(figure, "required_allowance").get_height() == pytest.approx(130.0 * factor)
    assert not bars(figure, "margin")  # flown without the margin search
    assert_picture(plots.figure_bytes(figure), 800, 500)


def test_flight_ledger_draws_the_flown_margin(flight: FlightResult) -> None:
    verdict = dataclasses.replace(flight.verdict, propulsion_margin_delta_v=42.5)
    figure = plots.flight_ledger_figure(dataclasses.replace(flight, verdict=verdict), US)
    assert bar(figure, "margin").get_height() == pytest.approx(42.5 / FOOT, rel=EXACT)


def test_budget_ledger_bars_add_up(two_stage: Mission) -> None:
    result = budget(two_stage)
    figure = plots.budget_ledger_figure(result, SI)
    ideal = bar(figure, "ideal").get_height()
    allowance = bar(figure, "allowance:0")
    achieved = bar(figure, "achieved").get_height()
    required = bar(figure, "required")
    margin = bar(figure, "margin")
    assert ideal == result.total_ideal_delta_v
    assert allowance.get_height() == pytest.approx(130.0)  # loss_allowance in the file
    assert allowance.get_y() + allowance.get_height() == pytest.approx(ideal, rel=1e-12)
    assert achieved == pytest.approx(ideal - 130.0, rel=1e-12)
    assert required.get_height() == result.verdict.total_required
    assert bar(figure, "required_allowance").get_height() == pytest.approx(130.0)
    # the margin stands on the requirement; one leg, every stage flown, no reserves: the
    # margin reaches exactly up to the ideal delta-v
    assert margin.get_y() == required.get_height()
    assert margin.get_height() == result.verdict.margin
    assert margin.get_y() + margin.get_height() == pytest.approx(ideal, rel=1e-12)
    # and the plain requirement plus the margin is what is left after the allowance
    plain = required.get_height() - 130.0
    assert plain + margin.get_height() == pytest.approx(achieved, rel=1e-12)
    (needed,) = [
        c for ax in figure.axes for c in ax.collections if c.get_gid() == "required_margin"
    ]
    segment = needed.get_segments()[0]
    assert segment[0][1] == pytest.approx(required.get_height() + result.verdict.required_margin)
    assert_picture(plots.figure_bytes(figure), 800, 500)


def test_budget_ledger_of_several_legs_in_us_units(orbital: Mission) -> None:
    result = budget(orbital)
    figure = plots.budget_ledger_figure(result, US)
    # only the ascent leg states a loss allowance: 1.5 km/s in the mission file
    assert bar(figure, "allowance:0").get_height() == pytest.approx(1500.0 / FOOT, rel=EXACT)
    assert not bars(figure, "allowance:1")
    assert bar(figure, "ideal").get_height() == pytest.approx(
        result.total_ideal_delta_v / FOOT, rel=EXACT
    )
    assert bar(figure, "required").get_height() == pytest.approx(
        result.verdict.total_required / FOOT, rel=EXACT
    )
    # the margin bar is the difference of the two above: a few ulps of round-off
    assert bar(figure, "margin").get_height() == pytest.approx(
        result.verdict.margin / FOOT, rel=1e-14
    )
    assert figure.axes[0].get_ylabel() == "Δv (ft/s)"


# --- dispersion ---------------------------------------------------------------------------


def test_scatter_histograms_count_every_valid_sample(dispersed: ScatterResult) -> None:
    figure = plots.scatter_figure(dispersed, SI)
    assert dispersed.valid == 200
    for gid in ("apogee_hist", "margin_hist"):
        counts = [rect.get_height() for rect in bars(figure, gid)]
        assert len(counts) >= 5
        assert sum(counts) == dispersed.valid
    # the bins cover the samples: the lowest edge is the smallest apogee, the highest the largest
    apogee = dispersed.values["apogee_m"]
    edges = [rect.get_x() for rect in bars(figure, "apogee_hist")]
    assert min(edges) == pytest.approx(apogee.min(), rel=1e-12)
    last = max(bars(figure, "apogee_hist"), key=lambda rect: rect.get_x())
    assert last.get_x() + last.get_width() == pytest.approx(apogee.max(), rel=1e-12)
    # the target (3000 m in the mission file) and zero margin are marked
    assert xdata(line(figure, "apogee_hist_mark"))[0] == 3000.0
    assert xdata(line(figure, "margin_hist_mark"))[0] == 0.0
    assert f"{dispersed.probability:.1%}" in figure.get_suptitle()
    # wind and elevation are dispersed: the apogees' positions get their own panel
    (points,) = [
        c for ax in figure.axes for c in ax.collections if c.get_gid() == "downrange_apogee"
    ]
    assert isinstance(points, PathCollection)
    np.testing.assert_array_equal(
        points.get_offsets(), np.column_stack([dispersed.values["downrange_m"], apogee])
    )
    assert len(figure.axes) == 3
    assert_picture(plots.figure_bytes(figure), 800, 500)


def test_scatter_in_us_units_and_without_sideways_dispersions(dispersed: ScatterResult) -> None:
    kept = tuple(
        d
        for d in dispersed.mission.dispersions
        if d.field not in ("launch.wind_speed", "launch.elevation")
    )
    mission = dataclasses.replace(dispersed.mission, dispersions=kept)
    figure = plots.scatter_figure(dataclasses.replace(dispersed, mission=mission), US)
    assert len(figure.axes) == 2
    assert xdata(line(figure, "apogee_hist_mark"))[0] == pytest.approx(3000.0 / FOOT, rel=EXACT)
    assert sum(rect.get_height() for rect in bars(figure, "margin_hist")) == 200
    lowest = min(rect.get_x() for rect in bars(figure, "margin_hist"))
    assert lowest == pytest.approx(dispersed.values["margin"].min() / FOOT, rel=1e-12)


# --- sweep --------------------------------------------------------------------------------


def test_sweep_of_one_field_draws_the_output_and_the_target(payload_sweep: SweepResult) -> None:
    figure = plots.sweep_figure(payload_sweep, US)
    frame = payload_sweep.frame
    drawn = line(figure, "output")
    np.testing.assert_allclose(xdata(drawn), frame["vehicle.payload_kg"] / 0.45359237, rtol=EXACT)
    np.testing.assert_allclose(ydata(drawn), frame["apogee_m"] / FOOT, rtol=EXACT)
    # 1 lb = 0.45359237 kg exactly (1959 agreement); target apogee 3000 m in the file
    assert ydata(line(figure, "target"))[0] == pytest.approx(3000.0 / FOOT, rel=EXACT)
    assert_picture(plots.figure_bytes(figure), 800, 500)
    margin = plots.sweep_figure(payload_sweep, SI, output="margin")
    np.testing.assert_array_equal(ydata(line(margin, "output")), frame["margin"])
    assert ydata(line(margin, "target"))[0] == 0.0


def _grid(result: SweepResult) -> tuple[np.ndarray[Any, Any], ...]:
    frame = result.frame
    xs = np.array(result.axes[0].values)
    ys = np.array(result.axes[1].values)
    z = np.full((ys.size, xs.size), np.nan)
    for _, row in frame.iterrows():
        i = int(np.flatnonzero(xs == row[result.axes[0].column])[0])
        j = int(np.flatnonzero(ys == row[result.axes[1].column])[0])
        z[j, i] = row["apogee_m"]
    return xs, ys, z


@pytest.mark.parametrize("units, factor", [(SI, 1.0), (US, 1 / FOOT)], ids=["si", "us"])
def test_sweep_of_two_fields_draws_the_target_contour(
    grid_sweep: SweepResult, units: DisplayUnits, factor: float
) -> None:
    figure = plots.sweep_figure(grid_sweep, units)
    xs, ys, z = _grid(grid_sweep)
    assert np.nanmin(z) < 3000.0 < np.nanmax(z)  # the grid straddles the target
    (contour,) = [
        c for ax in figure.axes for c in ax.collections if c.get_gid() == "target_contour"
    ]
    assert isinstance(contour, ContourSet)
    np.testing.assert_allclose(contour.levels, [3000.0 * factor], rtol=EXACT)
    # every vertex of the target contour lies on a grid edge where the linear
    # interpolation of the flown apogees is the target
    mass = 1.0 if units is SI else 1 / 0.45359237
    gx, gy = xs * mass, ys * mass
    vertices = np.concatenate(
        [
            path.vertices[path.codes != Path2D.CLOSEPOLY]
            if path.codes is not None
            else path.vertices
            for path in contour.get_paths()
        ]
    )
    assert len(vertices) >= 2
    for x, y in vertices:
        on_column = np.flatnonzero(np.isclose(gx, x, rtol=1e-12))
        if on_column.size:
            value = np.interp(y, gy, z[:, on_column[0]])
        else:
            (on_row,) = np.flatnonzero(np.isclose(gy, y, rtol=1e-12))
            value = np.interp(x, gx, z[on_row, :])
        assert value == pytest.approx(3000.0, rel=1e-9)
    assert_picture(plots.figure_bytes(figure), 800, 500)


def test_sweep_picture_refuses_three_fields(payload_sweep: SweepResult) -> None:
    axis = payload_sweep.axes[0]
    three = dataclasses.replace(payload_sweep, axes=[axis, axis, axis])
    with pytest.raises(plots.PlotError, match="one or two swept fields"):
        plots.sweep_figure(three, SI)
    with pytest.raises(plots.PlotError, match="no column 'apogee'"):
        plots.sweep_figure(payload_sweep, SI, output="apogee")


# --- split --------------------------------------------------------------------------------


def test_split_curve_has_its_minimum_at_the_lagrange_optimum(orbital_split: SplitResult) -> None:
    figure = plots.split_figure(orbital_split, SI)
    curve = line(figure, "liftoff_curve")
    shares = xdata(curve)
    assert shares[0] == pytest.approx(5.0) and shares[-1] == pytest.approx(95.0)
    masses = ydata(curve)
    finite = masses[np.isfinite(masses)]
    assert finite.size > 20
    optimum = orbital_split.lagrange
    # no split of the same delta-v is lighter than the Lagrange optimum (Curtis, 3rd ed.,
    # section 11.6), and the 0.5 % grid passes close to it
    assert finite.min() >= optimum.liftoff_mass * (1 - 1e-9)
    assert finite.min() <= optimum.liftoff_mass * (1 + 1e-3)
    share = optimum.delta_v[0] / optimum.delta_v.sum()
    assert abs(shares[np.nanargmin(masses)] / 100 - share) < 0.01
    mark = line(figure, "lagrange")
    assert xdata(mark)[0] == pytest.approx(100 * share, rel=EXACT)
    assert ydata(mark)[0] == optimum.liftoff_mass
    assert not lines(figure, "loss_aware")
    assert_picture(plots.figure_bytes(figure), 800, 500)


def test_split_marks_a_found_loss_aware_optimum_in_us_units(orbital_split: SplitResult) -> None:
    found = LossAwareSplit(
        True, np.array([5000.0, 4500.0]), 21000.0, np.array([19000.0, 1650.0]), 10, "test"
    )
    figure = plots.split_figure(dataclasses.replace(orbital_split, loss_aware=found), US)
    mark = line(figure, "loss_aware")
    assert xdata(mark)[0] == pytest.approx(100 * 5000.0 / 9500.0, rel=EXACT)
    assert ydata(mark)[0] == pytest.approx(21000.0 / 0.45359237, rel=EXACT)
    assert figure.axes[0].get_ylabel() == "Liftoff mass (lb)"


SINGLE_STAGE = """
[mission]
name = "Ember"

[vehicle]
payload = "20 kg"

[[stage]]
name = "only"
inert_mass = "60 kg"
propellant_mass = "540 kg"
[stage.engine]
thrust_vacuum = "15 kN"
isp_vacuum = "300 s"
exit_area = "0.05 m^2"
propellant = "lox_kerosene"

[[leg]]
name = "boost"
stages = ["only"]
target = "delta_v"
delta_v = "3 km/s"
"""


def test_split_of_one_stage_shows_liftoff_mass_against_stage_count(tmp_path: Path) -> None:
    import tomllib

    mission = parse_mission(tomllib.loads(SINGLE_STAGE), source="ember.toml")
    result = split(mission, counts=(1, 2, 3), losses=False)
    figure = plots.split_figure(result, SI)
    curve = line(figure, "count_curve")
    np.testing.assert_array_equal(xdata(curve), [1, 2, 3])
    expected = [s.liftoff_mass if s.feasible else math.nan for s in result.counts]
    np.testing.assert_array_equal(ydata(curve), expected)
    assert ydata(line(figure, "mission_count"))[0] == result.counts[0].liftoff_mass
    assert not lines(figure, "liftoff_curve")
    path = plots.save_figure(figure, tmp_path / "counts.svg")
    assert_svg(path.read_bytes(), 8, 5)


# --- files --------------------------------------------------------------------------------


def test_save_figure_writes_png_and_svg_by_extension(tmp_path: Path, flight: FlightResult) -> None:
    figure = plots.flight_ledger_figure(flight, SI)
    png = plots.save_figure(figure, tmp_path / "ledger.PNG")
    assert png.read_bytes().startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature, ISO/IEC 15948
    svg = plots.save_figure(figure, tmp_path / "ledger.svg")
    assert_svg(svg.read_bytes(), 8, 5)
    assert not list(tmp_path.glob(".ledger.*"))  # no temporary file left behind


def test_save_figure_refuses_other_extensions_and_existing_files(
    tmp_path: Path, flight: FlightResult
) -> None:
    figure = plots.flight_ledger_figure(flight, SI)
    for name in ("ledger.jpg", "ledger", "ledger.png.bak"):
        with pytest.raises(plots.PlotError, match=r"\.png or \.svg"):
            plots.save_figure(figure, tmp_path / name)
        assert not (tmp_path / name).exists()
    with pytest.raises(plots.PlotError, match="'png' or 'svg'"):
        plots.figure_bytes(figure, "gif")
    target = tmp_path / "ledger.png"
    target.write_bytes(b"keep me")
    with pytest.raises(OutputExistsError):
        plots.save_figure(figure, target)
    assert target.read_bytes() == b"keep me"
    plots.save_figure(figure, target, force=True)
    assert_picture(target.read_bytes(), 800, 500)


# --- sparkline ----------------------------------------------------------------------------


def test_sparkline_blocks_follow_the_values() -> None:
    # sixteen steps over two lines: the eighth blocks U+2581..U+2588 fill the lower line,
    # then the upper one
    top, bottom = sparkline([float(v) for v in range(16)], rows=2)
    assert bottom == "▁▂▃▄▅▆▇█████████"
    assert top == "        ▁▂▃▄▅▆▇█"
    assert sparkline([5.0, 5.0, 5.0]) == ["▁▁▁"]
    assert sparkline([0.0, math.nan, 1.0]) == ["▁ █"]
    with pytest.raises(ValueError):
        sparkline([1.0], rows=0)


# --- command line -------------------------------------------------------------------------


def test_fly_plot_writes_a_png_refuses_to_overwrite_and_drops_the_sparkline(
    tmp_path: Path,
) -> None:
    out = tmp_path / "out.png"
    args = ["fly", str(HOBBY), "--no-margin", "--plot", str(out)]
    first = runner.invoke(app, args)
    assert first.exit_code == 0, first.output
    assert_picture(out.read_bytes(), 800, 900)
    assert "Altitude against time" not in first.output
    before = out.read_bytes()
    again = runner.invoke(app, args)
    assert again.exit_code == 2
    assert "--force" in again.stderr
    assert out.read_bytes() == before
    forced = runner.invoke(app, [*args, "--force", "--units", "us"])
    assert forced.exit_code == 0, forced.output
    assert out.read_bytes() != before  # redrawn, in feet
    assert_picture(out.read_bytes(), 800, 900)


def test_fly_plot_with_another_extension_is_a_clear_error(tmp_path: Path) -> None:
    out = tmp_path / "out.jpg"
    result = runner.invoke(app, ["fly", str(HOBBY), "--no-margin", "--plot", str(out)])
    assert result.exit_code == 2
    message = " ".join(result.stderr.split())
    assert "out.jpg" in message and ".png or .svg" in message
    assert "Traceback" not in result.output
    assert not out.exists()


def test_fly_shows_the_altitude_sparkline_without_plot() -> None:
    result = runner.invoke(app, ["fly", str(HOBBY), "--no-margin"])
    assert result.exit_code == 0, result.output
    text = result.output.splitlines()
    (head,) = [i for i, row in enumerate(text) if row.startswith("Altitude against time")]
    top, bottom = text[head + 1], text[head + 2]
    assert "apogee" in top and "m" in top
    assert bottom.startswith("0 s ") and bottom.rstrip().endswith(" s")
    assert "█" in bottom and "▁" in bottom


def test_budget_plot_writes_svg_and_needs_force_to_overwrite(tmp_path: Path) -> None:
    out = tmp_path / "budget.svg"
    first = runner.invoke(app, ["budget", str(TWO_STAGE), "--plot", str(out)])
    assert first.exit_code == 0, first.output
    assert_svg(out.read_bytes(), 8, 5)
    before = out.read_bytes()
    again = runner.invoke(app, ["budget", str(TWO_STAGE), "--plot", str(out), "--json"])
    assert again.exit_code == 2 and out.read_bytes() == before
    forced = runner.invoke(app, ["budget", str(TWO_STAGE), "--plot", str(out), "--force"])
    assert forced.exit_code == 0


def test_scatter_sweep_and_split_plots_from_the_command_line(tmp_path: Path) -> None:
    scatter_png = tmp_path / "scatter.png"
    result = runner.invoke(
        app,
        ["scatter", str(TWO_STAGE), "-n", "200", "--workers", "1", "--plot", str(scatter_png)],
    )
    assert result.exit_code == 0, result.output
    assert_picture(scatter_png.read_bytes(), 800, 500)
    sweep_png = tmp_path / "sweep.png"
    result = runner.invoke(
        app,
        [
            "sweep",
            str(HOBBY),
            "--set",
            "vehicle.payload=0.05 kg..0.3 kg:3",
            "--plot",
            str(sweep_png),
        ],
    )
    assert result.exit_code == 0, result.output
    assert_picture(sweep_png.read_bytes(), 800, 500)
    split_png = tmp_path / "split.png"
    result = runner.invoke(app, ["split", str(ORBITAL), "--no-losses", "--plot", str(split_png)])
    assert result.exit_code == 0, result.output
    assert_picture(split_png.read_bytes(), 800, 500)


def test_sweep_plot_of_three_fields_is_refused_before_sweeping(tmp_path: Path) -> None:
    out = tmp_path / "sweep.png"
    settings = [
        "--set",
        "vehicle.payload=0.05 kg..0.3 kg:2",
        "--set",
        "stage.sustainer.inert_mass=1 kg..1.3 kg:2",
        "--set",
        "launch.elevation=80 deg..90 deg:1",
    ]
    result = runner.invoke(app, ["sweep", str(HOBBY), *settings, "--plot", str(out)])
    assert result.exit_code == 2
    assert "one or two swept fields" in " ".join(result.stderr.split())
    assert "Sweep of" not in result.output  # refused before anything was flown
    assert not out.exists()
