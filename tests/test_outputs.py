"""Every output file of the command line: written whole or not at all, never over an
input, never onto something that is not a regular file, with the mode of the file it
replaces, and nothing left behind by a failed, interrupted or killed command.

The outputs: ``fly --trajectory/--plot/--ledger-plot``, ``budget --plot``,
``scatter --samples/--plot``, ``compare --export``, ``sweep --export/--plot``,
``split --plot`` and ``report -o``. The project's rules (DEVELOPERS.md, "Output files")
are the source of every expectation here; the signal numbers and exit statuses are
POSIX (a shell reports a process ended by signal N as 128 + N).
"""

from __future__ import annotations

import os
import shutil
import signal
import stat
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from propulsion.cli import app

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
DATA = Path(__file__).resolve().parent.parent / "data"
HOBBY = MISSIONS / "hobby_single_stage.toml"
COMPETITION = MISSIONS / "two_stage_competition.toml"
PARTIAL = ".propulsion-partial-"
runner = CliRunner()


def _args(kind: str, mission: Path, out: Path) -> list[str]:
    """The quickest command line that writes an output of this kind to ``out``."""
    m, o = str(mission), str(out)
    return {
        "trajectory": ["fly", m, "--no-margin", "--trajectory", o],
        "fly-plot": ["fly", m, "--no-margin", "--plot", o],
        "budget-plot": ["budget", m, "--plot", o],
        "samples": ["scatter", m, "-n", "20", "--workers", "1", "--samples", o],
        "sweep-export": ["sweep", m, "--set", "vehicle.payload=0.1 kg..0.2 kg:2", "--export", o],
        "compare-export": ["compare", m, "--no-margin", "--export", o],
        "report": ["report", m, "-o", o],
    }[kind]


SUFFIX = {
    "trajectory": ".csv",
    "fly-plot": ".png",
    "budget-plot": ".svg",
    "samples": ".csv",
    "sweep-export": ".md",
    "compare-export": ".csv",
    "report": ".html",
}
KINDS = list(SUFFIX)


def _mission(folder: Path, kind: str = "") -> Path:
    """A copy of an example mission in ``folder`` (tests never aim at the repository's)."""
    source = COMPETITION if kind == "samples" else HOBBY
    copy = folder / "mission.toml"
    shutil.copyfile(source, copy)
    return copy


def _message(result: Any) -> str:
    return " ".join(result.stderr.split())


def _refused(result: Any, *fragments: str) -> str:
    """A refusal: exit code 2, a message with ``fragments``, no traceback."""
    message = _message(result)
    assert result.exit_code == 2, (result.exit_code, result.output, result.exception)
    assert "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in message, (fragment, message)
    return message


def _leftovers(folder: Path) -> list[str]:
    return sorted(path.name for path in folder.iterdir() if PARTIAL in path.name)


# --- 1. never over an input ----------------------------------------------------------------


@pytest.mark.parametrize("kind", ["report", "trajectory", "samples"])
def test_the_mission_file_itself_is_refused_as_output_even_with_force(
    tmp_path: Path, kind: str
) -> None:
    mission = _mission(tmp_path, kind)
    before = mission.read_bytes()
    result = runner.invoke(app, [*_args(kind, mission, mission), "--force"])
    _refused(result, "mission.toml", "reads")
    assert mission.read_bytes() == before


@pytest.mark.parametrize("link", ["symbolic", "hard"])
@pytest.mark.parametrize("kind", KINDS)
def test_a_link_to_the_mission_file_is_refused_as_output(
    tmp_path: Path, kind: str, link: str
) -> None:
    # the right extension, so only "the same file" (os.path.samefile) can refuse it
    mission = _mission(tmp_path, kind)
    before = mission.read_bytes()
    out = tmp_path / f"out{SUFFIX[kind]}"
    if link == "symbolic":
        out.symlink_to(mission)
    else:
        os.link(mission, out)
    result = runner.invoke(app, [*_args(kind, mission, out), "--force"])
    _refused(result, out.name, "mission.toml", "reads")
    assert mission.read_bytes() == before


@pytest.mark.parametrize("kind", ["trajectory", "compare-export"])
def test_a_thrust_curve_the_mission_reads_is_refused_as_output(tmp_path: Path, kind: str) -> None:
    curve = tmp_path / "curve.csv"
    shutil.copyfile(DATA / "motors" / "pd-H113.csv", curve)
    text = HOBBY.read_text(encoding="utf-8").replace('name = "pd-H113"', 'file = "curve.csv"')
    assert 'file = "curve.csv"' in text
    mission = tmp_path / "mission.toml"
    mission.write_text(text, encoding="utf-8")
    before = curve.read_bytes()
    result = runner.invoke(app, [*_args(kind, mission, curve), "--force"])
    _refused(result, "curve.csv", "reads")
    assert curve.read_bytes() == before


def test_the_same_file_for_two_outputs_is_refused_before_flying(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import propulsion.ascent

    monkeypatch.setattr(propulsion.ascent, "fly", _must_not_run)
    out = tmp_path / "flight.png"
    result = runner.invoke(app, ["fly", str(HOBBY), "--plot", str(out), "--ledger-plot", str(out)])
    _refused(result, "flight.png", "two outputs")
    assert not out.exists()


# --- 2. only regular files -------------------------------------------------------------------


def _not_regular(folder: Path, what: str, suffix: str) -> tuple[Path, Any]:
    """A path ending in ``suffix`` that is not a regular file; and how to see it unchanged."""
    path = folder / f"out{suffix}"
    if what == "folder":
        path.mkdir()
        (path / "inside.txt").write_text("keep me", encoding="utf-8")
        return path, lambda: path.is_dir() and (path / "inside.txt").exists()
    if what == "fifo":
        os.mkfifo(path)
        return path, lambda: stat.S_ISFIFO(os.lstat(path).st_mode)
    if what == "link to /dev/null":
        path.symlink_to("/dev/null")
        return path, lambda: path.is_symlink() and stat.S_ISCHR(os.stat("/dev/null").st_mode)
    if what == "link to a pipe in /proc/self/fd":
        read, write = os.pipe()
        path.symlink_to(f"/proc/self/fd/{write}")

        def same() -> bool:
            os.close(read)
            os.close(write)
            return path.is_symlink()

        return path, same
    if what == "dangling link":
        path.symlink_to(folder / "nowhere" / "file.csv")
        return path, lambda: path.is_symlink() and not (folder / "nowhere").exists()
    raise AssertionError(what)


@pytest.mark.parametrize(
    "what",
    ["folder", "fifo", "link to /dev/null", "link to a pipe in /proc/self/fd", "dangling link"],
)
@pytest.mark.parametrize("kind", KINDS)
def test_something_that_is_not_a_regular_file_is_refused_even_with_force(
    tmp_path: Path, kind: str, what: str
) -> None:
    if what == "link to a pipe in /proc/self/fd" and not Path("/proc/self/fd").is_dir():
        pytest.skip("no /proc/self/fd on this system")
    mission = _mission(tmp_path, kind)
    out, unchanged = _not_regular(tmp_path, what, SUFFIX[kind])
    result = runner.invoke(app, [*_args(kind, mission, out), "--force"])
    _refused(result, out.name, "regular file")
    assert unchanged()
    assert _leftovers(tmp_path) == []


@pytest.mark.parametrize("args", [["report", "-o"], ["fly", "--trajectory"]])
def test_dev_null_is_refused_even_with_force(args: list[str]) -> None:
    before = os.stat("/dev/null")
    result = runner.invoke(app, [args[0], str(HOBBY), args[1], "/dev/null", "--force"])
    _refused(result, "/dev/null")
    after = os.stat("/dev/null")
    assert stat.S_ISCHR(after.st_mode) and after.st_ino == before.st_ino


@pytest.mark.parametrize("kind", ["trajectory", "samples", "report"])
def test_a_link_to_a_regular_file_is_written_through_and_kept(tmp_path: Path, kind: str) -> None:
    mission = _mission(tmp_path, kind)
    elsewhere = tmp_path / "results"
    elsewhere.mkdir()
    real = elsewhere / f"real{SUFFIX[kind]}"
    real.write_text("old", encoding="utf-8")
    real.chmod(0o640)
    link = tmp_path / f"link{SUFFIX[kind]}"
    link.symlink_to(real)
    refused = runner.invoke(app, _args(kind, mission, link))
    _refused(refused, link.name, "--force")
    assert real.read_text(encoding="utf-8") == "old"
    forced = runner.invoke(app, [*_args(kind, mission, link), "--force"])
    assert forced.exit_code == 0, forced.output
    assert link.is_symlink() and link.resolve() == real.resolve()
    assert real.read_text(encoding="utf-8") != "old"
    assert stat.S_IMODE(real.stat().st_mode) == 0o640
    assert _leftovers(tmp_path) == [] and _leftovers(elsewhere) == []


# --- 3. modes ----------------------------------------------------------------------------------


@pytest.mark.parametrize("kind", KINDS)
def test_force_keeps_the_mode_of_the_file_it_replaces(tmp_path: Path, kind: str) -> None:
    mission = _mission(tmp_path, kind)
    out = tmp_path / f"out{SUFFIX[kind]}"
    out.write_text("old", encoding="utf-8")
    out.chmod(0o600)
    result = runner.invoke(app, [*_args(kind, mission, out), "--force"])
    assert result.exit_code == 0, result.output
    assert out.read_text(encoding="utf-8", errors="replace") != "old"
    assert stat.S_IMODE(out.stat().st_mode) == 0o600


@pytest.fixture
def umask_027() -> Iterator[None]:
    old = os.umask(0o027)
    try:
        yield
    finally:
        os.umask(old)


@pytest.mark.parametrize("kind", ["trajectory", "samples", "budget-plot"])
def test_a_new_file_gets_the_mode_the_umask_gives(
    tmp_path: Path, kind: str, umask_027: None
) -> None:
    mission = _mission(tmp_path, kind)
    out = tmp_path / f"out{SUFFIX[kind]}"
    result = runner.invoke(app, _args(kind, mission, out))
    assert result.exit_code == 0, result.output
    assert stat.S_IMODE(out.stat().st_mode) == 0o666 & ~0o027


# --- 4. folders that cannot take the file ------------------------------------------------------


def _must_not_run(*args: Any, **kwargs: Any) -> Any:
    raise AssertionError("the work ran before the output file was checked")


@pytest.mark.parametrize("kind", ["trajectory", "samples", "report", "compare-export"])
def test_a_folder_that_is_a_file_is_refused_before_the_work(
    tmp_path: Path, kind: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    import propulsion.ascent
    import propulsion.report.html
    import propulsion.studies.compare
    import propulsion.studies.scatter

    for module, name in [
        (propulsion.ascent, "fly"),
        (propulsion.report.html, "build_report"),
        (propulsion.studies.scatter, "scatter"),
        (propulsion.studies.compare, "compare"),
    ]:
        monkeypatch.setattr(module, name, _must_not_run)
    mission = _mission(tmp_path, kind)
    plain = tmp_path / "notes.txt"
    plain.write_text("a file, not a folder", encoding="utf-8")
    out = plain / f"out{SUFFIX[kind]}"
    result = runner.invoke(app, _args(kind, mission, out))
    _refused(result, str(out), "not a folder")


@pytest.mark.parametrize("kind", ["trajectory", "samples", "report"])
def test_a_folder_that_takes_no_new_files_is_refused_before_the_work(
    kind: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # /proc takes no new files, whoever asks (root included): creating one fails
    if not Path("/proc/self").is_dir():
        pytest.skip("no /proc on this system")
    import propulsion.ascent
    import propulsion.report.html
    import propulsion.studies.scatter

    for module, name in [
        (propulsion.ascent, "fly"),
        (propulsion.report.html, "build_report"),
        (propulsion.studies.scatter, "scatter"),
    ]:
        monkeypatch.setattr(module, name, _must_not_run)
    mission = _mission(tmp_path, kind)
    out = Path("/proc") / f"propulsion-test{SUFFIX[kind]}"
    result = runner.invoke(app, _args(kind, mission, out))
    _refused(result, str(out), "/proc")
    assert not out.exists()


_UNPRIVILEGED = """
import os, sys
from typer.testing import CliRunner
from propulsion.cli import app

runner = CliRunner()
mission, warm, out = sys.argv[1:4]
# the imports the command needs, before giving up the rights to read them
first = runner.invoke(app, ["scatter", mission, "-n", "1", "--workers", "1", "--json"])
assert first.exit_code == 0, first.output
if os.geteuid() == 0:
    os.setegid(65534)
    os.seteuid(65534)
result = runner.invoke(app, ["scatter", mission, "-n", "5", "--workers", "1", "--samples", out])
print(result.exit_code)
print(" ".join(result.stderr.split()))
print(repr(result.exception))
"""


def test_a_folder_without_write_permission_is_a_clear_error() -> None:
    # root ignores a folder's mode bits, so as root the command runs as the user nobody
    # (uid 65534) after its imports, in a subprocess: the folder's mode then counts.
    # (tmp_path is not used: its folders are closed to other users.)
    shared = Path(tempfile.mkdtemp(prefix="propulsion-ro-"))
    shared.chmod(0o755)
    closed = [p for p in shared.parents if not os.stat(p).st_mode & stat.S_IXOTH]
    if os.geteuid() == 0 and closed:
        shutil.rmtree(shared)
        pytest.skip(f"the user nobody cannot reach the temporary folder through {closed[0]}")
    try:
        mission = shared / "mission.toml"
        shutil.copyfile(COMPETITION, mission)
        mission.chmod(0o644)
        folder = shared / "read-only"
        folder.mkdir()
        folder.chmod(0o555)
        out = folder / "samples.csv"
        process = subprocess.run(
            [sys.executable, "-c", _UNPRIVILEGED, str(mission), str(shared), str(out)],
            capture_output=True,
            text=True,
            timeout=120,
            cwd=shared,
        )
        assert process.returncode == 0, process.stderr
        code, message, exception = process.stdout.splitlines()[-3:]
        assert code == "2", (code, message, exception)
        assert str(out) in message and "Permission denied" in message
        assert list(folder.iterdir()) == []
    finally:
        shutil.rmtree(shared, ignore_errors=True)


# --- 5 and 6. a kill leaves nothing behind -------------------------------------------------------


def _session(leader: int) -> list[int]:
    """Every process of the session ``leader`` started, itself excepted (from /proc)."""
    members = []
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit() or int(entry.name) == leader:
            continue
        try:
            text = (entry / "stat").read_text()
        except OSError:
            continue
        # fields after the command name in parentheses: state ppid pgrp session ...
        fields = text[text.rindex(")") + 2 :].split()
        if int(fields[3]) == leader:
            members.append(int(entry.name))
    return members


def _start_scatter(folder: Path, samples: int) -> tuple[subprocess.Popen[bytes], Path]:
    """A long scatter writing --samples in ``folder``; returns once rows are being written."""
    out = folder / "samples.csv"
    process = subprocess.Popen(
        [sys.executable, "-m", "propulsion", "scatter", str(COMPETITION), "-n", str(samples),
         "--samples", str(out), "--json"],
        cwd=folder,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        start_new_session=True,
    )  # fmt: skip
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        partial = [p for p in folder.iterdir() if p.name.startswith(".samples.csv.")]
        if partial and partial[0].stat().st_size > 50_000:
            return process, out
        if process.poll() is not None:
            break
        time.sleep(0.05)
    process.kill()
    _, err = process.communicate(timeout=10)
    raise AssertionError(f"scatter did not start writing its samples: {err.decode()}")


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="lists processes through /proc")
@pytest.mark.parametrize("name", ["SIGTERM", "SIGINT", "SIGHUP"])
def test_a_terminated_scatter_leaves_no_file_and_no_process(tmp_path: Path, name: str) -> None:
    number = getattr(signal, name)
    process, out = _start_scatter(tmp_path, 200_000)
    assert _session(process.pid) == []  # the study runs on threads: nothing was spawned
    process.send_signal(number)
    try:
        _, err = process.communicate(timeout=30)
    finally:
        process.kill()
    # ended by the command line itself (128 + N, or 130 for Ctrl-C), not by the signal
    assert process.returncode == (130 if name == "SIGINT" else 128 + number), err
    assert b"Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == []
    assert not out.exists()
    assert _session(process.pid) == []


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="lists processes through /proc")
def test_a_killed_scatter_leaves_a_partial_file_the_next_run_removes(tmp_path: Path) -> None:
    process, out = _start_scatter(tmp_path, 200_000)
    process.kill()
    process.wait(30)
    assert _session(process.pid) == []
    (partial,) = [p.name for p in tmp_path.iterdir()]
    assert partial.startswith(".samples.csv" + PARTIAL)  # recognisably ours
    assert not out.exists()
    again = subprocess.run(
        [sys.executable, "-m", "propulsion", "scatter", str(COMPETITION), "-n", "30",
         "--workers", "1", "--samples", str(out), "--json"],
        cwd=tmp_path,
        capture_output=True,
        timeout=120,
    )  # fmt: skip
    assert again.returncode == 0, again.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["samples.csv"]
    assert len(out.read_text(encoding="utf-8").splitlines()) == 31


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="lists processes through /proc")
def test_a_partial_file_of_a_running_command_is_left_alone(tmp_path: Path) -> None:
    # two writers of one output: the second does not take the first's file for stale
    from propulsion.report.files import write_atomic

    process, out = _start_scatter(tmp_path, 200_000)
    try:
        (partial,) = [p for p in tmp_path.iterdir() if PARTIAL in p.name]
        write_atomic(out, "a,b\n")
        assert partial.exists()
    finally:
        process.send_signal(signal.SIGTERM)
        process.communicate(timeout=30)
    assert process.returncode == 128 + signal.SIGTERM
    assert sorted(p.name for p in tmp_path.iterdir()) == ["samples.csv"]
    assert out.read_text(encoding="utf-8") == "a,b\n"


def test_the_shipped_tables_are_inputs_of_every_mission() -> None:
    # a --force aimed at data/ must not replace the propellant table or a motor
    from propulsion.mission import load_mission
    from propulsion.report.files import input_files

    found = {path.resolve() for path, _ in input_files(load_mission(HOBBY))}
    assert HOBBY.resolve() in found
    assert (DATA / "propellants.csv").resolve() in found
    assert (DATA / "motors" / "pd-H113.csv").resolve() in found
    assert (DATA / "drag" / "slender_finned.csv").resolve() in found


# --- 7. a failed command writes nothing ----------------------------------------------------------


def test_a_sweep_with_nothing_to_draw_writes_no_export(tmp_path: Path) -> None:
    # every point has a negative inert mass, which the mission file refuses
    export, plot = tmp_path / "sweep.csv", tmp_path / "sweep.png"
    result = runner.invoke(
        app,
        ["sweep", str(HOBBY), "--set", "stage[1].inert_mass=-1 kg..-0.5 kg:2",
         "--export", str(export), "--plot", str(plot)],
    )  # fmt: skip
    _refused(result, "nothing to draw")
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def _broken_figure(*args: Any, **kwargs: Any) -> Any:
    from propulsion.report.plots import PlotError

    raise PlotError("the figure could not be drawn (a test's stand-in)")


def test_fly_writes_no_trajectory_when_its_picture_fails(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from propulsion.report import plots

    monkeypatch.setattr(plots, "flight_ledger_figure", _broken_figure)
    trajectory, plot = tmp_path / "flight.csv", tmp_path / "ledger.png"
    result = runner.invoke(
        app,
        ["fly", str(HOBBY), "--no-margin", "--trajectory", str(trajectory), "--plot",
         str(tmp_path / "flight.png"), "--ledger-plot", str(plot)],
    )  # fmt: skip
    _refused(result, "could not be drawn")
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_scatter_writes_no_samples_when_its_picture_fails(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from propulsion.report import plots

    monkeypatch.setattr(plots, "scatter_figure", _broken_figure)
    samples, plot = tmp_path / "samples.csv", tmp_path / "scatter.png"
    result = runner.invoke(
        app,
        ["scatter", str(COMPETITION), "-n", "20", "--workers", "1", "--samples", str(samples),
         "--plot", str(plot)],
    )  # fmt: skip
    _refused(result, "could not be drawn")
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_an_output_that_falls_short_is_still_written(tmp_path: Path) -> None:
    # exit code 1 is an answer, not a failure: the outputs are kept
    text = HOBBY.read_text(encoding="utf-8").replace('"1 km"', '"2 km"')
    mission = tmp_path / "high.toml"
    mission.write_text(text, encoding="utf-8")
    out = tmp_path / "flight.csv"
    result = runner.invoke(app, ["fly", str(mission), "--no-margin", "--trajectory", str(out)])
    assert result.exit_code == 1, result.output
    assert out.read_text(encoding="utf-8").startswith("time [s],")


# --- 8. extensions -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kind", "name", "expected"),
    [
        ("samples", "samples.txt", ".csv"),
        ("trajectory", "flight.json", ".csv"),
        ("trajectory", "flight", ".csv"),
        ("report", "report.png", ".html"),
    ],
)
def test_a_wrong_extension_is_refused_before_the_work(
    tmp_path: Path, kind: str, name: str, expected: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    import propulsion.ascent
    import propulsion.report.html
    import propulsion.studies.scatter

    for module, attribute in [
        (propulsion.ascent, "fly"),
        (propulsion.report.html, "build_report"),
        (propulsion.studies.scatter, "scatter"),
    ]:
        monkeypatch.setattr(module, attribute, _must_not_run)
    mission = _mission(tmp_path, kind)
    out = tmp_path / name
    result = runner.invoke(app, _args(kind, mission, out))
    _refused(result, name, expected)
    assert not out.exists()


@pytest.mark.parametrize(("kind", "name"), [("trajectory", "FLIGHT.CSV"), ("report", "r.htm")])
def test_the_extension_is_read_without_regard_to_case_and_htm_is_html(
    tmp_path: Path, kind: str, name: str
) -> None:
    out = tmp_path / name
    result = runner.invoke(app, _args(kind, _mission(tmp_path, kind), out))
    assert result.exit_code == 0, result.output
    assert out.stat().st_size > 0


# --- the library's own use -----------------------------------------------------------------------


def test_write_atomic_outside_a_command_still_refuses_what_is_not_a_regular_file(
    tmp_path: Path,
) -> None:
    from propulsion.report.files import OutputError, write_atomic

    (tmp_path / "folder.csv").mkdir()
    with pytest.raises(OutputError, match="regular file"):
        write_atomic(tmp_path / "folder.csv", "a\n", force=True)
