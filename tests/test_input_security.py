"""Input a mission file names, and text it carries to the terminal or a spreadsheet.

A mission file from someone else is untrusted input: the files it names must stay in its own
folder and be plain files, a file that is not a data table must not be shown back in an error
message, its text must not reach the terminal as control sequences, and its text must not
become a live formula in an exported spreadsheet. All vehicles and curves here are invented.
"""

from __future__ import annotations

import json
import os
import re
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from propulsion import catalog
from propulsion.cli import app
from propulsion.errors import (
    DataFileError,
    MissionError,
    MissionFileNotFoundError,
    PropulsionError,
)
from propulsion.mission import load_mission, parse_mission
from propulsion.thrust_curve import impulse_class
from propulsion.vehicle import Motor

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
HOBBY = (MISSIONS / "hobby_single_stage.toml").read_text(encoding="utf-8")
runner = CliRunner()

# An invented thrust curve: a triangle of 2 s reaching 100 N, 100 N s.
CURVE = "# propellant_mass = 0.05 kg\ntime [s],thrust [N]\n0.0,0\n1.0,100\n2.0,0\n"
# An invented drag curve.
DRAG = "mach,drag_coefficient\n0.0,0.5\n2.0,0.6\n"
# Something that looks like a credential; not a real one.
TOKEN = "sk-live-0123456789abcdefghijklmnopqrstuvwxyz"
# The longest excerpt of a value an error message may show [characters].
EXCERPT = 20
# ESC [ 31 m (red), ESC ] 0 ; title BEL (set the window title): ECMA-48 CSI and OSC.
HOSTILE_NAME = "\x1b[31mRED\x1b]0;title\x07"
CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def toml_string(text: str) -> str:
    """A TOML basic string (JSON's escapes \\uXXXX, \\", \\\\ are TOML's too)."""
    return json.dumps(text)


def with_motor_file(text: str, file: str) -> str:
    out, count = re.subn(
        r'^name = "pd-H113".*$', lambda _: f"file = {toml_string(file)}", text, flags=re.M
    )
    assert count == 1
    return out


def with_drag_curve(text: str, curve: str) -> str:
    out, count = re.subn(
        r"^drag_curve = .*$", lambda _: f"drag_curve = {toml_string(curve)}", text, flags=re.M
    )
    assert count == 1
    return out


def with_name(text: str, name: str) -> str:
    out, count = re.subn(
        r'^name = "Thistle"$', lambda _: f"name = {toml_string(name)}", text, flags=re.M
    )
    assert count == 1
    return out


def mission_folder(tmp_path: Path, text: str, name: str = "mission.toml") -> Path:
    """A mission file in its own folder ``tmp_path/team``; returns the file."""
    folder = tmp_path / "team"
    folder.mkdir(exist_ok=True)
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def refusal(path: Path) -> MissionError:
    """The located error loading the mission raises (a data file's, or the mission's own)."""
    with pytest.raises(PropulsionError) as info:
        load_mission(path)
    assert isinstance(info.value, MissionError), repr(info.value)
    return info.value


def shows_long_part_of(secret: str, message: str) -> bool:
    """Whether the message holds more than EXCERPT consecutive characters of the secret."""
    width = EXCERPT + 1
    return any(secret[i : i + width] in message for i in range(len(secret) - width + 1))


def line_of(text: str, fragment: str) -> int:
    return next(n for n, line in enumerate(text.splitlines(), 1) if fragment in line)


# --- 1. files named by a mission stay in its folder, and are plain files --------------------


def test_motor_file_by_absolute_path_outside_the_folder_is_refused(tmp_path: Path) -> None:
    # A perfectly good curve, but outside the mission's folder: the rule is where, not what.
    outside = tmp_path / "elsewhere" / "curve.csv"
    outside.parent.mkdir()
    outside.write_text(CURVE, encoding="utf-8")
    text = with_motor_file(HOBBY, str(outside))
    path = mission_folder(tmp_path, text)
    error = refusal(path)
    assert isinstance(error, MissionError)
    assert error.source == str(path)
    assert error.field == "stage[1].motor.file"
    assert error.line == line_of(text, "file = ")
    assert "outside" in error.problem and "folder" in error.problem
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output and "internal error" not in result.output


@pytest.mark.parametrize("target", ["/etc/passwd", "/proc/self/environ"])
def test_system_files_are_refused_without_being_read(tmp_path: Path, target: str) -> None:
    # Before: /etc/passwd was read as a thrust curve (the message quoted its first line's
    # column count), /proc/self/environ as a drag curve.
    if not Path(target).exists():
        pytest.skip(f"{target} does not exist on this system")
    path = mission_folder(tmp_path, with_drag_curve(HOBBY, target))
    error = refusal(path)
    assert error.field == "vehicle.drag_curve"
    assert "outside" in error.problem


def test_motor_file_up_the_tree_is_refused(tmp_path: Path) -> None:
    (tmp_path / "curve.csv").write_text(CURVE, encoding="utf-8")
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "../curve.csv"))
    error = refusal(path)
    assert error.field == "stage[1].motor.file"
    assert "outside" in error.problem


def test_symbolic_link_leading_out_of_the_folder_is_refused(tmp_path: Path) -> None:
    # A shared repository or archive can carry a link to any file of the reader's machine.
    outside = tmp_path / "curve.csv"
    outside.write_text(CURVE, encoding="utf-8")
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "linked.csv"))
    (path.parent / "linked.csv").symlink_to(outside)
    error = refusal(path)
    assert error.field == "stage[1].motor.file"
    assert "outside" in error.problem


def test_files_in_the_folder_and_below_it_and_links_inside_it_are_read(tmp_path: Path) -> None:
    text = with_drag_curve(with_motor_file(HOBBY, "curves/own.csv"), "linked_drag.csv")
    path = mission_folder(tmp_path, text)
    (path.parent / "curves").mkdir()
    (path.parent / "curves" / "own.csv").write_text(CURVE, encoding="utf-8")
    (path.parent / "drag.csv").write_text(DRAG, encoding="utf-8")
    (path.parent / "linked_drag.csv").symlink_to(path.parent / "drag.csv")
    mission = load_mission(path)
    motor = mission.vehicle.stages[0].propulsion
    assert isinstance(motor, Motor)
    assert motor.total_impulse == pytest.approx(100.0, rel=1e-12)  # the triangle's area
    assert mission.vehicle.stages[0].drag_curve is not None


def test_a_file_name_with_control_characters_is_refused(tmp_path: Path) -> None:
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "curve\x00.csv"))
    error = refusal(path)
    assert error.field == "stage[1].motor.file"
    assert "control characters" in error.problem


def test_a_folder_named_as_a_data_file_is_refused(tmp_path: Path) -> None:
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "curves"))
    (path.parent / "curves").mkdir()
    error = refusal(path)
    assert error.field == "stage[1].motor.file"
    assert "not a regular file" in error.problem


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are a POSIX feature")
def test_a_named_pipe_is_refused_without_waiting_for_a_writer(tmp_path: Path) -> None:
    # Opening a FIFO for reading blocks until someone writes; the tool must not hang.
    path = mission_folder(tmp_path, with_drag_curve(HOBBY, "pipe.csv"))
    os.mkfifo(path.parent / "pipe.csv")
    error = refusal(path)
    assert error.field == "vehicle.drag_curve"
    assert "not a regular file" in error.problem


def test_a_pipe_reached_directly_is_refused_by_the_reader(tmp_path: Path) -> None:
    if not hasattr(os, "mkfifo"):
        pytest.skip("named pipes are a POSIX feature")
    pipe = tmp_path / "pipe.csv"
    os.mkfifo(pipe)
    with pytest.raises(DataFileError, match="not a regular file"):
        catalog.read_table(pipe)


def test_shipped_names_cannot_walk_out_of_the_data_folder(tmp_path: Path) -> None:
    # data/drag/../motors/pd-C7.csv exists; a drag curve name is a shipped name or a path
    # relative to the mission, never a path inside the package's data folder.
    path = mission_folder(tmp_path, with_drag_curve(HOBBY, "../motors/pd-C7"))
    error = refusal(path)
    assert error.field == "vehicle.drag_curve"
    with pytest.raises(MissionFileNotFoundError):
        catalog.load_motor("../drag/slender_finned")


def test_shipped_motors_and_drag_curves_still_load() -> None:
    # data/README.md: eight motors, classes C to K, and three drag curves.
    names = catalog.motor_names()
    assert len(names) == 8
    for name in names:
        motor = catalog.read_thrust_curve(catalog.data_dir() / "motors" / f"{name}.csv")
        assert motor.impulse_class == name[3]  # pd-<class letter><thrust>
    for name in catalog.drag_curve_names():
        assert catalog.load_drag_curve(name).name == name
    mission = parse_mission(HOBBY, source="hobby.toml", base_dir=MISSIONS)
    assert mission.vehicle.stages[0].drag_curve is not None


def test_pick_from_a_folder_of_curves_outside_the_mission_folder(tmp_path: Path) -> None:
    # The motor folder is given on the command line by the user: it is trusted, and the
    # candidates built from it name its files.
    from propulsion.selection import pick

    (tmp_path / "lib").mkdir()
    (tmp_path / "lib" / "own.csv").write_text(CURVE, encoding="utf-8")
    path = mission_folder(tmp_path, HOBBY)
    result = pick(load_mission(path), motors=tmp_path / "lib", max_cluster=1)
    assert result.rows or result.pruned_rows
    # the trust ends with the pick: a mission of its own may not name that folder's files
    path.write_text(with_motor_file(HOBBY, str(tmp_path / "lib" / "own.csv")), encoding="utf-8")
    assert "outside" in refusal(path).problem


# --- 2. error messages show at most a short excerpt of a file's content ----------------------


@pytest.mark.parametrize(
    "content",
    [
        # a stray .env-like file named as a thrust curve: its first line becomes the header
        f"API_TOKEN={TOKEN}\n",
        f"time [s],thrust [N]\n0.0,{TOKEN}\n",
        f"time [s],thrust [{TOKEN}]\n0.0,0\n",
        f"time [s],{TOKEN}\n0.0,0\n",
        f"# propellant_mass = {TOKEN}\ntime [s],thrust [N]\n0.0,0\n1.0,10\n2.0,0\n",
        f"time [s],thrust [N],x\n0.0,0,{TOKEN}\n",
        f"# propellant_mass = 1 {TOKEN}\ntime [s],thrust [N]\n0.0,0\n1.0,10\n2.0,0\n",
        f"# propellant_family = {TOKEN}\n{CURVE}",
        f"time [s],thrust [N]\n{TOKEN},0\n",
        f"[{TOKEN}],thrust [N]\n0.0,0\n",
        f"{TOKEN},{TOKEN}\n0.0,0\n",
    ],
    ids=[
        "env-file",
        "value",
        "unit",
        "column",
        "metadata",
        "extra-column",
        "metadata-unit",
        "family",
        "time-value",
        "header-cell",
        "twice",
    ],
)
def test_error_messages_do_not_echo_file_content(tmp_path: Path, content: str) -> None:
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "stray.csv"))
    (path.parent / "stray.csv").write_text(content, encoding="utf-8")
    error = refusal(path)
    assert not shows_long_part_of(TOKEN, str(error)), str(error)
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2
    assert not shows_long_part_of(TOKEN, result.output), result.output


def test_an_excerpt_is_still_shown_for_a_bad_value(tmp_path: Path) -> None:
    # The message helps: it names the line and starts the offending value, with an ellipsis.
    csv = tmp_path / "curve.csv"
    csv.write_text(f"time [s],thrust [N]\n0.0,{TOKEN}\n", encoding="utf-8")
    with pytest.raises(DataFileError) as info:
        catalog.read_thrust_curve(csv, propellant_mass=0.05)
    assert info.value.line == 2
    assert TOKEN[:10] in str(info.value) and "…" in str(info.value)


# --- 3. an unreadable data file is a located refusal -----------------------------------------


def test_unreadable_curve_is_a_located_refusal(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Running as root ignores permission bits, so the refusal of open() is simulated for
    # this one file; every other open() goes through.
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "locked.csv"))
    locked = path.parent / "locked.csv"
    locked.write_text(CURVE, encoding="utf-8")
    real_open = os.open

    def refusing_open(file: object, flags: int, *args: object, **kwargs: object) -> int:
        if Path(os.fsdecode(file)).resolve() == locked.resolve():  # type: ignore[arg-type]
            raise PermissionError(13, "Permission denied", str(file))
        return real_open(file, flags, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(os, "open", refusing_open)
    error = refusal(path)
    assert isinstance(error, DataFileError)
    assert "locked.csv" in error.source
    assert "cannot be read" in error.problem
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert "internal error" not in result.output


@pytest.mark.skipif(
    sys.platform == "win32" or os.geteuid() == 0,
    reason="permission bits do not stop the superuser (or are not POSIX on Windows)",
)
def test_unreadable_curve_by_permission_bits(tmp_path: Path) -> None:
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "locked.csv"))
    locked = path.parent / "locked.csv"
    locked.write_text(CURVE, encoding="utf-8")
    locked.chmod(0)
    try:
        result = runner.invoke(app, ["budget", str(path)])
    finally:
        locked.chmod(0o600)
    assert result.exit_code == 2, result.output
    assert "cannot be read" in result.output


# --- 4. thrust-curve columns carry their units -----------------------------------------------


@pytest.mark.parametrize("header", ["time,thrust", "time [s],thrust", "time,thrust [N]"])
def test_thrust_curve_header_needs_units(tmp_path: Path, header: str) -> None:
    # data/README.md: a column without a unit is dimensionless, so 'time' is not seconds.
    csv = tmp_path / "curve.csv"
    csv.write_text(f"# propellant_mass = 0.05 kg\n{header}\n0,0\n1,100\n2,0\n", encoding="utf-8")
    with pytest.raises(DataFileError) as info:
        catalog.read_thrust_curve(csv)
    assert info.value.line == 2
    assert "unit" in info.value.problem
    assert "time [s],thrust [N]" in info.value.expected


def test_thrust_curve_in_other_units_is_converted(tmp_path: Path) -> None:
    # 1 lbf = 4.4482216152605 N exactly; 1 ms = 0.001 s.
    csv = tmp_path / "curve.csv"
    csv.write_text("time [ms],thrust [lbf]\n0,0\n1000,10\n2000,0\n", encoding="utf-8")
    motor = catalog.read_thrust_curve(csv, propellant_mass=0.05)
    assert motor.total_impulse == pytest.approx(10 * 4.4482216152605, rel=1e-12)


# --- 5. a motor beyond the Z class -----------------------------------------------------------


def test_impulse_beyond_z_is_shown_as_beyond_z() -> None:
    # Z tops at 2.5 N s * 2^25 (each letter doubles, NFPA 1122/1127 continued past O).
    assert impulse_class(2.5 * 2.0**25) == "Z"
    assert impulse_class(2.5 * 2.0**25 * 1.001) == ">Z"
    assert impulse_class(1e14) == ">Z"


def test_budget_of_a_motor_beyond_z_does_not_crash(tmp_path: Path) -> None:
    # 1e8 N for 1 s rising and 1 s falling: 1e8 N s, beyond Z (83 886 080 N s).
    path = mission_folder(tmp_path, with_motor_file(HOBBY, "huge.csv"))
    (path.parent / "huge.csv").write_text(
        "# propellant_mass = 50000 kg\ntime [s],thrust [N]\n0,0\n1,100000000\n2,0\n",
        encoding="utf-8",
    )
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code in (0, 1), result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    assert ">Z" in result.output


# --- 6. no control sequences from user text reach the terminal -------------------------------


def test_printable_removes_control_characters() -> None:
    from propulsion.report.safe_text import printable

    assert printable(HOSTILE_NAME) == "[31mRED]0;title"
    assert printable("a\x9b31mb\x00c\x7fd\u202eefg\rh") == "a31mbcdefgh"
    assert printable("two\nlines\tand a tab") == "two\nlines\tand a tab"
    assert printable("plain: Δv 12 m/s, ≥ 5 %") == "plain: Δv 12 m/s, ≥ 5 %"


@pytest.mark.parametrize(
    "command",
    [
        ["budget"],
        ["check"],
        ["fly"],
        ["compare", "--no-margin"],
    ],
    ids=["budget", "check", "fly", "compare"],
)
def test_hostile_mission_text_reaches_the_terminal_without_escapes(
    tmp_path: Path, command: list[str]
) -> None:
    text = with_name(HOBBY, HOSTILE_NAME)
    text = text.replace('name = "sustainer"', f"name = {toml_string('sus' + HOSTILE_NAME)}")
    text = text.replace('stages = ["sustainer"]', f"stages = [{toml_string('sus' + HOSTILE_NAME)}]")
    # CSI as the one-byte C1 code (ECMA-48 8.3.16): "erase the display"
    text = re.sub(
        r"^description = .*$", lambda _: 'description = "\\u009b2Jwiped"', text, flags=re.M
    )
    path = mission_folder(tmp_path, text)
    result = runner.invoke(app, [*command, str(path)])
    assert result.exit_code in (0, 1), result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    assert "RED" in result.output
    assert not CONTROL.search(result.output), repr(result.output[:400])


def test_hostile_text_in_an_error_message_is_cleaned(tmp_path: Path) -> None:
    text = HOBBY.replace('name = "pd-H113"', f"name = {toml_string(HOSTILE_NAME)}")
    path = mission_folder(tmp_path, text, name="\x1b]0;owned\x07.toml")
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 2, result.output
    assert "RED" in result.output and "owned" in result.output
    assert not CONTROL.search(result.output), repr(result.output)


# --- 7. exported spreadsheets hold no live formulas ------------------------------------------

FORMULA = '=HYPERLINK("http://example.invalid","y")'


def export(tmp_path: Path, name: str, suffix: str) -> Path:
    path = mission_folder(tmp_path, with_name(HOBBY, name))
    out = tmp_path / f"out{suffix}"
    result = runner.invoke(app, ["compare", "--no-margin", str(path), "--export", str(out)])
    assert result.exit_code in (0, 1), result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    return out


def test_xlsx_export_writes_a_formula_as_text(tmp_path: Path) -> None:
    openpyxl = pytest.importorskip("openpyxl")
    out = export(tmp_path, FORMULA, ".xlsx")
    sheet = openpyxl.load_workbook(out).active
    header = [cell.value for cell in sheet[1]]
    row = {h: cell for h, cell in zip(header, sheet[2], strict=True)}
    cell = row["name"]
    assert cell.data_type == "s"
    assert cell.value == "'" + FORMULA
    # numbers stay numbers
    assert row["liftoff_mass [kg]"].data_type == "n"
    assert isinstance(row["liftoff_mass [kg]"].value, float)


def test_xlsx_export_of_control_characters_does_not_crash(tmp_path: Path) -> None:
    # openpyxl refuses C0 characters in a cell (before: an internal error, exit 3).
    openpyxl = pytest.importorskip("openpyxl")
    out = export(tmp_path, HOSTILE_NAME, ".xlsx")
    sheet = openpyxl.load_workbook(out).active
    header = [cell.value for cell in sheet[1]]
    assert sheet.cell(2, header.index("name") + 1).value == "[31mRED]0;title"


def test_csv_export_neutralises_a_formula(tmp_path: Path) -> None:
    import csv

    out = export(tmp_path, FORMULA, ".csv")
    rows = list(csv.DictReader(out.read_text(encoding="utf-8").splitlines()))
    assert rows[0]["name"] == "'" + FORMULA
    assert float(rows[0]["liftoff_mass [kg]"]) > 0  # still a plain number


def test_markdown_export_neutralises_a_formula(tmp_path: Path) -> None:
    out = export(tmp_path, FORMULA, ".md")
    assert "| '=HYPERLINK(" in out.read_text(encoding="utf-8")


@pytest.mark.parametrize("lead", ["=", "+", "-", "@", "\t"])
def test_every_formula_lead_is_neutralised_and_numbers_are_kept(tmp_path: Path, lead: str) -> None:
    # OWASP, "CSV Injection": cells starting with = + - @ tab or carriage return.
    import pandas as pd

    from propulsion.report.export_tables import export_table

    frame = pd.DataFrame({"name": [f"{lead}1+1", "plain"], "apogee_m": [-12.5, 3.0]})
    out = export_table(frame, tmp_path / "t.csv")
    back = pd.read_csv(out, keep_default_na=False)
    assert back["name"][0] == f"'{lead}1+1"
    assert back["name"][1] == "plain"
    assert back["apogee [m]"].tolist() == [-12.5, 3.0]


@pytest.mark.parametrize("hidden", ["\r", "\x00", "\x1b", "\u202e"])
def test_a_formula_behind_a_control_character_is_neutralised(hidden: str) -> None:
    # The control characters go first (a spreadsheet may skip them), then the lead is checked.
    from propulsion.report.safe_text import spreadsheet_text

    assert spreadsheet_text(f"{hidden}=1+1") == "'=1+1"
    assert spreadsheet_text(f"{hidden}1+1") == "1+1"
