"""Tests of the mission loader: every kind of bad input is refused with a MissionError that
names the file, the field, the line and what was expected; good input loads and converts.

All vehicles, stage names and thrust curves here are invented for the tests.
"""

from __future__ import annotations

import math
import pickle
import re
import tomllib
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from propulsion.cli import app
from propulsion.errors import (
    DataFileError,
    MissionError,
    MissionFileNotFoundError,
    PropulsionError,
)
from propulsion.mission import Mission, load_mission, parse_mission
from propulsion.vehicle import Engine, Motor

POUND = 0.45359237  # kg, International yard and pound agreement (1959), exact

# --- invented missions used as starting points ------------------------------------------------

# One motor stage flying a shipped demo motor.
MOTOR_MISSION = """\
[mission]
name = "Wren"

[vehicle]
payload = "0.10 kg"
diameter = "54 mm"

[[stage]]
name = "sustainer"
inert_mass = "1.15 kg"
[stage.motor]
name = "pd-H113"

[[leg]]
name = "to apogee"
stages = ["sustainer"]
target = "apogee"
altitude = "1 km"
loss_allowance = "45 m/s"
"""

# Two motor stages.
TWO_MOTOR_MISSION = """\
[vehicle]
payload = "0.15 kg"

[[stage]]
name = "booster"
inert_mass = "0.70 kg"
[stage.motor]
name = "pd-J443"

[[stage]]
name = "sustainer"
inert_mass = "0.90 kg"
[stage.motor]
name = "pd-H113"

[[leg]]
stages = ["booster", "sustainer"]
target = "apogee"
altitude = "3000 m"
loss_allowance = "300 m/s"
"""

# Two engine stages: a sea-level core and a vacuum upper stage that flies two legs.
ENGINE_MISSION = """\
[vehicle]
payload = "200 kg"

[[stage]]
name = "core"
inert_mass = "1500 kg"
propellant_mass = "15 t"
[stage.engine]
count = 4
thrust_sea_level = "40 kN"
isp_sea_level = "280 s"
isp_vacuum = "310 s"

[[stage]]
name = "upper"
inert_mass = "250 kg"
propellant_mass = "2000 kg"
[stage.engine]
thrust_vacuum = "20 kN"
isp_vacuum = "330 s"
exit_area = "0.4 m^2"

[[leg]]
stages = ["core", "upper"]
target = "delta_v"
delta_v = "8 km/s"

[[leg]]
stages = ["upper"]
target = "delta_v"
delta_v = "100 m/s"
"""

# A thrust curve of invented shape: 0.1 s linear rise to 100 N, flat to 1.0 s, 0.1 s linear
# tail-off. Closed-form area (two triangles and a rectangle):
#   0.1 s * 100 N / 2 + 0.9 s * 100 N + 0.1 s * 100 N / 2 = 100 N s.
CURVE_ROWS = "0,0\n0.1,100\n1.0,100\n1.1,0\n"
CURVE_IMPULSE = 0.1 * 100 / 2 + 0.9 * 100 + 0.1 * 100 / 2
CURVE_HEADER = "# propellant_mass = 0.05 kg\ntime [s],thrust [N]\n"


# --- helpers ---------------------------------------------------------------------------------


def edit(text: str, old: str, new: str) -> str:
    """Replace the one occurrence of ``old``; fail loudly if it is not there exactly once."""
    assert text.count(old) == 1, f"{old!r} occurs {text.count(old)} times"
    return text.replace(old, new)


def line_of(text: str, fragment: str, occurrence: int | None = None) -> int:
    """1-based number of the line of ``text`` that contains ``fragment``.

    Without ``occurrence`` the fragment must be on exactly one line; with it, the
    ``occurrence``-th such line (1-based) is returned.
    """
    found = [n for n, line in enumerate(text.splitlines(), start=1) if fragment in line]
    if occurrence is None:
        assert len(found) == 1, f"{fragment!r} is on lines {found}"
        return found[0]
    return found[occurrence - 1]


def refuse(
    document: str | dict[str, Any], source: str = "probe.toml", base_dir: Path | None = None
) -> MissionError:
    """Parse and return the MissionError; fail if the document loads."""
    with pytest.raises(MissionError) as info:
        parse_mission(document, source=source, base_dir=base_dir)
    error = info.value
    assert error.source == source or isinstance(error, DataFileError)
    assert source in str(error) or isinstance(error, DataFileError)
    if error.field:
        assert f"field '{error.field}'" in str(error)
    return error


def outcome(document: str, base_dir: Path | None = None) -> Mission | PropulsionError:
    """The Mission, or the project's own error (anything else propagates)."""
    try:
        return parse_mission(document, source="probe.toml", base_dir=base_dir)
    except PropulsionError as exc:
        return exc


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def with_curve_file(mission: str, csv_name: str) -> str:
    return edit(mission, 'name = "pd-H113"', f'file = "{csv_name}"')


def with_drag_file(mission: str, csv_name: str) -> str:
    return edit(mission, 'diameter = "54 mm"', f'diameter = "54 mm"\ndrag_curve = "{csv_name}"')


# --- one table of bad input: (id, text, field, fragment of problem/expected, line marker) ------
#
# The line marker is a fragment of the line the error must point at (with the occurrence where
# the fragment is on several lines), or None where the text holds no such line (a table that
# is absent).

Marker = str | tuple[str, int] | None
Case = tuple[str, str, str, str, Marker]

CASES: list[Case] = [
    (
        "malformed-toml",
        edit(MOTOR_MISSION, 'payload = "0.10 kg"', 'payload = "0.10 kg'),
        "",
        "malformed TOML",
        'payload = "0.10 kg',
    ),
    (
        "duplicate-key-toml",
        edit(MOTOR_MISSION, 'name = "Wren"', 'name = "Wren"\nname = "Wren again"'),
        "",
        "malformed TOML",
        "Wren again",
    ),
    (
        "missing-vehicle",
        edit(MOTOR_MISSION, '[vehicle]\npayload = "0.10 kg"\ndiameter = "54 mm"\n', ""),
        "vehicle",
        "is missing",
        None,
    ),
    (
        "missing-payload",
        edit(MOTOR_MISSION, 'payload = "0.10 kg"\n', ""),
        "vehicle.payload",
        "is missing",
        "[vehicle]",
    ),
    (
        "missing-stage",
        MOTOR_MISSION.split("[[stage]]")[0],
        "stage",
        "is missing",
        None,
    ),
    (
        "missing-stage-name",
        edit(MOTOR_MISSION, 'name = "sustainer"\n', ""),
        "stage[1].name",
        "is missing",
        "[[stage]]",
    ),
    (
        "missing-inert-mass",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"\n', ""),
        "stage[1].inert_mass",
        "exactly one of inert_mass and propellant_mass_fraction",
        "[[stage]]",
    ),
    (
        "unknown-field-typo",
        edit(MOTOR_MISSION, "inert_mass", "inert_mas"),
        "stage[1].inert_mas",
        "did you mean 'inert_mass'",
        "inert_mas",
    ),
    (
        "unknown-motor-field-typo",
        edit(MOTOR_MISSION, 'name = "pd-H113"', 'nam = "pd-H113"'),
        "stage[1].motor.nam",
        "did you mean 'name'",
        "nam =",
    ),
    (
        "wrong-dimension",
        edit(MOTOR_MISSION, '"54 mm"', '"3 kg"'),
        "vehicle.diameter",
        "expected length, got mass",
        "diameter",
    ),
    (
        "bare-number-payload",
        edit(MOTOR_MISSION, 'payload = "0.10 kg"', "payload = 2.4"),
        "vehicle.payload",
        "the bare number 2.4 has no unit",
        "payload",
    ),
    (
        "negative-payload",
        edit(MOTOR_MISSION, '"0.10 kg"', '"-1 kg"'),
        "vehicle.payload",
        "is too small",
        "payload",
    ),
    (
        "negative-inert-mass",
        edit(MOTOR_MISSION, '"1.15 kg"', '"-1.15 kg"'),
        "stage[1].inert_mass",
        "a mass above zero",
        "inert_mass",
    ),
    (
        "zero-inert-mass",
        edit(MOTOR_MISSION, '"1.15 kg"', '"0 kg"'),
        "stage[1].inert_mass",
        "a mass above zero",
        "inert_mass",
    ),
    (
        "zero-motor-propellant",
        edit(MOTOR_MISSION, 'name = "pd-H113"', 'name = "pd-H113"\npropellant_mass = "0 g"'),
        "stage[1].motor.propellant_mass",
        "a mass above zero",
        'propellant_mass = "0 g"',
    ),
    (
        "zero-engine-propellant",
        edit(ENGINE_MISSION, '"15 t"', '"0 t"'),
        "stage[1].propellant_mass",
        "a mass above zero",
        '"0 t"',
    ),
    (
        "propellant-fraction-one",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', "propellant_mass_fraction = 1"),
        "stage[1].propellant_mass_fraction",
        "cannot be all propellant",
        "propellant_mass_fraction",
    ),
    (
        "propellant-fraction-above-one",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', "propellant_mass_fraction = 1.5"),
        "stage[1].propellant_mass_fraction",
        "cannot be all propellant",
        "propellant_mass_fraction",
    ),
    (
        "propellant-fraction-100-percent",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', 'propellant_mass_fraction = "100 %"'),
        "stage[1].propellant_mass_fraction",
        "below 1",
        "propellant_mass_fraction",
    ),
    (
        "propellant-fraction-zero",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', "propellant_mass_fraction = 0"),
        "stage[1].propellant_mass_fraction",
        "above 0",
        "propellant_mass_fraction",
    ),
    (
        "inert-mass-and-fraction",
        edit(
            MOTOR_MISSION,
            'inert_mass = "1.15 kg"',
            'inert_mass = "1 kg"\npropellant_mass_fraction = 0.5',
        ),
        "stage[1].inert_mass",
        "exactly one of",
        'inert_mass = "1 kg"',
    ),
    (
        "unknown-shipped-motor",
        edit(MOTOR_MISSION, '"pd-H113"', '"pd-H131"'),
        "stage[1].motor.name",
        "did you mean 'pd-H113'",
        "pd-H131",
    ),
    (
        "unknown-unit",
        edit(MOTOR_MISSION, '"0.10 kg"', '"0.10 kgg"'),
        "vehicle.payload",
        "unknown unit 'kgg'",
        "payload",
    ),
    (
        "not-a-unit-expression",
        edit(MOTOR_MISSION, '"0.10 kg"', '"0.10 k g ("'),
        "vehicle.payload",
        "is not a unit expression",
        "payload",
    ),
    (
        "number-in-words",
        edit(MOTOR_MISSION, '"0.10 kg"', '"ten grams"'),
        "vehicle.payload",
        "expected a number followed by a unit",
        "payload",
    ),
    (
        "huge-exponent",
        edit(MOTOR_MISSION, '"0.10 kg"', '"9**9**9 kg"'),
        "vehicle.payload",
        "exponent 9 is out of range",
        "payload",
    ),
    (
        "huge-unit-exponent",
        edit(MOTOR_MISSION, '"54 mm"', '"1 m**99"'),
        "vehicle.diameter",
        "exponent 99 is out of range",
        "diameter",
    ),
    (
        "non-finite-text",
        edit(MOTOR_MISSION, '"54 mm"', '"1e400 mm"'),
        "vehicle.diameter",
        "not finite",
        "diameter",
    ),
    (
        "nan-residual-fraction",
        edit(
            ENGINE_MISSION,
            'inert_mass = "250 kg"',
            'inert_mass = "250 kg"\nresidual_fraction = nan',
        ),
        "stage[2].residual_fraction",
        "a finite number",
        "residual_fraction",
    ),
    (
        "inf-margin-residual-fraction",
        MOTOR_MISSION + "\n[margins]\nresidual_fraction = inf\n",
        "margins.residual_fraction",
        "a finite number",
        "residual_fraction",
    ),
    (
        "nan-required-margin",
        MOTOR_MISSION + "\n[margins]\nrequired_margin = -nan\n",
        "margins.required_margin",
        "is nan",
        "required_margin",
    ),
    (
        "nan-propellant-fraction",
        edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', "propellant_mass_fraction = nan"),
        "stage[1].propellant_mass_fraction",
        "a finite number",
        "propellant_mass_fraction",
    ),
    (
        "leg-names-unknown-stage",
        edit(MOTOR_MISSION, '["sustainer"]', '["sustainr"]'),
        "leg[1].stages",
        "did you mean 'sustainer'",
        "sustainr",
    ),
    (
        "leg-stages-reversed",
        edit(TWO_MOTOR_MISSION, '["booster", "sustainer"]', '["sustainer", "booster"]'),
        "leg[1].stages",
        "in firing order",
        "stages =",
    ),
    (
        "leg-skips-first-stage",
        edit(TWO_MOTOR_MISSION, '["booster", "sustainer"]', '["sustainer"]'),
        "leg[1].stages",
        "the next stage to fire is 'booster'",
        "stages =",
    ),
    (
        "legs-out-of-order",
        edit(ENGINE_MISSION, 'stages = ["upper"]', 'stages = ["core"]'),
        "leg[2].stages",
        "stage 'core' has already fired in an earlier leg",
        'stages = ["core"]',
    ),
    (
        "motor-stage-in-two-legs",
        edit(TWO_MOTOR_MISSION, '["booster", "sustainer"]', '["booster"]')
        + '\n[[leg]]\nstages = ["booster", "sustainer"]\ntarget = "delta_v"\n'
        'delta_v = "10 m/s"\n',
        "leg[2].stages",
        "cannot fly two legs",
        'stages = ["booster", "sustainer"]',
    ),
    (
        "motor-and-engine",
        edit(
            MOTOR_MISSION,
            'name = "pd-H113"',
            'name = "pd-H113"\n[stage.engine]\nthrust_vacuum = "1 kN"\nisp_vacuum = "200 s"\n'
            'isp_sea_level = "180 s"',
        ),
        "stage[1]",
        "exactly one of [stage.motor] and [stage.engine]",
        "[[stage]]",
    ),
    (
        "neither-motor-nor-engine",
        edit(MOTOR_MISSION, '[stage.motor]\nname = "pd-H113"\n', ""),
        "stage[1]",
        "exactly one of [stage.motor] and [stage.engine]",
        "[[stage]]",
    ),
    (
        "engine-without-isp-sea-level-or-exit-area",
        edit(ENGINE_MISSION, 'isp_sea_level = "280 s"\n', ""),
        "stage[1].engine.isp_sea_level",
        "exactly one of isp_sea_level and exit_area",
        ("[stage.engine]", 1),  # the missing key has no line: its table's line
    ),
    (
        "duplicate-stage-name",
        edit(TWO_MOTOR_MISSION, 'name = "sustainer"', 'name = "booster"'),
        "stage[2].name",
        "'booster' is used twice",
        ('name = "booster"', 2),
    ),
    (
        "unknown-target",
        edit(MOTOR_MISSION, '"apogee"', '"apogeee"'),
        "leg[1].target",
        "did you mean 'apogee'",
        "apogeee",
    ),
    (
        "sea-level-isp-above-vacuum",
        edit(ENGINE_MISSION, '"280 s"', '"400 s"'),
        "stage[1].engine.isp_sea_level",
        "not above isp_vacuum",
        "400 s",
    ),
    (
        "count-zero",
        edit(ENGINE_MISSION, "count = 4", "count = 0"),
        "stage[1].engine.count",
        "from 1 to 64",
        "count = 0",
    ),
]


TEXT = {case[0]: case[1] for case in CASES}


@pytest.mark.parametrize(
    ("text", "field", "fragment", "marker"),
    [case[1:] for case in CASES],
    ids=[case[0] for case in CASES],
)
def test_bad_mission_is_refused(text: str, field: str, fragment: str, marker: Marker) -> None:
    error = refuse(text)
    assert type(error) is MissionError
    assert error.field == field
    assert fragment in f"{error.problem} {error.expected}"
    if marker is None:
        assert error.line is None
        assert str(error).startswith("probe.toml: ")
    else:
        expected_line = line_of(text, marker) if isinstance(marker, str) else line_of(text, *marker)
        assert error.line == expected_line
        assert str(error).startswith(f"probe.toml, line {expected_line}: ")


@pytest.mark.parametrize("document", [5, None, b"[vehicle]", ["vehicle"]])
def test_not_a_document(document: Any) -> None:
    error = refuse(document)
    assert error.field == ""
    assert "not a mission document" in error.problem


def test_dictionary_errors_have_no_line(hobby_doc: dict[str, Any]) -> None:
    del hobby_doc["stage"][0]["inert_mass"]
    error = refuse(hobby_doc, source="<mission>")
    assert error.field == "stage[1].inert_mass"
    assert error.line is None


def test_dictionary_with_non_text_key(hobby_doc: dict[str, Any]) -> None:
    hobby_doc["vehicle"][5] = "x"
    error = refuse(hobby_doc, source="<mission>")
    assert error.field == "vehicle.5"
    assert "unknown field" in error.problem


# --- thrust-curve and drag-curve files --------------------------------------------------------


@pytest.mark.parametrize(
    ("rows", "problem"),
    [
        ("0,0\n0.5,100\n0.5,100\n1.1,0\n", "row 3: time must increase"),
        ("0,0\n0.5,100\n0.4,100\n1.1,0\n", "row 3: time must increase"),
        ("0,0\n0.5,-100\n1.1,0\n", "row 2: thrust must not be negative"),
        ("0,0\n0.5,0\n1.1,0\n", "total impulse is zero"),
        ("0,5\n", "at least 2 points"),
        ("0,0\n0.5,abc\n", "'abc' is not a number"),
        ("0,0\n0.5,nan\n1,0\n", "is not a number"),
    ],
    ids=[
        "repeated-time",
        "decreasing-time",
        "negative-thrust",
        "all-zero",
        "one-row",
        "text",
        "nan",
    ],
)
def test_bad_thrust_curve_names_the_file(tmp_path: Path, rows: str, problem: str) -> None:
    csv = write(tmp_path, "curve.csv", CURVE_HEADER + rows)
    error = refuse(with_curve_file(MOTOR_MISSION, "curve.csv"), base_dir=tmp_path)
    assert isinstance(error, DataFileError)
    assert error.source == str(csv)
    assert str(csv) in str(error)
    assert problem in error.problem


def test_thrust_curve_without_propellant_mass(tmp_path: Path) -> None:
    write(tmp_path, "bare.csv", "time [s],thrust [N]\n" + CURVE_ROWS)
    error = refuse(with_curve_file(MOTOR_MISSION, "bare.csv"), base_dir=tmp_path)
    assert isinstance(error, DataFileError)
    assert error.field == "propellant_mass"
    assert "motor.propellant_mass" in error.expected


def test_thrust_curve_header_with_wrong_unit(tmp_path: Path) -> None:
    csv = write(tmp_path, "kg.csv", "# propellant_mass = 0.05 kg\ntime [kg],thrust [N]\n0,0\n1,1\n")
    error = refuse(with_curve_file(MOTOR_MISSION, "kg.csv"), base_dir=tmp_path)
    assert error.source == str(csv)
    assert error.field == "time"
    assert error.line == 2
    assert "expected time, got mass" in error.problem


def test_motor_file_that_does_not_exist(tmp_path: Path) -> None:
    text = with_curve_file(MOTOR_MISSION, "nowhere.csv")
    error = refuse(text, base_dir=tmp_path)
    assert error.field == "stage[1].motor.file"
    assert "not found" in error.problem
    assert str(tmp_path / "nowhere.csv") in error.problem
    assert error.line == line_of(text, "nowhere.csv")


@pytest.mark.parametrize(
    ("rows", "column", "bad_row", "problem"),
    [
        ("0.0,0.45\n0.5,0.44\n0.5,0.46\n1.0,0.50\n", "mach", 3, "Mach does not increase"),
        ("0.0,0.45\n0.5,0.44\n0.4,0.46\n", "mach", 3, "Mach does not increase"),
        ("0.0,0.45\n0.5,-0.44\n1.0,0.50\n", "drag_coefficient", 2, "negative drag coefficient"),
    ],
    ids=["repeated-mach", "decreasing-mach", "negative-cd"],
)
def test_bad_drag_curve_names_file_and_line(
    tmp_path: Path, rows: str, column: str, bad_row: int, problem: str
) -> None:
    text = "# invented drag curve\nmach,drag_coefficient\n" + rows
    csv = write(tmp_path, "drag.csv", text)
    error = refuse(with_drag_file(MOTOR_MISSION, "drag.csv"), base_dir=tmp_path)
    assert isinstance(error, DataFileError)
    assert error.source == str(csv)
    assert error.field == column
    assert problem in error.problem
    # Two lines (comment, header) precede the data rows.
    assert error.line == 2 + bad_row
    assert f"{csv}, line {2 + bad_row}" in str(error)


def test_drag_curve_that_does_not_exist(tmp_path: Path) -> None:
    text = with_drag_file(MOTOR_MISSION, "no_such_curve")
    error = refuse(text, base_dir=tmp_path)
    assert error.field == "vehicle.drag_curve"
    assert "not found" in error.problem
    assert error.line == line_of(text, "no_such_curve")


# --- the command line -------------------------------------------------------------------------

runner = CliRunner()

CLI_CASES: list[tuple[str, str, str]] = [
    ("malformed-toml", TEXT["malformed-toml"], "malformed TOML"),
    ("unknown-field", TEXT["unknown-field-typo"], "stage[1].inert_mas"),
    ("wrong-dimension", TEXT["wrong-dimension"], "vehicle.diameter"),
    ("bare-number", TEXT["bare-number-payload"], "vehicle.payload"),
    ("propellant-fraction", TEXT["propellant-fraction-one"], "stage[1].propellant_mass_fraction"),
    ("unknown-motor", TEXT["unknown-shipped-motor"], "stage[1].motor.name"),
    ("legs-out-of-order", TEXT["legs-out-of-order"], "leg[2].stages"),
    ("huge-exponent", TEXT["huge-exponent"], "vehicle.payload"),
    ("missing-motor-file", with_curve_file(MOTOR_MISSION, "nowhere.csv"), "stage[1].motor.file"),
]


@pytest.mark.parametrize(
    ("text", "named"), [case[1:] for case in CLI_CASES], ids=[case[0] for case in CLI_CASES]
)
def test_cli_bad_mission_exits_2(tmp_path: Path, text: str, named: str) -> None:
    path = write(tmp_path, "bad.toml", text)
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)
    assert str(path) in result.stderr
    assert named in result.stderr
    assert "Traceback" not in result.output
    assert result.stdout == ""


@pytest.mark.parametrize(
    "text", [case[1] for case in CLI_CASES], ids=[case[0] for case in CLI_CASES]
)
def test_cli_debug_shows_the_traceback_and_exits_2(tmp_path: Path, text: str) -> None:
    path = write(tmp_path, "bad.toml", text)
    result = runner.invoke(app, ["--debug", "budget", str(path)])
    assert result.exit_code == 2
    assert "Traceback" in result.stderr and "MissionError" in result.stderr
    assert str(path) in result.stderr


def test_cli_bad_thrust_curve_names_the_curve_file(tmp_path: Path) -> None:
    csv = write(tmp_path, "curve.csv", CURVE_HEADER + "0,0\n0.5,-100\n1.1,0\n")
    path = write(tmp_path, "m.toml", with_curve_file(MOTOR_MISSION, "curve.csv"))
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert str(csv) in result.stderr
    assert "thrust must not be negative" in result.stderr
    assert "Traceback" not in result.output


def test_cli_missing_mission_file(tmp_path: Path) -> None:
    path = tmp_path / "absent.toml"
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert f"mission file not found: {path}" in result.stderr
    debug = runner.invoke(app, ["--debug", "budget", str(path)])
    assert debug.exit_code == 2 and "MissionFileNotFoundError" in debug.stderr


def test_cli_message_keeps_square_brackets(tmp_path: Path) -> None:
    path = write(tmp_path, "both.toml", TEXT["motor-and-engine"])
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2
    assert "[stage.motor] and [stage.engine]" in result.stderr


def test_cli_markup_in_user_text_does_not_crash(tmp_path: Path) -> None:
    path = write(tmp_path, "tag.toml", MOTOR_MISSION + '\n[margins]\n"[/red]" = 1\n')
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2
    assert "[/red]" in result.stderr


# --- good input -------------------------------------------------------------------------------


def test_every_example_mission_loads(missions_dir: Path) -> None:
    import tomllib

    paths = sorted(missions_dir.glob("*.toml"))
    assert len(paths) >= 3
    for path in paths:
        doc = tomllib.loads(path.read_text(encoding="utf-8"))
        mission = load_mission(path)
        assert isinstance(mission, Mission)
        assert mission.name == doc["mission"]["name"]
        assert mission.source == str(path)
        assert [s.name for s in mission.vehicle.stages] == [s["name"] for s in doc["stage"]]
        assert len(mission.legs) == len(doc["leg"])


def test_dictionary_and_text_give_the_same_mission(
    missions_dir: Path, hobby_doc: dict[str, Any], orbital_doc: dict[str, Any]
) -> None:
    for doc, name in ((hobby_doc, "hobby_single_stage"), (orbital_doc, "orbital_launcher")):
        from_text = load_mission(missions_dir / f"{name}.toml")
        from_dict = parse_mission(doc)
        assert from_dict.vehicle.payload_mass == from_text.vehicle.payload_mass
        for a, b in zip(from_dict.vehicle.stages, from_text.vehicle.stages, strict=True):
            assert (a.name, a.inert_mass, a.propellant_mass) == (
                b.name,
                b.inert_mass,
                b.propellant_mass,
            )


def test_hobby_payload_and_orbital_engine_in_si(
    hobby_doc: dict[str, Any], orbital_doc: dict[str, Any]
) -> None:
    hobby = parse_mission(hobby_doc)
    assert hobby.vehicle.payload_mass == pytest.approx(0.10, rel=1e-15)
    # 87 deg rail elevation; 1 deg = pi/180 rad (SI Brochure, 9th ed., 2019, Table 4).
    assert hobby.launch.elevation == pytest.approx(87 * math.pi / 180, rel=1e-15)
    orbital = parse_mission(orbital_doc)
    upper = orbital.vehicle.stages[1].propulsion
    assert isinstance(upper, Engine)
    assert upper.thrust_vacuum == 25e3
    assert upper.exit_area == pytest.approx(0.45, rel=1e-15)


def test_payload_in_pounds_is_converted_exactly() -> None:
    mission = parse_mission(edit(MOTOR_MISSION, '"0.10 kg"', '"5.3 lb"'))
    # 1959 agreement: 5.3 lb = 5.3 * 0.45359237 kg = 2.404039561 kg.
    assert mission.vehicle.payload_mass == pytest.approx(5.3 * POUND, rel=1e-15, abs=0.0)


def test_zero_payload_is_allowed() -> None:
    mission = parse_mission(edit(MOTOR_MISSION, '"0.10 kg"', '"0 kg"'))
    assert mission.vehicle.payload_mass == 0.0


def test_own_thrust_curve_with_mission_propellant_mass(tmp_path: Path) -> None:
    # The file states 0.05 kg; the mission's 0.08 kg must win. Two motors in the cluster.
    write(tmp_path, "own.csv", CURVE_HEADER + CURVE_ROWS)
    text = edit(
        MOTOR_MISSION,
        'name = "pd-H113"',
        'file = "own.csv"\npropellant_mass = "80 g"\ncase_mass = "30 g"\ncount = 2',
    )
    mission = parse_mission(text, base_dir=tmp_path)
    stage = mission.vehicle.stages[0]
    motor = stage.propulsion
    assert isinstance(motor, Motor)
    assert motor.total_impulse == pytest.approx(CURVE_IMPULSE, rel=1e-12)
    assert motor.propellant_mass == pytest.approx(0.08, rel=1e-15)
    assert stage.count == 2
    assert stage.propellant_mass == pytest.approx(2 * 0.08, rel=1e-15)
    # Stage inert mass: the structure plus the spent cases of both motors.
    assert stage.inert_mass == pytest.approx(1.15 + 2 * 0.03, rel=1e-15)


def test_own_thrust_curve_in_other_units(tmp_path: Path) -> None:
    # Times in ms and thrust in lbf: 1 lbf = 4.4482216152605 N (NIST SP 811, 2008, App. B).
    rows = "0,0\n100,10\n1000,10\n1100,0\n"
    write(tmp_path, "us.csv", "# propellant_mass = 1 oz\ntime [ms],thrust [lbf]\n" + rows)
    mission = parse_mission(with_curve_file(MOTOR_MISSION, "us.csv"), base_dir=tmp_path)
    motor = mission.vehicle.stages[0].propulsion
    assert isinstance(motor, Motor)
    # Same shape as CURVE_ROWS scaled: 1.0 s * 10 lbf area.
    assert motor.total_impulse == pytest.approx(10 * 4.4482216152605, rel=1e-12)
    # 1 oz = 1/16 lb (1959 agreement).
    assert motor.propellant_mass == pytest.approx(POUND / 16, rel=1e-15)


def test_relative_motor_file_resolves_against_the_mission_folder(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    mission_dir = tmp_path / "team"
    write(mission_dir, "curves/c.csv", CURVE_HEADER + CURVE_ROWS)
    # A decoy with twice the thrust at the same relative path from the working folder.
    write(tmp_path, "curves/c.csv", CURVE_HEADER + "0,0\n0.1,200\n1.0,200\n1.1,0\n")
    path = write(mission_dir, "m.toml", with_curve_file(MOTOR_MISSION, "curves/c.csv"))
    monkeypatch.chdir(tmp_path)
    motor = load_mission(path).vehicle.stages[0].propulsion
    assert isinstance(motor, Motor)
    assert motor.source == str(mission_dir / "curves" / "c.csv")
    assert motor.total_impulse == pytest.approx(CURVE_IMPULSE, rel=1e-12)


def test_relative_drag_file_resolves_against_the_mission_folder(tmp_path: Path) -> None:
    write(tmp_path / "team", "drag/d.csv", "mach,drag_coefficient\n0,0.5\n1,0.7\n")
    path = write(tmp_path / "team", "m.toml", with_drag_file(MOTOR_MISSION, "drag/d.csv"))
    drag = load_mission(path).vehicle.stages[0].drag_curve
    assert drag is not None
    assert float(drag(0.5)) == pytest.approx(0.6, rel=1e-15)  # linear between the two rows


def test_engine_stage_may_fly_two_legs() -> None:
    mission = parse_mission(ENGINE_MISSION)
    assert [leg.stages for leg in mission.legs] == [("core", "upper"), ("upper",)]


def test_missing_mission_file(tmp_path: Path) -> None:
    with pytest.raises(MissionFileNotFoundError) as info:
        load_mission(tmp_path / "absent.toml")
    assert isinstance(info.value, FileNotFoundError)
    assert str(tmp_path / "absent.toml") in str(info.value)


def test_mission_file_that_is_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "latin1.toml"
    path.write_bytes(MOTOR_MISSION.replace("Wren", "Wr\u00e9n").encode("latin-1"))
    with pytest.raises(MissionError) as info:
        load_mission(path)
    assert "UTF-8" in info.value.problem


# --- the error object -------------------------------------------------------------------------


def test_suggestion_ends_with_its_question_mark() -> None:
    message = str(refuse(TEXT["unknown-field-typo"]))
    assert "did you mean 'inert_mass'? Expected one of:" in message
    assert "?." not in message


def test_error_message_layout() -> None:
    error = MissionError("m.toml", "stage[1].inert_mass", "is missing.", "a mass.", 7)
    assert str(error) == "m.toml, line 7: field 'stage[1].inert_mass': is missing. Expected a mass."
    assert isinstance(error, ValueError)


@pytest.mark.parametrize(
    "make",
    [
        lambda: refuse(TEXT["unknown-field-typo"]),
        lambda: MissionError("m.toml", "", "whole file", "", None),
        lambda: DataFileError("c.csv", "mach", "Mach does not increase", "increasing Mach", 4),
        lambda: MissionFileNotFoundError("x.csv", "motor 'x'", "m.toml"),
    ],
    ids=["from-parse", "no-field", "data-file", "not-found"],
)
def test_errors_pickle(make: Callable[[], Exception]) -> None:
    error = make()
    copy = pickle.loads(pickle.dumps(error))
    assert type(copy) is type(error)
    assert str(copy) == str(error)
    assert copy.args == error.args


# --- inputs that once crashed the loader or gave unclear messages ---------------------------


@pytest.mark.parametrize(
    "text",
    [
        edit(
            ENGINE_MISSION,
            'inert_mass = "250 kg"',
            f'inert_mass = "250 kg"\nresidual_fraction = {10**400}',
        ),
        MOTOR_MISSION + f"\n[margins]\nrequired_margin = {10**400}\n",
    ],
    ids=["residual-fraction", "required-margin"],
)
def test_huge_integer_is_refused(text: str) -> None:
    refuse(text)


@pytest.mark.parametrize(
    "text",
    [
        with_drag_file(MOTOR_MISSION, "d" * 300),
        with_curve_file(MOTOR_MISSION, "c" * 300 + ".csv"),
    ],
    ids=["drag-curve", "motor-file"],
)
def test_overlong_file_name_is_refused(tmp_path: Path, text: str) -> None:
    refuse(text, base_dir=tmp_path)


@pytest.mark.parametrize("kind", ["thrust-curve", "drag-curve"])
def test_csv_that_is_not_utf8_is_refused(tmp_path: Path, kind: str) -> None:
    if kind == "thrust-curve":
        body = "# note = caf\u00e9\n" + CURVE_HEADER + CURVE_ROWS
        text = with_curve_file(MOTOR_MISSION, "latin1.csv")
    else:
        body = "# note = caf\u00e9\nmach,drag_coefficient\n0,0.5\n1,0.6\n"
        text = with_drag_file(MOTOR_MISSION, "latin1.csv")
    (tmp_path / "latin1.csv").write_bytes(body.encode("latin-1"))
    refuse(text, base_dir=tmp_path)


def test_tiny_propellant_fraction_is_refused() -> None:
    text = edit(MOTOR_MISSION, 'inert_mass = "1.15 kg"', "propellant_mass_fraction = 5e-324")
    assert isinstance(outcome(text), MissionError)


@pytest.mark.filterwarnings("ignore:overflow encountered:RuntimeWarning")
def test_thrust_curve_with_infinite_impulse_is_refused(tmp_path: Path) -> None:
    write(tmp_path, "big.csv", CURVE_HEADER + "0,0\n0.5,1e308\n1,1e308\n")
    result = outcome(with_curve_file(MOTOR_MISSION, "big.csv"), base_dir=tmp_path)
    assert isinstance(result, DataFileError)


def test_thrust_curve_error_gives_the_file_line(tmp_path: Path) -> None:
    rows = "0,0\n0.5,100\n0.4,100\n1.1,0\n"
    write(tmp_path, "curve.csv", CURVE_HEADER + rows)
    error = refuse(with_curve_file(MOTOR_MISSION, "curve.csv"), base_dir=tmp_path)
    assert error.line == line_of(CURVE_HEADER + rows, "0.4,100")


@pytest.mark.parametrize(
    ("text", "field"),
    [
        (edit(MOTOR_MISSION, '"0.10 kg"', '"-1 kg"'), "vehicle.payload"),
        (MOTOR_MISSION + '\n[launch]\nlatitude = "100 deg"\n', "launch.latitude"),
        (MOTOR_MISSION + '\n[launch]\nsite_altitude = "-7000 km"\n', "launch.site_altitude"),
        (
            edit(MOTOR_MISSION, 'name = "pd-H113"', 'name = "pd-H113"\ncase_mass = "-1 g"'),
            "stage[1].motor.case_mass",
        ),
    ],
    ids=["payload", "latitude", "site-altitude", "case-mass"],
)
def test_out_of_range_message_states_the_range(text: str, field: str) -> None:
    error = refuse(text)
    assert error.field == field
    assert re.search(r"\d|zero|negative|positive", error.expected), error.expected


@pytest.mark.parametrize(
    "text",
    [
        edit(MOTOR_MISSION, '["sustainer"]', "[]"),
        "stage = []\n" + MOTOR_MISSION.split("[[stage]]")[0],
    ],
    ids=["leg-stages", "stage"],
)
def test_empty_list_is_called_empty(text: str) -> None:
    assert "empty" in refuse(text).problem


@pytest.mark.parametrize("value", ['"3 kg"', "[1]"], ids=["mass", "list"])
def test_required_margin_message_names_both_forms(value: str) -> None:
    error = refuse(MOTOR_MISSION + f"\n[margins]\nrequired_margin = {value}\n")
    assert error.field == "margins.required_margin"
    assert "m/s" in error.expected and "%" in error.expected


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [("[vehicle]", "[vehicel]", "vehicel"), ("[stage.motor]", "[stage.motr]", "stage[1].motr")],
    ids=["top-level", "sub-table"],
)
def test_misspelt_table_header_gives_its_line(old: str, new: str, field: str) -> None:
    text = edit(MOTOR_MISSION, old, new)
    error = refuse(text)
    assert error.field == field
    assert error.line == line_of(text, new)


def test_csv_with_byte_order_mark_loads(tmp_path: Path) -> None:
    (tmp_path / "bom.csv").write_bytes(b"\xef\xbb\xbf" + (CURVE_HEADER + CURVE_ROWS).encode())
    result = outcome(with_curve_file(MOTOR_MISSION, "bom.csv"), base_dir=tmp_path)
    assert isinstance(result, Mission)


def test_duplicate_column_names_are_reported_as_such(tmp_path: Path) -> None:
    write(tmp_path, "dup.csv", "# propellant_mass = 0.05 kg\nt [s],t [s]\n0,0\n1,1\n")
    error = refuse(with_curve_file(MOTOR_MISSION, "dup.csv"), base_dir=tmp_path)
    assert "1 columns" not in str(error)


def test_motor_stage_refuses_a_residual() -> None:
    """One definition of a residual: propellant an engine stage never burns. A motor burns
    to depletion, so a motor stage refuses one, naming the field and what to do instead."""
    text = edit(
        MOTOR_MISSION,
        'inert_mass = "1.15 kg"',
        'inert_mass = "1.15 kg"\nresidual_fraction = "10 %"',
    )
    error = refuse(text)
    assert error.field == "stage[1].residual_fraction"
    assert "burns all its propellant" in error.problem
    assert "engine stages only" in error.expected
    assert error.line == line_of(text, "residual_fraction")


def test_mission_wide_residual_leaves_motor_stages_alone() -> None:
    mission = outcome(MOTOR_MISSION + '\n[margins]\nresidual_fraction = "10 %"\n')
    assert isinstance(mission, Mission)
    assert mission.vehicle.stages[0].residual_fraction == 0.0


def test_the_readme_commented_example_loads() -> None:
    # the manual's commented mission file is a file a user may copy: it must load as shown
    page = Path(__file__).resolve().parents[1] / "docs" / "reference" / "mission-file.md"
    readme = page.read_text(encoding="utf-8")
    start = readme.index("```toml", readme.index("## A commented example")) + len("```toml")
    text = readme[start : readme.index("```", start)]
    mission = parse_mission(
        tomllib.loads(text),
        source="docs/reference/mission-file.md",
        base_dir=Path(__file__).resolve().parents[1] / "missions",
    )
    assert [stage.name for stage in mission.vehicle.stages] == ["booster", "sustainer"]
    assert mission.margins.flight.judge == "target"
