"""A spreadsheet-like terminal table of a result frame: one row per option, one column each.

Values arrive in SI (a pandas DataFrame whose column names carry their unit suffix) and are
converted to the display units here. The best value of each column is marked with ``★``
(bold green where the terminal has colour), so the marker survives plain-text output.
"""

from __future__ import annotations

import io
import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, Group, RenderableType, RenderResult
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from propulsion.report.export_tables import column_dimension, unit_dimension
from propulsion.units import DisplayUnits, format_column, to_display

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "BEST_MARK",
    "ColumnSpec",
    "best_rows",
    "fit_columns",
    "sheet_table",
    "sheet_view",
    "split_columns",
]

BEST_MARK = "★"
"""The marker put before the best value of a column."""

ColumnSpec = tuple[str, str | None, str | None]
"""(display title, dimension name of :mod:`propulsion.units` or None, "min"/"max"/None)."""


TIE_TOLERANCE = 1e-9
"""Values within this fraction of the column's largest magnitude tie for best (round-off
such as a steering loss of 1e-15 m/s against -7e-15 m/s is not a winner)."""


ALIGNED_SPAN = 1000.0
"""A column whose largest magnitude is within this factor of its smallest (nonzero) one
shows every value with the same decimals; beyond it each value keeps its own significant
figures."""


def _missing(value: Any) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def best_rows(values: Sequence[Any], better: str | None) -> set[int]:
    """The positions of the best values of a column (ties included).

    Parameters
    ----------
    values : sequence
        The column's values in SI; NaN, None and infinite values never win.
    better : str or None
        ``"min"`` or ``"max"``; None marks nothing.

    Returns
    -------
    set of int
        Row positions [index]. Empty when fewer than two values are finite, or when every
        finite value ties (there is nothing to choose between).

    References
    ----------
    .. [1] IEEE Std 754-2019, Floating-Point Arithmetic: NaN compares unordered, so it is
       left out explicitly; ties within :data:`TIE_TOLERANCE` of the column's scale.
    """
    if better not in ("min", "max"):
        return set()
    finite = {
        i: float(v) for i, v in enumerate(values) if _is_number(v) and math.isfinite(float(v))
    }
    if len(finite) < 2:
        return set()
    target = min(finite.values()) if better == "min" else max(finite.values())
    tolerance = TIE_TOLERANCE * max(abs(v) for v in finite.values())
    winners = {i for i, v in finite.items() if abs(v - target) <= tolerance}
    return set() if len(winners) == len(finite) else winners


def _numbers(
    values: Sequence[Any], dims: Sequence[str | None], units: DisplayUnits, digits: int
) -> dict[int, str]:
    """The texts of a column's numbers, by row: in display units, and with the same
    decimals for every row of one unit (``digits`` significant figures for the largest);
    integers of a dimensionless column as whole numbers. A column whose values span more
    than :data:`ALIGNED_SPAN` (a hobby rocket's 1.5 kg beside a launcher's 22,440 kg)
    gives each value its own ``digits`` significant figures instead: one count of decimals
    would show the small ones as ``2``."""
    texts: dict[int, str] = {}
    groups: dict[str | None, list[int]] = {}
    for index, (value, dim) in enumerate(zip(values, dims, strict=True)):
        if _missing(value):
            continue
        integral = isinstance(value, int | np.integer) and not isinstance(value, bool)
        if integral and dim is None:
            texts[index] = f"{int(value):,}"
        else:
            groups.setdefault(dim, []).append(index)
    for dim, rows in groups.items():
        shown = [
            to_display(float(values[i]), dim, units) if dim else float(values[i]) for i in rows
        ]
        sizes = [abs(v) for v in shown if math.isfinite(v) and v != 0.0]
        if sizes and max(sizes) > ALIGNED_SPAN * min(sizes):
            column = [format_column([v], digits)[0] for v in shown]
        else:
            column = format_column(shown, digits)
        texts.update(zip(rows, column, strict=True))
    return texts


def _visible(winners: set[int], texts: Mapping[int, str]) -> set[int]:
    """The best rows a reader can tell apart: those that show the best value as printed.
    When every row shows it (the differences are below the printed digits: round-off),
    none is marked."""
    if not winners:
        return set()
    shown = {texts[i] for i in winners if i in texts}
    marked = {i for i, text in texts.items() if text in shown}
    return set() if len(marked) == len(texts) else marked


def _specs(
    frame: pd.DataFrame, columns: Mapping[str, ColumnSpec] | Sequence[str]
) -> dict[str, ColumnSpec]:
    specs: dict[str, ColumnSpec] = {}
    if isinstance(columns, Mapping):
        for name, (title, dimension, better) in columns.items():
            specs[name] = (title, dimension, better)
    else:
        for name in columns:
            base, dimension = column_dimension(name)
            specs[name] = (base, dimension, None)
    missing = [name for name in specs if name not in frame.columns]
    if missing:
        raise KeyError(f"columns not in the frame: {', '.join(missing)}")
    return specs


def _legend(specs: Mapping[str, ColumnSpec], marked: set[str]) -> str:
    low = [specs[name][0] for name in specs if name in marked and specs[name][2] == "min"]
    high = [specs[name][0] for name in specs if name in marked and specs[name][2] == "max"]
    parts = []
    if low:
        parts.append("lowest " + ", ".join(low))
    if high:
        parts.append("highest " + ", ".join(high))
    text = f"{BEST_MARK} best in its column ({'; '.join(parts)})." if parts else ""
    return (text + " —: does not apply.").strip()


def _build(
    frame: pd.DataFrame,
    specs: Mapping[str, ColumnSpec],
    title: str,
    units: DisplayUnits,
    best: bool,
    digits: int,
) -> tuple[Table, set[str]]:
    from propulsion.report.tables import _table

    table = _table(title)
    marked: set[str] = set()
    cells: list[list[Text]] = []
    first_text = True
    for name, (heading, dimension, better) in specs.items():
        values = list(frame[name])
        present = [v for v in values if not _missing(v)]
        flags = bool(present) and all(isinstance(v, bool) for v in present)
        numbers = bool(present) and all(_is_number(v) for v in present)
        unit_column = f"{name}_unit"
        row_dims: list[str | None] = [dimension] * len(values)
        if dimension is None and unit_column in frame.columns:
            row_dims = [unit_dimension(u) for u in frame[unit_column]]
        header = heading
        if dimension is not None and units.label(dimension):
            header = f"{heading}\n({units.label(dimension)})"
        texts = _numbers(values, row_dims, units, digits) if numbers else {}
        winners: set[int] = set()
        if best and numbers:
            same_unit = len({d for d, v in zip(row_dims, values, strict=True) if not _missing(v)})
            # a column whose meaning varies per row (a margin of an apogee against one of
            # an orbit) names it in "<name>_target": rows of different meaning never rank
            kind_column = f"{name}_target"
            same_kind = kind_column not in frame.columns or len(set(frame[kind_column])) <= 1
            winners = best_rows(values, better) if same_unit <= 1 and same_kind else set()
            winners = _visible(winners, texts)
        if winners:
            marked.add(name)
        column: list[Text] = []
        for index, (value, dim) in enumerate(zip(values, row_dims, strict=True)):
            if _missing(value):
                column.append(Text("—", style="dim"))
            elif flags:
                column.append(Text("yes", style="green") if value else Text("no", style="red"))
            elif numbers:
                text = texts[index]
                # the unit varies per row: show it, on the number's line
                label = units.label(dim) if dim is not None and dimension is None else ""
                whole = bool(label)
                if whole:
                    text += f" {label}"
                if index in winners:
                    column.append(Text(f"{BEST_MARK}{text}", style="bold green", no_wrap=whole))
                else:
                    column.append(Text(text, no_wrap=whole))
            else:
                column.append(Text(str(value)))
        if not flags and not numbers and first_text:
            table.add_column(header, no_wrap=True, style="bold")
            first_text = False
        elif numbers:
            table.add_column(header, justify="right", overflow="fold")
        else:
            table.add_column(header, justify="center" if flags else "left", overflow="fold")
        cells.append(column)
    for row in zip(*cells, strict=True):
        table.add_row(*row)
    return table, marked


def sheet_table(
    frame: pd.DataFrame,
    columns: Mapping[str, ColumnSpec] | Sequence[str],
    title: str,
    units: DisplayUnits,
    best: bool = True,
    digits: int = 4,
) -> Table:
    """The table of :func:`sheet_view` alone, without the legend (same parameters).

    Parameters
    ----------
    frame, columns, title, units, best, digits
        As for :func:`sheet_view`.

    Returns
    -------
    rich.table.Table
        One row per option; its cells are :class:`rich.text.Text` in display units.

    References
    ----------
    .. [1] B. N. Taylor and A. Thompson, Guide for the Use of the International System of
       Units (SI), NIST Special Publication 811, 2008 ed., appendix B.
    """
    return _build(frame, _specs(frame, columns), title, units, best, digits)[0]


def sheet_view(
    frame: pd.DataFrame,
    columns: Mapping[str, ColumnSpec] | Sequence[str],
    title: str,
    units: DisplayUnits,
    best: bool = True,
    digits: int = 4,
) -> RenderableType:
    """A spreadsheet-like table of a result frame, in display units, best values marked.

    Parameters
    ----------
    frame : pandas.DataFrame
        One row per option, SI values; column names carry their unit suffix. A column
        whose unit differs per row has a ``<column>_unit`` companion (``m``, ``m/s``):
        its cells then show their own unit, and its best value is marked only when every
        row has the same unit.
    columns : mapping or sequence of str
        The columns to show, in order: column -> (title, dimension, better), or just
        names (the dimension then follows from the suffix and nothing is marked). Choose
        a subset to stay readable in a narrow terminal (see :func:`fit_columns`).
    title : str
        The table's title.
    units : DisplayUnits
        Display units (``propulsion.units.display_units("us")`` for ft, lb, lbf, ft/s).
    best : bool
        Mark the best value of each column that has a better direction with ``★``, bold
        green (see :func:`best_rows`), and explain the marker under the table.
    digits : int
        Significant figures of the numbers [count].

    Returns
    -------
    rich.console.RenderableType
        The table (headers with their unit on a line of their own, so they wrap in narrow
        terminals; the first text column does not wrap; missing values as ``—``, flags as
        yes/no), then a one-line legend of the marker.

    References
    ----------
    .. [1] B. N. Taylor and A. Thompson, Guide for the Use of the International System of
       Units (SI), NIST Special Publication 811, 2008 ed., appendix B (conversion factors:
       1 ft = 0.3048 m, 1 lb = 0.45359237 kg exactly, by the international yard and pound
       agreement of 1959).
    """
    specs = _specs(frame, columns)
    table, marked = _build(frame, specs, title, units, best, digits)
    if not best:
        return _Fitted(table)
    return Group(_Fitted(table), Text(_legend(specs, marked), style="dim"))


def _words(renderable: Any) -> tuple[int, int]:
    """Narrowest and natural width of a cell or header [characters]: its longest word
    (its longest line when it must not wrap) and its longest line."""
    plain = renderable.plain if isinstance(renderable, Text) else str(renderable)
    lines = plain.splitlines() or [""]
    longest = max(cell_len(line) for line in lines)
    if isinstance(renderable, Text) and renderable.no_wrap:
        return longest, longest
    words = plain.split() or [""]
    return max(cell_len(word) for word in words), longest


def _column_sizes(table: Table) -> tuple[list[tuple[int, int]], int]:
    """Each column's narrowest and natural content width, and what the table adds
    (padding, edges) [characters]. Resets any width set by an earlier rendering."""
    for column in table.columns:
        column.width = None
    sizes = []
    for column in table.columns:
        measured = [_words(column.header), *(_words(cell) for cell in column.cells)]
        low, high = max(m[0] for m in measured), max(m[1] for m in measured)
        if column.no_wrap:  # its cells stay on one line: as wide as the widest
            low = high
        sizes.append((low, high))
    # measured unconstrained: rich clamps a measurement to the console's width
    wide = Console(width=100_000, file=io.StringIO())
    natural = Measurement.get(wide, wide.options, table).maximum
    return sizes, natural - sum(high for _, high in sizes)


class _Fitted:
    """A table that, when it is too wide, narrows its columns to the console's width.

    rich narrows the widest columns first, which can break a number over two lines while
    a header still has room to wrap. This gives every column at least its longest word
    (a number stays whole) and shares out the rest in proportion to what each could use.
    """

    def __init__(self, table: Table) -> None:
        self.table = table

    def __rich_measure__(self, console: Console, options: ConsoleOptions) -> Measurement:
        for column in self.table.columns:
            column.width = None
        return Measurement.get(console, options, self.table)

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        table = self.table
        sizes, overhead = _column_sizes(table)
        if overhead + sum(high for _, high in sizes) > options.max_width:
            room = options.max_width - overhead - sum(low for low, _ in sizes)
            slack = sum(high - low for low, high in sizes)
            for column, (low, high) in zip(table.columns, sizes, strict=True):
                share = (room * (high - low)) // slack if slack > 0 and room > 0 else 0
                column.width = min(high, low + share)
        yield table


def fit_columns(
    frame: pd.DataFrame,
    columns: Mapping[str, ColumnSpec],
    units: DisplayUnits,
    width: int,
    keep: int = 1,
    last: Sequence[str] = (),
) -> list[str]:
    """The most important columns whose table fits a terminal width.

    Parameters
    ----------
    frame : pandas.DataFrame
        The result frame (SI).
    columns : mapping
        Column -> (title, dimension, better), most important first.
    units : DisplayUnits
        Display units (they change the width of the numbers).
    width : int
        Terminal width [characters].
    keep : int
        The first ``keep`` columns are kept whatever the width [count].
    last : sequence of str
        Columns dropped only when every other one (but the first ``keep``) is gone: a
        verdict column, which a reader looks for first.

    Returns
    -------
    list of str
        The columns in their order (at least the first ``keep``) whose table, with headers
        wrapped and numbers whole, is at most ``width`` wide: the least important dropped
        first, from the end, those in ``last`` after all the others.

    References
    ----------
    .. [1] W. McGugan, Rich (Python library) documentation, "Measurement" (the minimum
       width of a renderable).
    """
    names = list(columns)
    order = [name for name in names[keep:] if name not in last]
    order = [name for name in names[keep:] if name in last] + order  # dropped from the end
    while order and _minimum_width(frame, columns, names, units) > width:
        names.remove(order.pop())
    return names


def _minimum_width(
    frame: pd.DataFrame,
    columns: Mapping[str, ColumnSpec],
    names: Sequence[str],
    units: DisplayUnits,
) -> int:
    specs = {name: columns[name] for name in names}
    sizes, overhead = _column_sizes(_build(frame, specs, "", units, True, 4)[0])
    return overhead + sum(low for low, _ in sizes)


def split_columns(
    frame: pd.DataFrame,
    columns: Mapping[str, ColumnSpec],
    units: DisplayUnits,
    width: int,
    keep: int = 1,
) -> list[list[str]]:
    """Split the columns into blocks whose tables each fit a terminal width.

    Parameters
    ----------
    frame : pandas.DataFrame
        The result frame (SI).
    columns : mapping
        Column -> (title, dimension, better), in the order to show.
    units : DisplayUnits
        Display units (they change the width of the numbers).
    width : int
        Terminal width [characters].
    keep : int
        The first ``keep`` columns (the option's name) start every block [count].

    Returns
    -------
    list of list of str
        The blocks, in order; each starts with the kept columns and is at most ``width``
        wide unless a single column is wider on its own.

    References
    ----------
    .. [1] W. McGugan, Rich (Python library) documentation, "Measurement".
    """
    names = list(columns)
    kept, rest = names[:keep], names[keep:]
    blocks: list[list[str]] = []
    block = list(kept)
    for name in rest:
        trial = [*block, name]
        if len(block) > len(kept) and _minimum_width(frame, columns, trial, units) > width:
            blocks.append(block)
            block = [*kept, name]
        else:
            block = trial
    blocks.append(block)
    return blocks
