"""Exports of result tables: CSV, Excel (.xlsx) or Markdown, chosen by the file extension.

A result frame holds SI values and names each column with its unit suffix (``apogee_m``,
``liftoff_mass_kg``). The export converts the values to display units when asked, writes the
unit into each header (``apogee [ft]``), and writes the file whole or not at all through
:func:`propulsion.report.files.write_atomic`.
"""

from __future__ import annotations

import io
import math
from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any

from propulsion.errors import PropulsionError
from propulsion.report.safe_text import spreadsheet_text
from propulsion.units import DIMENSIONS, DisplayUnits, format_number, to_display

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "EXPORT_FORMATS",
    "ExportFormatError",
    "check_export_path",
    "column_dimension",
    "display_frame",
    "export_table",
    "markdown_table",
    "safe_cells",
    "unit_dimension",
]

EXPORT_FORMATS = {".csv": "CSV", ".xlsx": "Excel workbook", ".md": "Markdown table"}
"""The file extensions :func:`export_table` writes, with what each one is."""

# SI suffix of each dimension in column names, longest first where one ends another
_SUFFIXES = (
    ("_n_s", "impulse"),
    ("_m_s", "speed"),
    ("_kg", "mass"),
    ("_pa", "pressure"),
    ("_n", "force"),
    ("_m", "length"),
    ("_s", "time"),
)
_SUFFIX_OF = {dimension: suffix for suffix, dimension in _SUFFIXES}
# unit text in a "<column>_unit" column -> dimension (the per-row unit of that column)
_UNIT_TEXT = {"m": "length", "m/s": "speed", "kg": "mass", "N": "force", "Pa": "pressure"}


class ExportFormatError(PropulsionError, ValueError):
    """An export file that cannot be written in the format its extension asks for.

    Without ``reason`` the extension is not one of :data:`EXPORT_FORMATS`.
    """

    def __init__(self, path: str | Path, reason: str = "") -> None:
        self.path = str(path)
        self.reason = reason
        super().__init__(self.path, reason)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path, self.reason))

    def __str__(self) -> str:
        if self.reason:
            return f"cannot export to {self.path}: {self.reason.rstrip('.')}."
        suffix = Path(self.path).suffix or "no extension"
        allowed = ", ".join(EXPORT_FORMATS)
        return f"cannot export to {self.path}: {suffix} is not a known format. Expected {allowed}."


def column_dimension(
    column: str, dimensions: Mapping[str, str | None] | None = None
) -> tuple[str, str | None]:
    """The quantity name and dimension of a result column, from its SI unit suffix.

    Parameters
    ----------
    column : str
        A column name such as ``apogee_m``, ``drag_loss_m_s`` or ``max_mach``.
    dimensions : mapping or None
        Column -> dimension (or None), taking precedence over the suffix.

    Returns
    -------
    tuple of (str, str or None)
        The name without its unit suffix (``apogee``) and the dimension name of
        :mod:`propulsion.units` (``"length"``), or the whole name and None.

    References
    ----------
    .. [1] BIPM, The International System of Units (SI), 9th ed., 2019, table 4 (the
       derived units N, Pa and their symbols).
    """
    if dimensions is not None and column in dimensions:
        dimension = dimensions[column]
        suffix = _SUFFIX_OF.get(dimension or "", "")
        if suffix and column.endswith(suffix):
            return column[: -len(suffix)], dimension
        return column, dimension
    for suffix, dimension in _SUFFIXES:
        if column.endswith(suffix) and len(column) > len(suffix):
            return column[: -len(suffix)], dimension
    return column, None


def unit_dimension(unit: Any) -> str | None:
    """The dimension of an SI unit text (``"m"``, ``"m/s"``), or None when unknown or empty.

    Parameters
    ----------
    unit : Any
        A unit text from a ``<column>_unit`` column.

    Returns
    -------
    str or None
        The dimension name of :mod:`propulsion.units`.

    References
    ----------
    .. [1] BIPM, The International System of Units (SI), 9th ed., 2019, tables 2 and 4.
    """
    return _UNIT_TEXT.get(unit) if isinstance(unit, str) else None


def _unit_text(dimension: str, units: DisplayUnits | None) -> str:
    text = units.unit(dimension) if units is not None else DIMENSIONS[dimension]
    return text.replace("**", "^")


def _convert(value: Any, dimension: str | None, units: DisplayUnits | None) -> Any:
    if units is None or dimension is None or isinstance(value, bool):
        return value
    if isinstance(value, int | float) and math.isfinite(value):
        return to_display(float(value), dimension, units)
    return value


def display_frame(
    frame: pd.DataFrame,
    units: DisplayUnits | None = None,
    dimensions: Mapping[str, str | None] | None = None,
) -> pd.DataFrame:
    """The frame with values in display units and the unit in each header.

    Parameters
    ----------
    frame : pandas.DataFrame
        SI values; column names carry their unit suffix (``apogee_m``). A column whose
        unit changes from row to row has a companion ``<column>_unit`` column (``m``,
        ``m/s``); its values are converted row by row and the companion shows the new unit.
    units : DisplayUnits or None
        Display units; None keeps SI.
    dimensions : mapping or None
        Column -> dimension, taking precedence over the suffix.

    Returns
    -------
    pandas.DataFrame
        A new frame with headers such as ``apogee [ft]`` and values in those units.

    References
    ----------
    .. [1] B. N. Taylor and A. Thompson, Guide for the Use of the International System of
       Units (SI), NIST Special Publication 811, 2008 ed., appendix B (conversion factors;
       1 ft = 0.3048 m and 1 lb = 0.45359237 kg exactly).
    """
    out = frame.copy()
    names: dict[str, str] = {}
    per_row = {column[: -len("_unit")] for column in frame.columns if column.endswith("_unit")}
    for column in frame.columns:
        name, dimension = column_dimension(column, dimensions)
        if column in per_row and dimension is None:
            row_dimensions = [unit_dimension(u) for u in frame[f"{column}_unit"]]
            out[column] = [
                _convert(value, dim, units)
                for value, dim in zip(frame[column], row_dimensions, strict=True)
            ]
            out[f"{column}_unit"] = [
                _unit_text(dim, units) if dim is not None else unit
                for unit, dim in zip(frame[f"{column}_unit"], row_dimensions, strict=True)
            ]
            names[column] = column
        elif dimension is not None:
            out[column] = [_convert(value, dimension, units) for value in frame[column]]
            names[column] = f"{name} [{_unit_text(dimension, units)}]"
        else:
            names[column] = column
    return out.rename(columns=names)


def safe_cells(frame: pd.DataFrame) -> pd.DataFrame:
    """The frame with every text cell and header made safe for a spreadsheet program.

    Parameters
    ----------
    frame : pandas.DataFrame
        A table about to be exported; its text may come from a mission file (a name, a
        description, a file name).

    Returns
    -------
    pandas.DataFrame
        A new frame: each text (``str``) cell and header through
        :func:`propulsion.report.safe_text.spreadsheet_text` (control characters removed, a
        single quote before a leading ``=``, ``+``, ``-``, ``@`` or tab, so that no program
        opens it as a formula). Numbers, flags and missing values are left as they are: a
        negative number stays a number.

    References
    ----------
    .. [1] OWASP Foundation, "CSV Injection", owasp.org/www-community/attacks/CSV_Injection.
    """
    out = frame.copy()
    for column in frame.columns:
        values = list(frame[column])
        if any(isinstance(value, str) for value in values):
            out[column] = [
                spreadsheet_text(value) if isinstance(value, str) else value for value in values
            ]
    return out.rename(columns={c: spreadsheet_text(c) for c in frame.columns if isinstance(c, str)})


def _cell(value: Any, digits: int) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        value = float(value)
        if math.isnan(value):
            return "—"
        if math.isinf(value):
            return "∞" if value > 0 else "-∞"
        return format_number(value, digits)
    text = str(value).replace("\\", "\\\\").replace("|", "\\|")
    return " ".join(text.split())


def markdown_table(frame: pd.DataFrame, digits: int = 4) -> str:
    """A frame as a Markdown pipe table: a header line, a separator line, one line per row.

    Parameters
    ----------
    frame : pandas.DataFrame
        The table; headers are used as they are.
    digits : int
        Significant figures of the numbers [count].

    Returns
    -------
    str
        The table text, numbers right-aligned, missing values as ``—``, flags as yes/no.

    References
    ----------
    .. [1] GitHub Flavored Markdown Spec, version 0.29-gfm, 2019, section "Tables
       (extension)" (recalled from memory).
    """
    columns = list(frame.columns)
    numeric = []
    for column in columns:
        present = [v for v in frame[column] if v is not None and not _is_nan(v)]
        numeric.append(
            bool(present)
            and all(isinstance(v, int | float) and not isinstance(v, bool) for v in present)
        )
    header = "| " + " | ".join(_cell(str(c), digits) for c in columns) + " |"
    separator = "|" + "|".join("---:" if num else ":---" for num in numeric) + "|"
    lines = [header, separator]
    for row in frame.itertuples(index=False, name=None):
        lines.append("| " + " | ".join(_cell(value, digits) for value in row) + " |")
    return "\n".join(lines) + "\n"


def _is_nan(value: Any) -> bool:
    return isinstance(value, float) and math.isnan(value)


def check_export_path(path: str | Path, force: bool = False) -> str:
    """Check an export file name before any work is done, and return its format.

    Parameters
    ----------
    path : str or Path
        The file to write.
    force : bool
        Whether an existing file may be replaced.

    Returns
    -------
    str
        The extension, lower case (``".csv"``, ``".xlsx"`` or ``".md"``).

    Raises
    ------
    ExportFormatError
        The extension is not one of :data:`EXPORT_FORMATS`.
    OutputExistsError
        The file exists and ``force`` is False.
    OutputError
        An input of the command, not a regular file, or a folder that takes no file
        (:func:`propulsion.report.files.check_output`).

    References
    ----------
    .. [1] RFC 4180 (CSV), ECMA-376 Part 1 (.xlsx) and the GitHub Flavored Markdown Spec
       0.29-gfm (pipe tables): the formats behind the three extensions.
    """
    from propulsion.report.files import check_output

    check_output(path, force, check_name=_export_suffix)
    return _export_suffix(Path(path))


def _export_suffix(target: Path) -> str:
    """The extension, lower case; :class:`ExportFormatError` for an unknown one."""
    suffix = target.suffix.lower()
    if suffix not in EXPORT_FORMATS:
        raise ExportFormatError(target)
    return suffix


def _xlsx_bytes(frame: pd.DataFrame, sheet_name: str, path: str | Path) -> bytes:
    import importlib.util

    if importlib.util.find_spec("openpyxl") is None:
        raise ExportFormatError(
            path, "writing .xlsx needs the openpyxl package (pip install openpyxl)"
        )
    import pandas as pd
    from openpyxl.utils import get_column_letter

    buffer = io.BytesIO()
    with pd.ExcelWriter(buffer, engine="openpyxl") as writer:
        frame.to_excel(writer, index=False, sheet_name=sheet_name, freeze_panes=(1, 1))
        sheet = writer.sheets[sheet_name]
        for index, column in enumerate(frame.columns, start=1):
            width = max([len(str(column))] + [len(str(v)) for v in frame[column]])
            sheet.column_dimensions[get_column_letter(index)].width = min(width + 2, 40)
    return buffer.getvalue()


def export_table(
    frame: pd.DataFrame,
    path: str | Path,
    force: bool = False,
    units: DisplayUnits | None = None,
    dimensions: Mapping[str, str | None] | None = None,
    sheet_name: str = "table",
) -> Path:
    """Write a result frame to a CSV, Excel or Markdown file, chosen by the extension.

    Parameters
    ----------
    frame : pandas.DataFrame
        SI values, column names with their unit suffix (``apogee_m``).
    path : str or Path
        The file: ``.csv`` (pandas ``to_csv``, full float precision), ``.xlsx`` (one
        sheet, through openpyxl) or ``.md`` (a Markdown pipe table, 4 significant figures).
    force : bool
        Replace the file if it exists.
    units : DisplayUnits or None
        Display units of the values and headers (``apogee [ft]``); None keeps SI
        (``apogee [m]``, ``max_dynamic_pressure [Pa]``).
    dimensions : mapping or None
        Column -> dimension, taking precedence over the unit suffix.
    sheet_name : str
        The worksheet's name in an ``.xlsx`` file.

    Returns
    -------
    Path
        The file written. It is written whole or not at all (a temporary file in the
        same folder, then a rename).

    Raises
    ------
    ExportFormatError
        An unknown extension (the message names the known ones).
    OutputExistsError
        The file exists and ``force`` is False; the file is left as it was.

    References
    ----------
    .. [1] Y. Shafranovich, Common Format and MIME Type for Comma-Separated Values (CSV)
       Files, RFC 4180, 2005.
    .. [2] ECMA-376, Office Open XML File Formats, Part 1 (the .xlsx workbook).
    .. [3] GitHub Flavored Markdown Spec, version 0.29-gfm, 2019, "Tables (extension)"
       (recalled from memory).
    .. [4] OWASP Foundation, "CSV Injection", owasp.org/www-community/attacks/CSV_Injection
       (text cells are written by :func:`safe_cells`).
    """
    # the name only: write_atomic checks the rest (check_export_path claimed the file)
    suffix = _export_suffix(Path(path))
    # text from mission files: no control characters, no formulas (in all three formats)
    shown = safe_cells(display_frame(frame, units, dimensions))
    content: str | bytes
    if suffix == ".csv":
        buffer = io.StringIO()
        shown.to_csv(buffer, index=False)
        content = buffer.getvalue()
    elif suffix == ".xlsx":
        content = _xlsx_bytes(shown, sheet_name, path)
    else:
        content = markdown_table(shown)
    from propulsion.report.files import write_atomic

    return write_atomic(path, content, force)
