"""A team's own motor files beside the shipped library in `pick` and `data`.

What is checked: `pick --motors` takes shipped names, curve files and folders in any mix,
with the shipped library added unless shipped names are given or `--no-library` is; a
file that is not a motor is refused with its file and line; names that clash are
refused unless the two motors are the same; `data --motors` lists the team's motors in
the shipped motor table and JSON, marked with their files; a pick that reaches nothing
lists the closest stacks with their shortfall, checked by flying them again with
:func:`propulsion.ascent.fly`.

Every curve here is invented for the tests (``own-`` names), in the thrust-curve format of
data/README.md ("motors/*.csv").
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import pytest
import typer
from typer.testing import CliRunner

from propulsion import catalog
from propulsion.ascent import fly
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU
from propulsion.errors import DataFileError
from propulsion.mission import load_mission
from propulsion.selection import PickError, cluster_fits, motor_options, pick
from propulsion.units import format_number

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
HOBBY = MISSIONS / "hobby_single_stage.toml"
HOBBY_SECTION = 0.054  # [m] the hobby mission's vehicle diameter ("54 mm")

runner = CliRunner()


def _app() -> typer.Typer:
    """A command group holding `pick` and `data` (the main app registers them apart)."""
    from propulsion.cli.data import data_command
    from propulsion.cli.pick import pick_command

    app = typer.Typer(add_completion=False, pretty_exceptions_enable=False)

    @app.callback()
    def _root() -> None:
        """Test group."""

    app.command("pick")(pick_command)
    app.command("data")(data_command)
    return app


def _curve(
    path: Path,
    name: str,
    peak: float,
    *,
    diameter: str = "38 mm",
    propellant: str = "0.13 kg",
    loaded: str = "0.21 kg",
    rows: str | None = None,
) -> Path:
    """Write an invented thrust curve: a quick rise to ``peak`` newtons, a slow fall of
    5 N over 1.35 s, and a 0.05 s tail-off (about 1.4 x peak N·s)."""
    body = rows or f"0.0,0\n0.05,{peak:g}\n1.4,{peak - 5:g}\n1.45,0\n"
    path.write_text(
        "# propulsion thrust curve\n"
        f"# name = {name}\n"
        f"# diameter = {diameter}\n"
        f"# propellant_mass = {propellant}\n"
        f"# loaded_mass = {loaded}\n"
        "# propellant_family = ammonium_perchlorate_composite\n"
        "# note = Invented test motor; not a real product.\n"
        "time [s],thrust [N]\n" + body,
        encoding="utf-8",
    )
    return path


def _shipped_fitting(section: float) -> list[str]:
    """Shipped motors that fit a section alone (their stated diameters, data/motors/)."""
    return [
        name
        for name in catalog.motor_names()
        if cluster_fits(catalog.load_motor(name).diameter, 1, section)
    ]


def _pick_json(*args: str) -> tuple[int, dict[str, object], str]:
    result = runner.invoke(_app(), ["pick", str(HOBBY), *args, "--json"])
    data = json.loads(result.stdout) if result.stdout.strip() else {}
    return result.exit_code, data, result.stderr


# --- pick: files, folders and names ---------------------------------------------------------


def test_a_user_file_alone(tmp_path: Path) -> None:
    own = _curve(tmp_path / "own.csv", "own-H200", 200)
    code, data, err = _pick_json("--motors", str(own), "--no-library")
    assert code == 0, err
    assert data["enumerated"] == 1
    (row,) = data["candidates"]
    assert row["motors"] == "sustainer: own-H200"
    assert row["stage_motors"][0]["file"] == str(own.resolve())
    assert row["stage_motors"][0]["origin"] == "user"


def test_a_user_folder_comes_with_the_library_unless_refused(tmp_path: Path) -> None:
    folder = tmp_path / "ours"
    folder.mkdir()
    _curve(folder / "a.csv", "own-H200", 200)
    _curve(folder / "b.csv", "own-H160", 160)
    (folder / "notes.txt").write_text("not a curve")  # only *.csv files are curves
    shipped = _shipped_fitting(HOBBY_SECTION)
    assert "pd-K567" not in shipped and len(shipped) >= 2  # the 75 mm motor does not fit

    code, data, err = _pick_json("--motors", str(folder))
    assert code == 0, err
    assert data["enumerated"] == len(shipped) + 2
    every = [*data["candidates"], *data["pruned_candidates"]]
    assert {row["motors"].removeprefix("sustainer: ") for row in every} == {
        *shipped,
        "own-H200",
        "own-H160",
    }

    code, data, err = _pick_json("--motors", str(folder), "--no-library")
    assert code in (0, 1), err
    assert data["enumerated"] == 2


def test_names_files_and_folders_mix(tmp_path: Path) -> None:
    folder = tmp_path / "ours"
    folder.mkdir()
    _curve(folder / "a.csv", "own-H200", 200)
    own = _curve(tmp_path / "single.csv", "own-H160", 160)
    # shipped names given: only those shipped motors, no whole library
    code, data, err = _pick_json(
        "--motors", f"pd-H113,{own}", "--motors", str(folder), "--apogee", "300 m"
    )
    assert code == 0, err
    assert data["enumerated"] == 3
    every = [*data["candidates"], *data["pruned_candidates"]]
    names = {row["motors"] for row in every}
    assert names == {f"sustainer: {n}" for n in ("pd-H113", "own-H160", "own-H200")}

    options = motor_options(["pd-H113", own, folder])
    assert [o.name for o in options] == ["pd-H113", "own-H160", "own-H200"]
    assert [o.file for o in options] == [None, own.resolve(), (folder / "a.csv").resolve()]
    # the Python default keeps a lone folder to itself; library=True adds the shipped ones
    assert len(motor_options(folder)) == 1
    assert len(motor_options(folder, library=True)) == 1 + len(catalog.motor_names())


def test_the_users_motor_is_chosen_when_it_is_the_best(tmp_path: Path) -> None:
    # own-H200: about 276 N·s, less than pd-H113's 288 N·s (data/README.md), and a lighter
    # case, so by least total impulse it should win if it reaches the 1 km target with the
    # mission's 5 % flight margin.
    own = _curve(tmp_path / "team.csv", "own-H200", 200)
    motor = catalog.read_thrust_curve(own)
    h113 = catalog.load_motor("pd-H113")
    assert motor.total_impulse < h113.total_impulse

    result = pick(load_mission(HOBBY), [own], library=True)
    best = result.best
    assert best is not None
    assert best.choice == (("own-H200", 1, str(own.resolve())),)
    assert best.total_impulse == pytest.approx(motor.total_impulse, rel=1e-12)
    # the shipped motor was in the running and also meets: the team's motor beat it
    shipped = next(row for row in result.rows if row.motors == "sustainer: pd-H113")
    assert shipped.meets_target and shipped.rank is not None and shipped.rank > best.rank
    # flown again from its own candidate mission, it gives the same apogee
    again = fly(best.mission, margin=False)
    assert again.apogee == pytest.approx(best.apogee, rel=1e-9)
    assert again.verdict.meets_targets is True

    shown = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(own)])
    assert shown.exit_code == 0, shown.output
    text = " ".join(shown.stdout.split())
    assert "Best by least total impulse: sustainer: own-H200" in text
    assert "own-H200 = " in text  # the file of the team's motor is named under the table


# --- bad files ------------------------------------------------------------------------------


def test_a_bad_curve_is_refused_with_its_file_and_line(tmp_path: Path) -> None:
    # line 8 is the header; the fourth data row (line 12) goes back in time
    bad = _curve(tmp_path / "bad.csv", "own-bad", 100, rows="0,0\n0.1,90\n1.0,80\n0.9,0\n")
    with pytest.raises(DataFileError) as caught:
        motor_options([bad])
    assert caught.value.line == 12 and caught.value.source == str(bad)

    result = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(bad)])
    assert result.exit_code == 2
    assert f"{bad}, line 12" in " ".join(result.stderr.split())
    assert "Traceback" not in result.output

    # in a folder, the bad file is named, not skipped
    folder = tmp_path / "ours"
    folder.mkdir()
    _curve(folder / "good.csv", "own-H200", 200)
    (folder / "zz.csv").write_text("time [s],thrust [N]\n0,0\n0.5,abc\n1,0\n", encoding="utf-8")
    result = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(folder)])
    assert result.exit_code == 2
    message = " ".join(result.stderr.split())
    assert f"{folder / 'zz.csv'}, line 3" in message and "'abc' is not a number" in message

    # a file that is no table at all, and one that does not exist
    toml = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(HOBBY)])
    assert toml.exit_code == 2 and str(HOBBY) in " ".join(toml.stderr.split())
    missing = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(tmp_path / "no.csv")])
    assert missing.exit_code == 2 and "not found" in missing.stderr


def test_name_clashes_are_refused_unless_the_motors_are_the_same(tmp_path: Path) -> None:
    # a team file that calls itself pd-H113 but is another curve
    clash = _curve(tmp_path / "mine.csv", "pd-H113", 200)
    result = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", str(clash)])
    assert result.exit_code == 2
    message = " ".join(result.stderr.split())
    assert "pd-H113" in message and str(clash) in message and "shipped motor" in message
    with pytest.raises(PickError, match="two different motors"):
        motor_options([clash, "pd-H113"])
    # two team files of one name
    other = _curve(tmp_path / "other.csv", "own-H200", 210)
    first = _curve(tmp_path / "first.csv", "own-H200", 200)
    with pytest.raises(PickError, match="own-H200"):
        motor_options([first, other])
    # an unchanged copy of a shipped motor is the same motor: kept once
    copy = tmp_path / "copy.csv"
    shutil.copy(catalog.data_dir() / "motors" / "pd-H113.csv", copy)
    options = motor_options([copy], library=True)
    assert [o.name for o in options].count("pd-H113") == 1
    assert len(options) == len(catalog.motor_names())


def test_no_library_needs_motors_of_ones_own() -> None:
    result = runner.invoke(_app(), ["pick", str(HOBBY), "--no-library"])
    assert result.exit_code == 2
    assert "--no-library leaves no motor" in " ".join(result.stderr.split())


# --- data -----------------------------------------------------------------------------------


def test_data_lists_the_users_motors_beside_the_shipped_ones(tmp_path: Path) -> None:
    own = _curve(tmp_path / "team.csv", "own-H200", 200)
    folder = tmp_path / "ours"
    folder.mkdir()
    _curve(folder / "b.csv", "own-H160", 160)
    motor = catalog.read_thrust_curve(own)

    result = runner.invoke(_app(), ["data", "--motors", f"{own},{folder}", "--json"])
    assert result.exit_code == 0, result.output
    motors = json.loads(result.stdout)["motors"]
    by_name = {m["name"]: m for m in motors}
    assert by_name["own-H200"]["origin"] == "user"
    assert by_name["own-H200"]["file"] == str(own)
    assert by_name["own-H160"]["file"] == str(folder / "b.csv")
    assert by_name["own-H200"]["total_impulse_n_s"] == pytest.approx(motor.total_impulse)
    assert by_name["own-H200"]["average_thrust_n"] == pytest.approx(motor.average_thrust)
    shipped = [m for m in motors if m["origin"] == "shipped"]
    assert [m["name"] for m in shipped] == catalog.motor_names()
    assert all(m["file"] is None for m in shipped)
    # one list in impulse order, the team's motors among the shipped ones
    impulses = [m["total_impulse_n_s"] for m in motors]
    assert impulses == sorted(impulses)

    table = runner.invoke(_app(), ["data", "--motors", str(own)], env={"COLUMNS": "80"})
    assert table.exit_code == 0, table.output
    lines = table.stdout.splitlines()
    assert max(len(line.rstrip()) for line in lines) <= 80
    row = next(line for line in lines if "own-H200*" in line)
    assert "pd-" not in row and "H" in row.split()  # its impulse class
    assert str(own) in "".join(table.stdout.split())  # the path, maybe wrapped
    # the average thrust column, on a terminal wide enough to keep headers on one line
    wide = runner.invoke(_app(), ["data", "--motors", str(own)], env={"COLUMNS": "250"})
    assert "Average thrust (N)" in wide.stdout and "Avg" not in wide.stdout


def test_data_refuses_a_bad_motor_file(tmp_path: Path) -> None:
    bad = _curve(tmp_path / "bad.csv", "own-bad", 100, rows="0,0\n0.1,-5\n1,0\n")
    result = runner.invoke(_app(), ["data", "--motors", str(bad)])
    assert result.exit_code == 2
    assert f"{bad}, line 10" in " ".join(result.stderr.split())


# --- a pick that reaches nothing ------------------------------------------------------------


def _bound_apogee(site_altitude: float, speed: float) -> float:
    # Energy law with inverse-square gravity (Curtis, Orbital Mechanics for Engineering
    # Students, 3rd ed., eq. 2.80): v^2/2 - mu/r_site = -mu/r_apogee.
    r_site = EARTH_EQUATORIAL_RADIUS + site_altitude
    return 1.0 / (1.0 / r_site - speed**2 / (2.0 * EARTH_MU)) - r_site


def test_a_failed_pick_lists_the_closest_stacks_with_their_shortfall(tmp_path: Path) -> None:
    own = _curve(tmp_path / "team.csv", "own-H200", 200)
    # 1.3 km is beyond every one of these (pd-H113 reaches about 1.1 km on this airframe);
    # pd-G58 cannot reach it even without drag, so it is pruned, not flown
    motors = ["pd-G58", "pd-H113", own]
    result = pick(load_mission(HOBBY), motors, target_apogee=1300.0)
    assert result.meeting == 0 and result.flown >= 2 and result.pruned["delta_v"] >= 1
    # the mission's [margins.flight] asks for 5 % of the target: 1365 m are needed
    assert result.needed_apogee == pytest.approx(1300.0 * 1.05, rel=1e-12)
    closest = result.closest()
    assert len(closest) == 3
    shortfalls = [entry.shortfall for entry in closest]
    flown = [entry for entry in closest if entry.flown]
    assert [entry.flown for entry in closest] == [True] * len(flown) + [False] * (
        len(closest) - len(flown)
    )
    assert [e.shortfall for e in flown] == sorted(e.shortfall for e in flown)
    missions = {row.motors: row.mission for row in (*result.rows, *result.pruned_rows)}
    site = result.mission.launch.altitude
    for entry in closest:
        again = fly(missions[entry.motors], margin=False)
        needed = again.verdict.required + again.verdict.asked
        assert needed == pytest.approx(result.needed_apogee, rel=1e-12)
        if entry.flown:
            assert entry.shortfall == pytest.approx(needed - again.apogee, rel=1e-9)
            assert entry.apogee == pytest.approx(again.apogee, rel=1e-9)
        else:
            # pruned: the drag-free apogee is a bound, so the real miss is at least this
            pruned = next(row for row in result.pruned_rows if row.motors == entry.motors)
            assert entry.apogee == pytest.approx(
                _bound_apogee(site, pruned.ideal_delta_v), rel=1e-9
            )
            assert entry.shortfall <= needed - again.apogee
        assert entry.shortfall > 0
    assert all(math.isfinite(s) for s in shortfalls)

    code, data, err = _pick_json("--motors", f"pd-G58,pd-H113,{own}", "--apogee", "1.3 km")
    assert code == 1, err
    assert [e["motors"] for e in data["closest"]] == [e.motors for e in closest]
    assert [e["shortfall_m"] for e in data["closest"]] == pytest.approx(shortfalls)
    assert data["needed_apogee_m"] == pytest.approx(1365.0)

    shown = runner.invoke(
        _app(),
        ["pick", str(HOBBY), "--motors", f"pd-G58,pd-H113,{own}", "--apogee", "1.3 km"],
        env={"COLUMNS": "80"},
    )
    assert shown.exit_code == 1
    text = " ".join(shown.stdout.split())
    assert "Closest stacks" in text and "short by" in text.lower()
    assert max(len(line.rstrip()) for line in shown.stdout.splitlines()) <= 80
    first = closest[0]
    assert f"the closest, {first.motors}, is {format_number(first.shortfall)} m short" in text


def test_a_pick_where_every_stack_is_pruned_still_lists_the_closest() -> None:
    result = runner.invoke(_app(), ["pick", str(HOBBY), "--motors", "pd-G58"])
    assert result.exit_code == 1
    text = " ".join(result.stdout.split())
    assert "Closest stacks" in text and "sustainer: pd-G58" in text
    assert "at least" in text  # a bound from the ideal budget, not a flight
