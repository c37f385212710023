"""Writing output files whole or not at all, and never over a user's file by accident."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from propulsion.errors import OutputExistsError, PropulsionError

__all__ = ["write_atomic"]


class OutputError(PropulsionError, OSError):
    """An output file that cannot be written (missing folder, no permission)."""

    def __init__(self, path: str, reason: str) -> None:
        self.path = path
        self.reason = reason
        super().__init__(path, reason)

    def __str__(self) -> str:
        return f"cannot write {self.path}: {self.reason}."


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
        os.replace(temporary, target)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return target
