"""The picture of `propulsion firing --plot`: the logs as read and the curves as written.

Drawn like the pictures of :mod:`propulsion.report.plots` (a ``Figure`` on the Agg canvas,
no pyplot, matplotlib imported inside the function, one ink colour, series told apart by
line style, every series with a ``gid``), with that module's style helpers.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from propulsion import __version__
from propulsion.units import DisplayUnits

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from propulsion.firing import FiringImport

__all__ = ["firing_figure"]

_STYLES = ("-", "--", "-.", ":", (0, (6, 2, 1, 2)), (0, (1, 2)))
"""Line styles that tell the firings apart (cycled)."""


def firing_figure(result: FiringImport, units: DisplayUnits, name: str = "") -> Figure:
    """Draw the firing logs, the burn windows and the curves as written.

    Parameters
    ----------
    result : FiringImport
        The import, in SI: times [s], thrusts [N].
    units : DisplayUnits
        Display units of the thrust axis (N or lbf).
    name : str
        The motor's name, for the caption.

    Returns
    -------
    matplotlib.figure.Figure
        8 × 5 in for one firing; 8 × 9 in with a second panel for several. Time runs from
        each firing's burn start [s].

        Series (gids), firing k counted from 1: ``raw:k`` (the log as read, offset and noise
        included; thin grey), ``curve:k`` (the firing's curve between the threshold
        crossings, as written for one firing), ``threshold:k`` (the threshold's thrust over
        the window), ``burn_start`` (time 0) and ``burn_end:k`` (vertical lines), and on the
        second panel ``normalised:k`` (each firing's curve stretched to the mean burn time)
        and ``written`` (the mean curve as written). With one firing, ``written`` is drawn
        on the first panel over ``curve:1``.

    References
    ----------
    .. [1] ISO/IEC 15948:2004 (PNG) and W3C SVG 1.1, 2nd ed., 2011: the file formats.
    """
    from matplotlib.figure import Figure

    from propulsion.report.plots import (
        DPI,
        FIGURE_SIZE,
        FLIGHT_FIGURE_SIZE,
        GREY,
        INK,
        _attach_canvas,
        _factor,
        _label,
        _legend,
        _style,
    )

    several = result.count > 1
    size = FLIGHT_FIGURE_SIZE if several else FIGURE_SIZE
    figure = Figure(figsize=size, dpi=DPI, facecolor="white", layout="constrained")
    _attach_canvas(figure)
    engine = figure.get_layout_engine()
    if engine is not None:
        engine.set(rect=(0.0, 0.03, 1.0, 0.97))  # type: ignore[call-arg]
    firings = "firing" if result.count == 1 else "firings"
    title = f"Static fire: {result.count} {firings}, {result.impulse_class} class"
    figure.suptitle(title, fontsize=11, color=INK, fontweight="bold")
    figure.text(
        0.01,
        0.006,
        f"{name or 'imported motor'} · propulsion {__version__} · planning estimates, not a "
        "safety analysis",
        fontsize=7,
        color=GREY,
        ha="left",
        va="bottom",
    )
    axes = figure.subplots(2, 1) if several else [figure.subplots(1, 1)]
    force = _factor("force", units)
    top = axes[0]
    longest = max(firing.burn_time for firing in result.firings)
    for k, firing in enumerate(result.firings, start=1):
        style = _STYLES[(k - 1) % len(_STYLES)]
        top.plot(
            firing.log_time - firing.burn_start,
            firing.log_thrust * force,
            color=GREY,
            linewidth=0.5,
            linestyle=style,
            gid=f"raw:{k}",
            label=f"log {k} as read" if several else "log as read",
        )
        top.plot(
            firing.time,
            firing.thrust * force,
            color=INK,
            linewidth=1.2,
            linestyle=style,
            gid=f"curve:{k}",
            label=f"firing {k} curve" if several else "curve",
        )
        top.plot(
            [0.0, firing.burn_time],
            [firing.threshold * force] * 2,
            color=GREY,
            linewidth=0.8,
            linestyle=(0, (1, 2)),
            gid=f"threshold:{k}",
        )
        top.axvline(
            firing.burn_time, color=GREY, linewidth=0.8, linestyle=style, gid=f"burn_end:{k}"
        )
    top.axvline(0.0, color=GREY, linewidth=0.8, linestyle="-", gid="burn_start")
    top.set_xlim(-0.25 * longest, 1.25 * longest)
    top.set_xlabel("Time from the burn start (s)")
    top.set_ylabel(_label("Thrust", "force", units))
    top.set_title(
        f"Logs and curves; burn window at "
        f"{100 * result.firings[0].threshold_fraction:.3g} % of peak thrust",
        fontsize=9,
        color=INK,
    )
    _style(top)
    if not several:
        top.plot(
            result.time,
            result.thrust * force,
            color=INK,
            linewidth=1.8,
            gid="written",
            label="as written",
        )
        _legend(top, loc="upper right")
        return figure
    _legend(top, loc="upper right")
    bottom = axes[1]
    mean_time = result.burn_time_mean
    for k, firing in enumerate(result.firings, start=1):
        bottom.plot(
            firing.time * (mean_time / firing.burn_time),
            firing.thrust * force,
            color=GREY,
            linewidth=0.7,
            linestyle=_STYLES[(k - 1) % len(_STYLES)],
            gid=f"normalised:{k}",
            label=f"firing {k}",
        )
    bottom.plot(
        result.time,
        np.asarray(result.thrust) * force,
        color=INK,
        linewidth=1.8,
        gid="written",
        label="mean curve (written)",
    )
    bottom.set_xlabel("Time, each firing stretched to the mean burn time (s)")
    bottom.set_ylabel(_label("Thrust", "force", units))
    bottom.set_title("The curve written: the mean on a normalised time base", fontsize=9, color=INK)
    _style(bottom)
    _legend(bottom, loc="upper right")
    return figure
