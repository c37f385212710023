"""The terminal view of `propulsion firing`: one table per firing, the summary, the
``[[dispersion]]`` tables for a mission file, and the safety caution.

Values arrive in SI and are converted to the display units (``--units``) here. Every table
has two columns, a quantity and its value, so it fits 80 columns whatever the file names.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING

from rich import box
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from propulsion.report.tables import caution_panel
from propulsion.text import plural
from propulsion.units import (
    DisplayUnits,
    column_decimals,
    format_fixed,
    format_number,
    format_plain,
    to_display,
)

if TYPE_CHECKING:
    from propulsion.firing import Firing, FiringImport

__all__ = ["filter_text", "firing_view", "threshold_text"]


def _num(value: float, digits: int = 4) -> str:
    return format_number(value, digits) if math.isfinite(value) else "—"


def _count(number: int, noun: str) -> str:
    """``"1 firing"``, ``"3 firings"``: a count with its noun."""
    return plural(number, noun)


def _q(value: float, dimension: str, units: DisplayUnits, digits: int = 4) -> str:
    """A value in its display unit, with the unit."""
    label = units.label(dimension)
    return f"{_num(to_display(value, dimension, units), digits)} {label}".strip()


def _plus_minus(value: float, error: float, dimension: str, units: DisplayUnits) -> str:
    """``value ± error unit``: the error to two significant figures, the value to the same
    decimals (the error's last digit is the value's); without an error, five figures."""
    shown_value = to_display(value, dimension, units)
    shown_error = to_display(error, dimension, units)
    if not (math.isfinite(shown_error) and shown_error > 0 and math.isfinite(shown_value)):
        return f"{_num(shown_value, 5)} ± {_num(shown_error, 2)} {units.label(dimension)}".strip()
    decimals = column_decimals([shown_error], 2)
    text = f"{format_fixed(shown_value, decimals)} ± {format_fixed(shown_error, decimals)}"
    return f"{text} {units.label(dimension)}".strip()


def _percent(value: float, digits: int = 3) -> str:
    """A share in percent, ``digits`` significant figures without trailing zeros: ``5%``,
    ``0.679%``."""
    return f"{format_plain(100.0 * value, digits)}%"


def _table(title: str) -> Table:
    table = Table(
        title=title,
        title_justify="left",
        box=box.SIMPLE_HEAVY,
        title_style="bold",
        pad_edge=False,
        collapse_padding=True,
        show_header=False,
    )
    table.add_column("Quantity", no_wrap=True, style="bold")
    table.add_column("Value", overflow="fold")
    return table


def threshold_text(fraction: float) -> str:
    """The burn threshold in words, with the default's status."""
    text = f"{_percent(fraction)} of peak thrust"
    from propulsion.firing import DEFAULT_THRESHOLD

    if fraction == DEFAULT_THRESHOLD:
        text += " (the default: common practice, no source)"
    return text


def filter_text(cutoff: float | None) -> str:
    """What the filter did, in words."""
    from propulsion.firing import FILTER_ORDER

    if cutoff is None:
        return "none (raw samples after the tare)"
    return (
        f"zero-phase Butterworth low-pass, order {FILTER_ORDER}, run forwards and backwards, "
        f"cutoff {_num(cutoff, 4)} Hz (gain 1/2 there)"
    )


def _firing_table(index: int, firing: Firing, result: FiringImport, units: DisplayUnits) -> Table:
    table = _table(f"Firing {index}: {firing.source}")
    table.add_row(
        "Samples",
        f"{firing.log_time.size:,} at {_num(firing.sample_interval * 1e3, 4)} ms intervals",
    )
    table.add_row(
        "Tare",
        f"{_q(firing.tare, 'force', units)}: mean of the first {firing.tare_samples:,} samples "
        f"(to {_num(firing.tare_end, 4)} s), before the thrust rose",
    )
    table.add_row("Load cell noise", f"{_q(firing.noise, 'force', units)} (standard deviation)")
    table.add_row(
        "Burn window",
        f"{_num(firing.burn_start, 5)} s to {_num(firing.burn_end, 5)} s of the log, at "
        f"{_q(firing.threshold, 'force', units)}",
    )
    table.add_row("Burn time", _plus_minus(firing.burn_time, firing.burn_time_error, "time", units))
    table.add_row("Peak thrust", _q(firing.peak_thrust, "force", units))
    table.add_row("Average thrust", _q(firing.average_thrust, "force", units))
    table.add_row(
        "Total impulse",
        _plus_minus(firing.total_impulse, firing.impulse_error, "impulse", units)
        + f" (Simpson's rule: {_q(firing.simpson_impulse, 'impulse', units, 6)})",
    )
    table.add_row(
        "Left outside",
        f"{_q(firing.outside_impulse, 'impulse', units, 2)} in the tails below the threshold",
    )
    isp = firing.specific_impulse(result.propellant_mass)
    table.add_row("Isp", "— (give --propellant-mass)" if isp is None else f"{_num(isp)} s")
    table.add_row("Class", firing.impulse_class)
    if firing.clipped:
        table.add_row(
            "Below 0 N", f"{_count(firing.clipped, 'sample')} in the window, written as 0 N"
        )
    return table


def _summary_table(
    result: FiringImport, units: DisplayUnits, output: Path | None, name: str
) -> Table:
    count = result.count
    if count == 1:
        table = _table("The motor (one firing)")
    else:
        table = _table(f"Summary of {count} firings (mean ± sample standard deviation)")
        from propulsion.firing import spread_interval

        for title, mean, std, relative, dimension in (
            (
                "Total impulse",
                result.impulse_mean,
                result.impulse_std,
                result.impulse_relative_std,
                "impulse",
            ),
            (
                "Burn time",
                result.burn_time_mean,
                result.burn_time_std,
                result.burn_time_relative_std,
                "time",
            ),
        ):
            low, high = spread_interval(std, count)
            table.add_row(
                title,
                f"{_plus_minus(mean, std, dimension, units)} ({_percent(relative)}); "
                f"95% interval of the standard deviation {_percent(low / mean, 2)} to "
                f"{_percent(high / mean, 2)}",
            )
    if result.curve == "mean curve":
        curve = (
            f"the mean of the {count} firings on a normalised time base, scaled to their mean "
            "total impulse and mean burn time"
        )
    else:
        curve = "the firing's own, between the threshold crossings"
    table.add_row("Curve", curve)
    table.add_row("Name", name)
    table.add_row("Class", result.impulse_class)
    table.add_row("Total impulse", _q(result.total_impulse, "impulse", units, 5))
    table.add_row("Burn time", _q(result.burn_time, "time", units, 5))
    table.add_row("Average thrust", _q(result.average_thrust, "force", units))
    table.add_row("Peak thrust", _q(result.peak_thrust, "force", units))
    if result.propellant_mass is not None and result.specific_impulse is not None:
        # the user's own figure: no trailing zeros it did not have ("0.42 kg")
        shown = format_plain(to_display(result.propellant_mass, "mass", units))
        table.add_row("Propellant", f"{shown} {units.label('mass')}")
        table.add_row("Isp", f"{_num(result.specific_impulse)} s")
    else:
        table.add_row("Isp", "— (give --propellant-mass)")
    table.add_row("Points", f"{result.time.size:,}")
    table.add_row(
        "Motor file",
        f"written to {output}" if output is not None else "not written (give -o FILE.csv)",
    )
    return table


def firing_view(
    result: FiringImport,
    units: DisplayUnits,
    output: Path | None = None,
    name: str = "",
    stage: str | None = None,
) -> RenderableType:
    """What `propulsion firing` shows.

    Parameters
    ----------
    result : FiringImport
        The import, in SI.
    units : DisplayUnits
        The display units.
    output : Path or None
        The motor file written, if any.
    name : str
        The motor's name.
    stage : str or None
        The stage named in the ``[[dispersion]]`` tables (``NAME`` when None).

    Returns
    -------
    RenderableType
        The settings, a table per firing, the summary, the dispersion tables (two firings or
        more), the notes and the safety caution.
    """
    first = result.firings[0]
    parts: list[RenderableType] = []
    head = Text()
    head.append(f"Static-fire import of {_count(result.count, 'firing')}\n", style="bold")
    head.append(f"Burn threshold: {threshold_text(first.threshold_fraction)}\n")
    head.append(f"Filter: {filter_text(first.cutoff)}")
    parts.append(head)
    for index, firing in enumerate(result.firings, start=1):
        parts.append(_firing_table(index, firing, result, units))
    parts.append(_summary_table(result, units, output, name))
    block = result.dispersion_toml(stage)
    if block is None:
        parts.append(
            Text(
                "One firing: no spread of total impulse or burn time. Fire the motor again "
                "and import the logs together for [[dispersion]] tables.",
                style="dim",
            )
        )
    else:
        where = f"stage '{stage}'" if stage is not None else "your stage (replace NAME)"
        parts.append(Text(f"[[dispersion]] tables for the mission file, {where}:", style="bold"))
        parts.append(Text(block))
    if result.notes:
        notes = Text()
        for note in result.notes:
            notes.append("! ", style="bold yellow")
            notes.append(f"{note}.\n")
        parts.append(notes)
    parts.append(
        Text(
            "Impulse error: trapezoid against Simpson's rule, plus the edges of the window, "
            "plus two standard deviations of the noise, the tare and the threshold crossings "
            "(white noise assumed; drift of the load cell is not in it).",
            style="dim",
        )
    )
    parts.append(caution_panel())
    return Group(*parts)
