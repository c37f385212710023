"""Writing output files whole or not at all, and never over a user's file by accident.

An output is checked before the work that makes it (:func:`check_output`) and again when
it is written. It is refused (exit code 2) when

* it is the same file as an input of the command (the mission file, the thrust and drag
  curves it reads; ``os.path.samefile``, so hard and symbolic links count), even with
  ``--force``;
* it exists and is not a regular file (a folder, a device such as ``/dev/null``, a
  FIFO, a socket, a symbolic link to one of these or to nothing), even with ``--force``;
* its name does not end in what the output is (``.csv``, ``.html``, ...);
* it exists and ``--force`` was not given (:class:`~propulsion.errors.OutputExistsError`);
* its folder does not exist, is not a folder, or takes no new file (no permission, a
  read-only file system): a probe file is created and removed to find out;
* another output of the same command already names it.

A symbolic link to a regular file is written through: the file it leads to is replaced
(with ``--force``) and the link stays. The user named the link, so the file behind it is
the one they mean; replacing the link by a file would quietly cut it from its target.

The content goes to a hidden temporary file in the same folder,
``.NAME.propulsion-partial-HOST-PID-XXXXXXXX``, which a rename puts in place. A file
that is replaced keeps its mode (and, where allowed, its owner); a new one gets the mode
the umask gives, as any program's would. A process killed outright (SIGKILL) leaves its
temporary file behind; the next write of the same output removes those whose process
is gone.

Inside :func:`all_or_nothing` (each command's body), files are only prepared; they are
moved into place together when the block ends without an error, and removed when it
ends with one, Ctrl-C or a termination signal included: a failed command writes nothing.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextvars import ContextVar
from pathlib import Path
from typing import IO, TYPE_CHECKING, Any

from propulsion.errors import OutputExistsError, PropulsionError

if TYPE_CHECKING:
    from propulsion.mission import Mission

__all__ = [
    "PARTIAL_MARK",
    "OutputError",
    "Outputs",
    "StreamedCsv",
    "all_or_nothing",
    "check_output",
    "input_files",
    "write_atomic",
]

PARTIAL_MARK = ".propulsion-partial-"
"""What the name of every temporary output file carries, after the output's own name."""

_NAME_KEPT = 100
"""Characters of the output's name kept in a temporary file's name (names stay < 255 bytes)."""


class OutputError(PropulsionError, OSError):
    """An output file that cannot be written: a folder that is missing or takes no file,
    an input of the command, something that is not a regular file, a wrong extension.

    Parameters
    ----------
    path : str
        The output file, as given.
    reason : str
        What is wrong, in plain words.
    expected : str
        What would have been accepted; may be empty.
    """

    def __init__(self, path: str, reason: str, expected: str = "") -> None:
        self.path = path
        self.reason = reason
        self.expected = expected
        super().__init__(path, reason)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path, self.reason, self.expected))

    def __str__(self) -> str:
        message = f"cannot write {self.path}: {self.reason.rstrip('.')}."
        if self.expected:
            message += f" Expected {self.expected.rstrip('.')}."
        return message


# --- the outputs of one command ----------------------------------------------------------


class _Pending:
    """One output being written: its temporary file and where it goes."""

    def __init__(self, shown: Path, real: Path) -> None:
        self.shown = shown
        self.real = real
        self.done = False
        handle, name = _temporary(real, shown)
        self.temporary = Path(name)
        self.handle: int | None = handle

    def finish(self) -> None:
        """Give the complete temporary file the mode (and owner) it will keep."""
        if self.handle is not None:
            os.fsync(self.handle)
            os.close(self.handle)
            self.handle = None
        try:
            info: os.stat_result | None = os.stat(self.real)
        except OSError:
            info = None
        if info is not None and stat.S_ISREG(info.st_mode):
            if hasattr(os, "chown") and (info.st_uid, info.st_gid) != _owner():
                with contextlib.suppress(OSError):  # only root may give a file away
                    os.chown(self.temporary, info.st_uid, info.st_gid)
            os.chmod(self.temporary, stat.S_IMODE(info.st_mode))
        else:
            os.chmod(self.temporary, _file_mode())
        self.done = True

    def move(self, force: bool, inputs: Sequence[tuple[Path, str]]) -> None:
        """Check the target once more and rename the temporary file onto it (the
        temporary file is removed if that fails)."""
        try:
            _refuse_inputs(self.shown, inputs)
            _destination(self.shown, force)
            os.replace(self.temporary, self.real)
        except BaseException as exc:
            self.discard()
            if isinstance(exc, OSError) and not isinstance(exc, PropulsionError):
                raise OutputError(str(self.shown), _reason(exc)) from exc
            raise
        _remove_stale(self.real)

    def discard(self) -> None:
        """Drop the temporary file."""
        if self.handle is not None:
            with contextlib.suppress(OSError):
                os.close(self.handle)
            self.handle = None
        with contextlib.suppress(OSError):
            self.temporary.unlink()


class Outputs:
    """The output files of one command: the inputs they must not be, the names already
    taken, and the files prepared but not yet moved into place.

    Made by :func:`all_or_nothing`; commands call :meth:`protect` with each mission they
    load, before they check their output files.
    """

    def __init__(self) -> None:
        self.inputs: list[tuple[Path, str]] = []
        self.claimed: dict[str, Path] = {}
        self.pending: list[tuple[_Pending, bool]] = []

    def protect(self, *items: Mission | str | Path) -> None:
        """Add inputs no output may be: mission files (paths), or a loaded mission's file
        and the thrust and drag curve files it read (see :func:`input_files`)."""
        for item in items:
            if isinstance(item, str | Path):
                self.inputs.append((Path(item), "the mission file"))
            else:
                self.inputs.extend(input_files(item))

    def _claim(self, shown: Path) -> None:
        key = os.path.realpath(shown)
        if key in self.claimed:
            other = self.claimed[key]
            also = "" if str(other) == str(shown) else f" (the other as {other})"
            raise OutputError(
                str(shown),
                f"it is named for two outputs of this command{also}",
                "a different file for each output",
            )
        self.claimed[key] = shown

    def _commit(self) -> None:
        for pending, _ in self.pending:
            if not pending.done:
                raise RuntimeError(f"the output {pending.shown} was never finished")
        for pending, force in self.pending:  # refuse before anything moves
            _refuse_inputs(pending.shown, self.inputs)
            _destination(pending.shown, force)
        while self.pending:
            pending, force = self.pending.pop(0)
            pending.move(force, self.inputs)

    def _abandon(self) -> None:
        while self.pending:
            pending, _ = self.pending.pop()
            pending.discard()


_current: ContextVar[Outputs | None] = ContextVar("propulsion_outputs", default=None)


@contextlib.contextmanager
def all_or_nothing(*mission_files: str | Path) -> Iterator[Outputs]:
    """Hold every file written inside the block until the block ends, then move them all
    into place; on any error (Ctrl-C, a termination signal, ``SystemExit`` included)
    remove them all instead.

    Parameters
    ----------
    *mission_files : str or Path
        Files the command reads, protected from the start (before they are loaded).

    Yields
    ------
    Outputs
        Call its :meth:`~Outputs.protect` with each mission once loaded.

    Notes
    -----
    A command raises its exit code 1 ("falls short") after the block, so its files are
    written. Inside a block that is already open, this one joins it.
    """
    outer = _current.get()
    if outer is not None:
        outer.protect(*mission_files)
        yield outer
        return
    outputs = Outputs()
    outputs.protect(*mission_files)
    token = _current.set(outputs)
    try:
        yield outputs
        outputs._commit()
    except BaseException:
        outputs._abandon()
        raise
    finally:
        _current.reset(token)


def input_files(mission: Mission) -> list[tuple[Path, str]]:
    """The files a loaded mission was read from, each with what it is: the mission file,
    the thrust curve and drag curve of each stage, and the shipped data tables (the
    propellant families, the named motors and drag curves)."""
    from propulsion.catalog import data_dir

    found: list[tuple[Path, str]] = []
    if mission.source and not mission.source.startswith("<"):
        found.append((Path(mission.source), "the mission file"))
    for stage in mission.vehicle.stages:
        motor = getattr(stage.propulsion, "source", "")
        if motor:
            found.append((Path(motor), "a thrust curve of the mission"))
        drag = stage.drag_curve.source if stage.drag_curve is not None else ""
        if drag:
            found.append((Path(drag), "a drag curve of the mission"))
    found += [(path, "a shipped data table") for path in sorted(data_dir().rglob("*.csv"))]
    return found


# --- checks ------------------------------------------------------------------------------


def check_output(
    path: str | Path,
    force: bool = False,
    suffixes: Sequence[str] = (),
    check_name: Callable[[Path], object] | None = None,
) -> Path:
    """Check an output file before the work that makes it (no file is written).

    Parameters
    ----------
    path : str or Path
        The output file.
    force : bool
        Whether an existing regular file may be replaced.
    suffixes : sequence of str
        Extensions the name may end in (``".csv"``), compared without regard to case;
        empty for any.
    check_name : callable or None
        Called with the path after the input and kind checks, to refuse a name with an
        error of its own (the pictures' and the exports' extensions).

    Returns
    -------
    Path
        The path, as given.

    Raises
    ------
    OutputError
        An input of the command, not a regular file, a wrong extension, a folder that is
        missing or takes no new file, or a name another output of the command has.
    OutputExistsError
        The file exists and ``force`` is False.
    """
    target = Path(path)
    outputs = _current.get()
    _check(target, force, suffixes, check_name, outputs.inputs if outputs else ())
    if outputs is not None:
        outputs._claim(target)
    return target


def _check(
    target: Path,
    force: bool,
    suffixes: Sequence[str],
    check_name: Callable[[Path], object] | None,
    inputs: Sequence[tuple[Path, str]],
) -> Path:
    """Every check of :func:`check_output`; the file to replace (links followed)."""
    _refuse_inputs(target, inputs)
    _kind(target)
    if suffixes and target.suffix.lower() not in suffixes:
        shown = f"'{target.suffix}'" if target.suffix else "no extension"
        raise OutputError(
            str(target),
            f"the file name has {shown}",
            f"a file name ending in {' or '.join(suffixes)}",
        )
    if check_name is not None:
        check_name(target)
    real = _destination(target, force)
    _probe(real, target)
    return real


def _refuse_inputs(target: Path, inputs: Iterable[tuple[Path, str]]) -> None:
    for source, what in inputs:
        try:
            same = os.path.samefile(target, source)
        except (OSError, ValueError):
            continue  # one of them does not exist
        if not same:
            continue
        if os.path.abspath(target) == os.path.abspath(source):
            reason = f"it is {what}, which this command reads"
        else:
            reason = f"it is the same file as {source}, {what}, which this command reads"
        raise OutputError(str(target), reason, "another file name for the output")


_KINDS = [
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISSOCK, "a socket"),
]


def _kind(target: Path) -> os.stat_result | None:
    """The file's status (links followed), None when there is none; refuses anything that
    exists and is not a regular file."""
    try:
        link = os.lstat(target)
    except OSError:
        return None  # nothing there (or a missing folder, refused later)
    if stat.S_ISLNK(link.st_mode):
        try:
            info = os.stat(target)
        except OSError as exc:
            raise OutputError(
                str(target),
                f"it is a symbolic link to {os.readlink(target)}, which cannot be followed "
                f"({_reason(exc)})",
                "a link to a regular file, or another file name",
            ) from None
        what = "a symbolic link to "
    else:
        info, what = link, ""
    if not stat.S_ISREG(info.st_mode):
        kind = next((text for test, text in _KINDS if test(info.st_mode)), "a special file")
        raise OutputError(
            str(target),
            f"it is {what}{kind}, not a regular file (--force replaces only regular files)",
            "the name of a file to write",
        )
    return info


def _destination(target: Path, force: bool) -> Path:
    """The file to replace (a link's target), after the kind, --force and folder checks."""
    info = _kind(target)
    real = Path(os.path.realpath(target)) if target.is_symlink() else target
    if info is not None and not force:
        raise OutputExistsError(target)
    folder = real.parent
    try:
        folder_info = os.stat(folder)
    except FileNotFoundError:
        raise OutputError(str(target), f"the folder {folder} does not exist") from None
    except NotADirectoryError:
        folder_info = None
    except OSError as exc:
        raise OutputError(str(target), f"the folder {folder}: {_reason(exc)}") from None
    if folder_info is None or not stat.S_ISDIR(folder_info.st_mode):
        parent = _first_non_folder(folder)
        raise OutputError(
            str(target), f"{parent} is not a folder", "a file name in an existing folder"
        )
    return real


def _first_non_folder(folder: Path) -> Path:
    """The first part of ``folder`` that exists and is not a folder."""
    for part in reversed([folder, *folder.parents]):
        if part.exists() and not part.is_dir():
            return part
    return folder


def _probe(real: Path, shown: Path) -> None:
    """Create and remove a temporary file next to ``real``: can the folder take it?"""
    handle, name = _temporary(real, shown)
    os.close(handle)
    with contextlib.suppress(OSError):
        os.unlink(name)


# --- temporary files -----------------------------------------------------------------------


def _host() -> str:
    import platform

    return "".join(c if c.isalnum() or c in ".-" else "_" for c in platform.node())


def _owner() -> tuple[int, int]:
    return (os.geteuid(), os.getegid()) if hasattr(os, "geteuid") else (-1, -1)


def _head(real: Path) -> str:
    """The start of the name of this process's, and other processes', temporary files."""
    return f".{real.name[:_NAME_KEPT]}{PARTIAL_MARK}{_host()}-"


def _temporary(real: Path, shown: Path) -> tuple[int, str]:
    folder = real.parent
    try:
        return tempfile.mkstemp(prefix=f"{_head(real)}{os.getpid()}-", dir=folder)
    except OSError as exc:
        raise OutputError(
            str(shown), f"the folder {folder} does not take new files ({_reason(exc)})"
        ) from None


def _alive(pid: int) -> bool:
    if pid == os.getpid() or os.name != "posix":
        return True  # (elsewhere os.kill(pid, 0) would end the process)
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True  # there, but another user's
    return True


def _remove_stale(real: Path) -> None:
    """Remove the temporary files of this output left by processes of this host that are
    gone (killed outright, so they could not clean up)."""
    head = _head(real)
    folder = real.parent
    try:
        names = [name for name in os.listdir(folder) if name.startswith(head)]
    except OSError:
        return
    for name in names:
        pid = name[len(head) :].split("-", 1)[0]
        if pid.isdigit() and not _alive(int(pid)):
            with contextlib.suppress(OSError):
                os.unlink(folder / name)


def _file_mode() -> int:
    """The mode a new file gets under the process's umask (mkstemp would give 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _reason(exc: OSError) -> str:
    return exc.strerror or str(exc) or type(exc).__name__


# --- writing -----------------------------------------------------------------------------


def write_atomic(path: str | Path, content: str | bytes, force: bool = False) -> Path:
    """Write ``content`` to ``path`` through a temporary file and a rename.

    The file appears complete or not at all; see the module's notes for what is refused.
    Inside :func:`all_or_nothing` it is moved into place when the block ends.

    Parameters
    ----------
    path : str or Path
        The file.
    content : str or bytes
        Text (written as UTF-8) or bytes.
    force : bool
        Replace an existing regular file (keeping its mode).

    Returns
    -------
    Path
        The path, as given.

    Raises
    ------
    OutputExistsError
        The file exists and ``force`` is False; it is left as it was.
    OutputError
        The file cannot be written there (see :func:`check_output`).
    """
    target = Path(path)
    outputs = _current.get()
    real = _check(target, force, (), None, outputs.inputs if outputs else ())
    data = content.encode("utf-8") if isinstance(content, str) else content
    pending = _Pending(target, real)
    try:
        assert pending.handle is not None
        with os.fdopen(pending.handle, "wb", closefd=False) as stream:
            stream.write(data)
        pending.finish()
        if outputs is not None:
            outputs.pending.append((pending, force))
        else:
            pending.move(force, ())
    except OSError as exc:
        pending.discard()
        if isinstance(exc, PropulsionError):
            raise
        raise OutputError(str(target), _reason(exc)) from exc
    except BaseException:
        pending.discard()
        raise
    return target


class StreamedCsv:
    """A CSV file written row block by row block, in sample order, and renamed into place
    only when complete (an interrupted study leaves no partial file behind).

    Blocks may arrive out of order (from parallel workers); each is held until the blocks
    before it have been written, so at most a few blocks wait in memory. The file is
    checked as :func:`check_output` does (a name ending in ``.csv``) when it is made.
    """

    def __init__(self, path: str | Path, header: list[str], force: bool = False) -> None:
        self.target = check_output(path, force, suffixes=(".csv",))
        self.force = force
        outputs = _current.get()
        self._outputs = outputs
        real = _destination(self.target, force)
        self._pending = _Pending(self.target, real)
        if outputs is not None:
            outputs.pending.append((self._pending, force))
        assert self._pending.handle is not None
        self.stream: IO[str] = os.fdopen(
            self._pending.handle, "w", encoding="utf-8", newline="", closefd=False
        )
        self.temporary = self._pending.temporary
        self.next_start = 0
        self.waiting: dict[int, tuple[int, str]] = {}
        self._write(",".join(header) + "\n")

    def _write(self, text: str) -> None:
        try:
            self.stream.write(text)
        except OSError as exc:
            self.abandon()
            raise OutputError(str(self.target), _reason(exc)) from exc

    def add(self, start: int, stop: int, text: str) -> None:
        """Queue the rows of samples start..stop-1 (``text`` holds whole lines)."""
        self.waiting[start] = (stop, text)
        while self.next_start in self.waiting:
            stop, block = self.waiting.pop(self.next_start)
            self._write(block)
            self.next_start = stop

    def close(self) -> Path:
        """Finish the file and move it into place (inside :func:`all_or_nothing`: when
        the block ends)."""
        try:
            self.stream.close()
            self._pending.finish()
        except OSError as exc:
            self.abandon()
            raise OutputError(str(self.target), _reason(exc)) from exc
        if self._outputs is None:
            self._pending.move(self.force, ())
        return self.target

    def abandon(self) -> None:
        """Drop the partial file."""
        with contextlib.suppress(OSError, ValueError):
            self.stream.close()
        self._pending.discard()
        if self._outputs is not None:
            self._outputs.pending = [p for p in self._outputs.pending if p[0] is not self._pending]
