"""Writing output files whole or not at all, and never over a user's file by accident."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from propulsion.errors import OutputExistsError, PropulsionError

__all__ = ["OutputError", "StreamedCsv", "write_atomic"]


class OutputError(PropulsionError, OSError):
    """An output file that cannot be written (missing folder, no permission)."""

    def __init__(self, path: str, reason: str) -> None:
        self.path = path
        self.reason = reason
        super().__init__(path, reason)

    def __str__(self) -> str:
        return f"cannot write {self.path}: {self.reason}."


def _file_mode() -> int:
    """The mode a new file gets under the process's umask (mkstemp would give 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def write_atomic(path: str | Path, content: str | bytes, force: bool = False) -> Path:
    """Write ``content`` to ``path`` through a temporary file and a rename.

    The file appears complete or not at all. An existing file is replaced only with
    ``force``; otherwise :class:`~propulsion.errors.OutputExistsError` is raised and the
    file is left as it was.
    """
    target = Path(path)
    if target.exists() and not force:
        raise OutputExistsError(target)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(str(target), f"the folder {folder} does not exist")
    data = content.encode("utf-8") if isinstance(content, str) else content
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", dir=folder)
    except OSError as exc:
        raise OutputError(str(target), exc.strerror or str(exc)) from exc
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
        os.chmod(temporary, _file_mode())
        os.replace(temporary, target)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return target


class StreamedCsv:
    """A CSV file written row block by row block, in sample order, and renamed into place
    only when complete (an interrupted study leaves no partial file behind).

    Blocks may arrive out of order (from parallel workers); each is held until the blocks
    before it have been written, so at most a few blocks wait in memory.
    """

    def __init__(self, path: str | Path, header: list[str], force: bool = False) -> None:
        self.target = Path(path)
        if self.target.exists() and not force:
            raise OutputExistsError(self.target)
        folder = self.target.parent if str(self.target.parent) else Path(".")
        if not folder.is_dir():
            raise OutputError(str(self.target), f"the folder {folder} does not exist")
        handle, self.temporary = tempfile.mkstemp(prefix=f".{self.target.name}.", dir=folder)
        self.stream = os.fdopen(handle, "w", encoding="utf-8", newline="")
        self.stream.write(",".join(header) + "\n")
        self.next_start = 0
        self.waiting: dict[int, tuple[int, str]] = {}

    def add(self, start: int, stop: int, text: str) -> None:
        """Queue the rows of samples start..stop-1 (``text`` holds whole lines)."""
        self.waiting[start] = (stop, text)
        while self.next_start in self.waiting:
            stop, block = self.waiting.pop(self.next_start)
            self.stream.write(block)
            self.next_start = stop

    def close(self) -> Path:
        """Finish the file and move it into place."""
        self.stream.close()
        os.chmod(self.temporary, _file_mode())
        os.replace(self.temporary, self.target)
        return self.target

    def abandon(self) -> None:
        """Drop the partial file."""
        self.stream.close()
        Path(self.temporary).unlink(missing_ok=True)
