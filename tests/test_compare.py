"""`propulsion compare`: the study, the spreadsheet view, the exports and the command."""

from __future__ import annotations

import io
import json
import math
import re
import shutil
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import typer
from rich.console import Console
from rich.text import Text
from typer.testing import CliRunner

from propulsion.ascent import FlightResult, fly
from propulsion.cli.compare import compare_command, compare_view
from propulsion.errors import OutputExistsError
from propulsion.ledger import BudgetResult, budget
from propulsion.mission import Mission, load_mission
from propulsion.report.export_tables import ExportFormatError, export_table
from propulsion.report.sheet import BEST_MARK, best_rows, sheet_table, sheet_view
from propulsion.studies.compare import COLUMNS, CompareError, CompareResult, compare
from propulsion.units import display_units, format_column, format_number

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
DATA = Path(__file__).resolve().parent.parent / "data"
HOBBY = MISSIONS / "hobby_single_stage.toml"
TWO_STAGE = MISSIONS / "two_stage_competition.toml"
ORBITAL = MISSIONS / "orbital_launcher.toml"
EXAMPLES = (HOBBY, TWO_STAGE, ORBITAL)

# Exact by definition: international yard and pound agreement, 1959 (U.S. Federal Register
# notice of 1 July 1959; also NIST Special Publication 811, 2008 ed., appendix B).
FOOT = 0.3048  # [m]
POUND = 0.45359237  # [kg]
INCH = 0.0254  # [m]
# standard gravity, exact: 3rd General Conference on Weights and Measures (CGPM), 1901
G0 = 9.80665  # [m/s²]
PSI = POUND * G0 / INCH**2  # pound-force per square inch [Pa]

runner = CliRunner()


def _app() -> typer.Typer:
    """The main app once `compare` is registered there; until then, a stand-in."""
    from propulsion.cli import app

    if any(command.name == "compare" for command in app.registered_commands):
        return app
    local = typer.Typer(add_completion=False, pretty_exceptions_enable=False)

    @local.callback()
    def _root() -> None:
        """Stand-in for the main app's callback, so that `compare` stays a subcommand."""

    local.command("compare")(compare_command)
    return local


def _invoke(*args: str) -> Any:
    return runner.invoke(_app(), ["compare", *args])


@pytest.fixture(scope="module")
def missions() -> list[Mission]:
    return [load_mission(path) for path in EXAMPLES]


@pytest.fixture(scope="module")
def fast(missions: list[Mission]) -> CompareResult:
    """The three examples compared without the margin search (one flight each)."""
    return compare(missions, margin=False)


@pytest.fixture(scope="module")
def recomputed(missions: list[Mission]) -> list[tuple[BudgetResult, FlightResult]]:
    """Budget and flight of each example, computed here on their own."""
    return [(budget(mission), fly(mission, margin=False)) for mission in missions]


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return bool(a == b)


# --- the study ---------------------------------------------------------------------------


def test_rows_equal_budget_and_flight(
    fast: CompareResult,
    missions: list[Mission],
    recomputed: list[tuple[BudgetResult, FlightResult]],
) -> None:
    assert [row.name for row in fast.rows] == [mission.name for mission in missions]
    for row, mission, (plan, flown) in zip(fast.rows, missions, recomputed, strict=True):
        total = flown.clean_ledger()[-1]  # round-off shown as 0
        orbit = flown.orbit
        expected = {
            "source": mission.source,
            "liftoff_mass_kg": plan.stages[0].initial_mass,
            "ideal_delta_v_m_s": sum(stage.ideal_delta_v for stage in plan.stages),
            "gravity_loss_m_s": total.gravity_loss,
            "drag_loss_m_s": total.drag_loss,
            "steering_loss_m_s": total.steering_loss,
            "pressure_loss_m_s": total.pressure_loss,
            "achieved_m_s": total.achieved,
            "apogee_m": flown.apogee,
            "perigee_m": orbit.perigee_altitude if orbit is not None else math.nan,
            "orbit_apogee_m": orbit.apogee_altitude if orbit is not None else math.nan,
            "margin": flown.verdict.target_margin,
            "margin_target": flown.verdict.target,
            "propulsion_margin_m_s": math.nan,  # not searched without the margin
            "payload_margin_kg": math.nan,
            "liftoff_thrust_to_weight": plan.stages[0].thrust_to_weight,
            "rail_exit_speed_m_s": flown.rail_exit_speed,
            "max_mach": flown.max_mach,
            "max_dynamic_pressure_pa": flown.max_dynamic_pressure,
            "meets_targets": flown.verdict.meets_targets,
            "budget_meets_targets": plan.verdict.meets_targets,
        }
        for key, value in expected.items():
            got = getattr(row, key)
            if isinstance(value, float):
                assert got == pytest.approx(value, rel=1e-12, nan_ok=True), (row.name, key)
            else:
                assert got == value, (row.name, key)
    by_name = {row.name: row for row in fast.rows}
    # an orbital flight has an orbit and no apogee; a sounding rocket the other way round
    assert math.isnan(by_name["Lantern"].apogee_m) and by_name["Lantern"].perigee_m > 100e3
    assert by_name["Thistle"].apogee_m > 0 and math.isnan(by_name["Thistle"].perigee_m)
    # the orbit's target margin is how far perigee and apogee lie inside the band: metres
    assert by_name["Lantern"].margin_unit == "m" and by_name["Thistle"].margin_unit == "m"
    assert by_name["Lantern"].margin_target == "circular_orbit"


def test_ideal_delta_v_and_thrust_to_weight_from_the_rocket_equation(fast: CompareResult) -> None:
    # Tsiolkovsky: dv = Isp g0 ln(m0/mf) = (I / mp) ln(m0/mf), with the delivered Isp
    # I / (mp g0) of the motor (H. D. Curtis, Orbital Mechanics for Engineering Students,
    # 3rd ed., 2013, section 11.3). Recomputed here from the input files alone.
    document = tomllib.loads(HOBBY.read_text(encoding="utf-8"))

    def kg(text: str) -> float:
        number, unit = text.split()
        assert unit == "kg"
        return float(number)

    curve_file = DATA / "motors" / f"{document['stage'][0]['motor']['name']}.csv"
    header = {
        key.strip(): value.strip()
        for key, value in (
            line[1:].split("=", 1)
            for line in curve_file.read_text().splitlines()
            if line.startswith("#") and "=" in line
        )
    }
    curve = pd.read_csv(curve_file, comment="#")
    time, thrust = curve.iloc[:, 0].to_numpy(), curve.iloc[:, 1].to_numpy()
    impulse = float(np.sum((thrust[1:] + thrust[:-1]) / 2 * np.diff(time)))  # trapezoid
    propellant = kg(header["propellant_mass"])
    liftoff = kg(document["vehicle"]["payload"]) + kg(document["stage"][0]["inert_mass"])
    liftoff += kg(header["loaded_mass"])
    ideal = impulse / propellant * math.log(liftoff / (liftoff - propellant))
    thrust_to_weight = impulse / (time[-1] - time[0]) / (liftoff * G0)
    row = next(row for row in fast.rows if row.source == str(HOBBY))
    assert row.liftoff_mass_kg == pytest.approx(liftoff, rel=1e-14)
    assert row.ideal_delta_v_m_s == pytest.approx(ideal, rel=1e-12)
    assert row.liftoff_thrust_to_weight == pytest.approx(thrust_to_weight, rel=1e-12)


def test_margin_search_gives_the_flight_margin(missions: list[Mission]) -> None:
    hobby = missions[0]
    result = compare([hobby], margin=True)
    flown = fly(hobby, margin=True)
    assert result.margin_computed
    assert result.rows[0].propulsion_margin_m_s == pytest.approx(
        flown.verdict.propulsion_margin_delta_v, rel=1e-12
    )
    assert result.rows[0].payload_margin_kg == pytest.approx(
        flown.verdict.payload_margin, rel=1e-12
    )
    assert math.isfinite(result.rows[0].propulsion_margin_m_s)


def test_repeated_names_become_file_stems(tmp_path: Path, missions: list[Mission]) -> None:
    first, second = tmp_path / "light.toml", tmp_path / "heavy.toml"
    shutil.copy(HOBBY, first)
    shutil.copy(HOBBY, second)
    seen: list[tuple[int, int, str]] = []
    result = compare(
        [load_mission(first), load_mission(second), missions[1]],
        margin=False,
        progress=lambda done, total, name: seen.append((done, total, name)),
    )
    assert [row.name for row in result.rows] == ["light", "heavy", missions[1].name]
    assert seen == [(0, 3, "light"), (1, 3, "heavy"), (2, 3, missions[1].name), (3, 3, "")]
    with pytest.raises(CompareError):
        compare([], margin=False)


def test_frame_and_dict(fast: CompareResult) -> None:
    frame = fast.to_frame()
    assert list(frame.columns) == list(COLUMNS)
    assert len(frame) == len(fast.rows)
    assert frame["apogee_m"].tolist()[:2] == [row.apogee_m for row in fast.rows][:2]
    data = fast.to_dict()
    assert [option["name"] for option in data["options"]] == [row.name for row in fast.rows]
    assert data["margin_computed"] is False and data["sorted_by"] is None
    json.dumps(data)  # plain values only (NaN is replaced by the command's JSON writer)


def test_sorting_order(fast: CompareResult) -> None:
    rows = fast.rows
    by_mass = fast.sorted_by("liftoff_mass")
    assert [r.name for r in by_mass.rows] == [
        r.name for r in sorted(rows, key=lambda r: r.liftoff_mass_kg)
    ]
    assert by_mass.sort == ("liftoff_mass_kg", False)  # least mass first
    by_apogee = fast.sorted_by("apogee")
    finite = sorted((r for r in rows if math.isfinite(r.apogee_m)), key=lambda r: -r.apogee_m)
    missing = [r for r in rows if not math.isfinite(r.apogee_m)]
    assert [r.name for r in by_apogee.rows] == [r.name for r in finite + missing]
    assert by_apogee.sort == ("apogee_m", True)  # most apogee first
    up = fast.sorted_by("apogee_m", descending=False)
    assert [r.name for r in up.rows] == [r.name for r in finite[::-1] + missing]  # NaN last
    drag = fast.sorted_by("drag-loss")
    assert [r.drag_loss_m_s for r in drag.rows] == sorted(r.drag_loss_m_s for r in rows)
    names = sorted(r.name for r in rows)
    assert [r.name for r in fast.sorted_by("name").rows] == names
    assert [r.name for r in fast.sorted_by("name", descending=True).rows] == names[::-1]
    assert fast.rows == rows  # the original order is untouched


def test_unknown_sort_column_suggests_the_closest(fast: CompareResult) -> None:
    with pytest.raises(CompareError, match="did you mean 'apogee'"):
        fast.sorted_by("apogeee")
    with pytest.raises(CompareError, match="did you mean 'drag_loss'"):
        fast.sorted_by("drag_los")


# --- the spreadsheet view ----------------------------------------------------------------


def _cells(table: Any) -> dict[str, list[str]]:
    return {
        str(column.header).split("\n")[0]: [cell.plain for cell in column.cells]
        for column in table.columns
    }


def test_best_marker_lands_on_the_right_cells() -> None:
    frame = pd.DataFrame(
        {
            "name": ["a", "b", "c"],
            "liftoff_mass_kg": [3.0, 1.0, 2.0],
            "apogee_m": [math.nan, 500.0, 700.0],
            "max_mach": [0.5, 0.6, 0.7],
            "meets_targets": [True, False, None],
        }
    )
    columns = {name: COLUMNS[name] for name in frame.columns}
    table = sheet_table(frame, columns, "t", display_units("si"))
    cells = _cells(table)
    # whole numbers show no decimals they do not have (no "3.000" for 3 kg)
    assert cells["Liftoff mass"] == ["3", f"{BEST_MARK}1", "2"]  # least
    assert cells["Apogee"] == ["—", "500", f"{BEST_MARK}700"]  # most; NaN never wins
    assert not any(BEST_MARK in cell for cell in cells["Max Mach"])  # no better direction
    assert cells["Flight meets"] == ["yes", "no", "—"]
    ordinary, best = list(table.columns[1].cells)[:2]
    assert isinstance(ordinary, Text) and isinstance(best, Text)
    assert "green" not in str(ordinary.style)
    assert str(best.style) == "bold green"
    # without colour the marker is still there
    out = io.StringIO()
    Console(file=out, width=80, color_system=None).print(
        sheet_view(frame, columns, "t", display_units("si"))
    )
    assert f"{BEST_MARK}1 " in out.getvalue() and f"{BEST_MARK}700 " in out.getvalue()
    assert "best in its column" in out.getvalue()


def test_best_rows_ties_and_round_off() -> None:
    assert best_rows([1e-15, -7e-15, 50.0], "min") == {0, 1}  # round-off ties for best
    assert best_rows([0.0, 0.0], "min") == set()  # all tie: nothing to choose
    assert best_rows([math.nan, 3.0], "max") == set()  # one value: nothing to choose
    assert best_rows([2.0, 3.0, 3.0], "max") == {1, 2}
    assert best_rows([2.0, 3.0], None) == set()


def test_best_marker_on_the_examples(fast: CompareResult) -> None:
    frame = fast.to_frame()
    names = ["name", "gravity_loss_m_s", "ideal_delta_v_m_s", "margin"]
    cells = _cells(sheet_table(frame, {n: COLUMNS[n] for n in names}, "t", display_units("si")))
    gravity = [row.gravity_loss_m_s for row in fast.rows]
    ideal = [row.ideal_delta_v_m_s for row in fast.rows]
    assert [BEST_MARK in c for c in cells["Gravity loss"]] == [g == min(gravity) for g in gravity]
    assert [BEST_MARK in c for c in cells["Ideal Δv"]] == [v == max(ideal) for v in ideal]
    # target margins of an apogee and of an orbit band are not ranked against each other
    assert not any(BEST_MARK in c for c in cells["Target margin"])
    assert {row.margin_target for row in fast.rows} == {"apogee", "circular_orbit"}


def test_us_units_convert_exactly(fast: CompareResult) -> None:
    frame = fast.to_frame()
    names = ["name", "liftoff_mass_kg", "apogee_m", "drag_loss_m_s", "max_dynamic_pressure_pa"]
    table = sheet_table(frame, {n: COLUMNS[n] for n in names}, "t", display_units("us"), best=False)
    headers = [str(column.header) for column in table.columns]
    assert "(lb)" in headers[1] and "(ft)" in headers[2] and "(ft/s)" in headers[3]
    assert "(psi)" in headers[4]
    cells = _cells(table)
    for index, row in enumerate(fast.rows):
        assert cells["Liftoff mass"][index] == format_number(row.liftoff_mass_kg / POUND, 4)
        assert cells["Drag loss"][index] == format_number(row.drag_loss_m_s / FOOT, 4)
        if math.isfinite(row.apogee_m):
            assert cells["Apogee"][index] == format_number(row.apogee_m / FOOT, 4)


def test_table_stays_readable_at_80_columns(fast: CompareResult) -> None:
    out = io.StringIO()
    console = Console(file=out, width=80, color_system=None)
    console.print(compare_view(fast, display_units("si"), None, 80))
    text = out.getvalue()
    assert max(len(line) for line in text.splitlines()) <= 80
    # a column shows its numbers with one count of decimals (that of its largest)
    gravity = format_column([row.gravity_loss_m_s for row in fast.rows])
    apogee = format_column([row.apogee_m for row in fast.rows if math.isfinite(row.apogee_m)])
    apogees = iter(apogee)
    for row, gravity_loss in zip(fast.rows, gravity, strict=True):
        line = next(line for line in text.splitlines() if line.startswith(f" {row.name} "))
        # the numbers stay whole on the option's line
        assert gravity_loss in line
        if math.isfinite(row.apogee_m):
            assert next(apogees) in line
    assert "Safety caution" in text
    # every column, when asked for, is shown in blocks that fit
    out = io.StringIO()
    Console(file=out, width=80, color_system=None).print(
        compare_view(fast, display_units("us"), [n for n in COLUMNS if n != "margin_unit"], 80)
    )
    text = out.getvalue()
    assert max(len(line) for line in text.splitlines()) <= 80
    # the last block holds the budget's verdict (its header may wrap: "Budget" over "meets")
    assert "continued" in text and re.search(r"Budget( |\s*\n.*)meets", text)


# --- exports -----------------------------------------------------------------------------


def _only(folder: Path, *names: str) -> None:
    """The folder holds exactly these files: no temporary file was left behind."""
    assert sorted(path.name for path in folder.iterdir()) == sorted(names)


def test_csv_reads_back_to_the_same_numbers(tmp_path: Path, fast: CompareResult) -> None:
    frame = fast.to_frame()
    path = export_table(frame, tmp_path / "options.csv")
    back = pd.read_csv(path)
    assert "apogee [m]" in back.columns and "max_dynamic_pressure [Pa]" in back.columns
    assert back["name"].tolist() == frame["name"].tolist()
    pairs = {
        "liftoff_mass [kg]": "liftoff_mass_kg",
        "gravity_loss [m/s]": "gravity_loss_m_s",
        "apogee [m]": "apogee_m",
        "perigee [m]": "perigee_m",
        "max_dynamic_pressure [Pa]": "max_dynamic_pressure_pa",
        "liftoff_thrust_to_weight": "liftoff_thrust_to_weight",
        "margin": "margin",
    }
    for header, column in pairs.items():
        for got, want in zip(back[header], frame[column], strict=True):
            assert _same(float(got), float(want)), (header, got, want)  # exact round trip
    _only(tmp_path, "options.csv")


def test_csv_in_us_units(tmp_path: Path, fast: CompareResult) -> None:
    frame = fast.to_frame()
    back = pd.read_csv(export_table(frame, tmp_path / "us.csv", units=display_units("us")))
    for index, row in enumerate(fast.rows):
        assert back["liftoff_mass [lb]"][index] == pytest.approx(
            row.liftoff_mass_kg / POUND, rel=1e-15
        )
        assert back["gravity_loss [ft/s]"][index] == pytest.approx(
            row.gravity_loss_m_s / FOOT, rel=1e-15
        )
        assert back["max_dynamic_pressure [psi]"][index] == pytest.approx(
            row.max_dynamic_pressure_pa / PSI, rel=1e-14
        )
        unit = {"m": "ft", "m/s": "ft/s"}[row.margin_unit]
        assert back["margin_unit"][index] == unit
        assert back["margin"][index] == pytest.approx(row.margin / FOOT, rel=1e-15)


def test_xlsx_reads_back_with_openpyxl(tmp_path: Path, fast: CompareResult) -> None:
    openpyxl = pytest.importorskip("openpyxl")
    frame = fast.to_frame()
    path = export_table(frame, tmp_path / "options.xlsx", sheet_name="compare")
    sheet = openpyxl.load_workbook(path)["compare"]
    rows = list(sheet.iter_rows(values_only=True))
    header = list(rows[0])
    assert header[:3] == ["name", "source", "liftoff_mass [kg]"]
    assert len(rows) == 1 + len(fast.rows)
    apogee = header.index("apogee [m]")
    meets = header.index("meets_targets")
    # openpyxl writes numbers with 16 significant digits ("%.16g" in its
    # openpyxl.compat.strings.safe_string), so they read back to 5e-16 relative
    for values, row in zip(rows[1:], fast.rows, strict=True):
        assert values[0] == row.name
        assert values[2] == pytest.approx(row.liftoff_mass_kg, rel=5e-16)
        if math.isfinite(row.apogee_m):
            assert values[apogee] == pytest.approx(row.apogee_m, rel=5e-16)
        else:
            assert values[apogee] is None  # NaN is an empty cell
        assert values[meets] is row.meets_targets
    _only(tmp_path, "options.xlsx")


def test_markdown_has_one_line_per_option(tmp_path: Path, fast: CompareResult) -> None:
    path = export_table(fast.to_frame(), tmp_path / "options.md", units=display_units("us"))
    lines = path.read_text(encoding="utf-8").splitlines()
    assert len(lines) == 2 + len(fast.rows)
    assert "apogee [ft]" in lines[0] and "liftoff_mass [lb]" in lines[0]
    assert set(lines[1]) <= set("|-: ")
    pipes = lines[0].count("|")
    assert all(line.count("|") == pipes for line in lines)
    for line, row in zip(lines[2:], fast.rows, strict=True):
        assert line.startswith(f"| {row.name} |")
    _only(tmp_path, "options.md")


def test_existing_export_is_not_overwritten(tmp_path: Path, fast: CompareResult) -> None:
    frame = fast.to_frame()
    path = tmp_path / "options.csv"
    path.write_bytes(b"precious,data\n1,2\n")
    with pytest.raises(OutputExistsError):
        export_table(frame, path)
    assert path.read_bytes() == b"precious,data\n1,2\n"
    export_table(frame, path, force=True)
    assert pd.read_csv(path)["name"].tolist() == [row.name for row in fast.rows]
    _only(tmp_path, "options.csv")


def test_unknown_extension_names_the_allowed_ones(tmp_path: Path, fast: CompareResult) -> None:
    with pytest.raises(ExportFormatError, match=r"\.csv, \.xlsx, \.md"):
        export_table(fast.to_frame(), tmp_path / "options.txt")
    _only(tmp_path)


# --- the command -------------------------------------------------------------------------


def test_command_sorts_and_shows_the_table() -> None:
    result = _invoke(str(HOBBY), str(TWO_STAGE), "--no-margin", "--sort", "apogee")
    assert result.exit_code == 0, result.output
    text = result.stdout
    thistle = text.index(" Thistle ")
    bramble = text.index(" Bramble ")
    assert bramble < thistle  # Bramble flies higher: most apogee first
    assert BEST_MARK in text and "Safety caution" in text and "PASS" in text


def test_command_json(tmp_path: Path) -> None:
    result = _invoke(str(HOBBY), str(TWO_STAGE), "--no-margin", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert "planning estimates" in data["safety_caution"]
    assert [option["name"] for option in data["options"]] == ["Thistle", "Bramble"]
    assert data["options"][0]["perigee_m"] is None  # NaN is written as null
    assert data["all_meet_targets"] is True


def test_command_us_units() -> None:
    result = _invoke(str(HOBBY), str(TWO_STAGE), "--no-margin", "--units", "us")
    assert result.exit_code == 0, result.output
    assert "(lb)" in result.stdout and "(ft)" in result.stdout and "(ft/s)" in result.stdout


def test_command_exit_code_1_when_an_option_falls_short(tmp_path: Path) -> None:
    high = tmp_path / "high.toml"
    high.write_text(HOBBY.read_text(encoding="utf-8").replace('"1 km"', '"5 km"'))
    result = _invoke(str(HOBBY), str(high), "--no-margin")
    assert result.exit_code == 1, result.output
    text = " ".join(result.stdout.split())
    assert "SHORT" in text and "1 of 2 options falls short" in text and "high" in text


def test_command_unknown_sort_column_exit_code_2() -> None:
    result = _invoke(str(HOBBY), str(TWO_STAGE), "--no-margin", "--sort", "apogeee")
    assert result.exit_code == 2
    assert "did you mean 'apogee'" in result.stderr


def test_command_bad_file_is_named(tmp_path: Path) -> None:
    bad = tmp_path / "broken.toml"
    bad.write_text('[vehicle]\npayload = 2.4\n[[stage]]\nname = "a"\n')
    result = _invoke(str(HOBBY), str(bad), "--no-margin")
    assert result.exit_code == 2
    assert "broken.toml" in result.stderr and "Traceback" not in result.output
    missing = _invoke(str(HOBBY), str(tmp_path / "nowhere.toml"), "--no-margin")
    assert missing.exit_code == 2 and "nowhere.toml" in missing.stderr


def test_command_export_refuses_to_overwrite(tmp_path: Path) -> None:
    path = tmp_path / "options.csv"
    path.write_bytes(b"keep me\n")
    result = _invoke(str(HOBBY), "--no-margin", "--export", str(path))
    assert result.exit_code == 2
    assert "--force" in result.stderr
    assert path.read_bytes() == b"keep me\n"
    forced = _invoke(str(HOBBY), "--no-margin", "--export", str(path), "--force")
    assert forced.exit_code == 0, forced.output
    assert pd.read_csv(path)["name"].tolist() == ["Thistle"]
    wrong = _invoke(str(HOBBY), "--no-margin", "--export", str(tmp_path / "options.pdf"))
    assert wrong.exit_code == 2 and ".csv, .xlsx, .md" in " ".join(wrong.stderr.split())
    _only(tmp_path, "options.csv")
