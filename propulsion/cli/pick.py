"""`propulsion pick`: choose motors and stack size for the airframe sections of a mission."""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Sequence
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING

import typer

from propulsion.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    emit_json,
    guard,
    stderr,
    stdout,
)

if TYPE_CHECKING:
    from rich.console import RenderableType
    from rich.text import Text

    from propulsion.selection import Candidate, PickResult, ShortStack

    Choice = tuple[tuple[str, int, str | None], ...]
    from propulsion.units import DisplayUnits

__all__ = ["Rank", "parse_motors", "parse_stage_counts", "pick_command", "pick_view"]


class Rank(StrEnum):
    """Ranking criteria, as written on the command line."""

    least_impulse = "least-impulse"
    least_mass = "least-mass"
    nearest_apogee = "nearest-apogee"
    largest_margin = "largest-margin"


_RANGE_RE = re.compile(r"^\s*(\d{1,3})\s*(?:\.\.\s*(\d{1,3})\s*)?$")


def parse_stage_counts(text: str) -> tuple[int, ...]:
    """Read ``--stages``: a count (``"2"``) or an inclusive range (``"1..2"``).

    Parameters
    ----------
    text : str
        The option's text.

    Returns
    -------
    tuple of int
        The stage counts, ascending [count].

    Raises
    ------
    PickError
        Text that is neither a count nor a range, or a range that runs backwards.
    """
    from propulsion.selection import PickError

    match = _RANGE_RE.match(text)
    expected = "a stage count such as 2, or a range such as 1..2"
    if match is None:
        raise PickError(f"--stages '{text}' is not a stage count or range", expected)
    low = int(match.group(1))
    high = int(match.group(2)) if match.group(2) is not None else low
    if high < low:
        raise PickError(f"--stages '{text}' runs backwards", expected)
    return tuple(range(low, high + 1))


def parse_motors(text: str | Sequence[str] | None) -> list[str | Path] | Path | None:
    """Read ``--motors``: shipped names, curve files and folders, comma-separated, repeated.

    Each occurrence of the option is split at commas, unless the whole text names an
    existing file or folder (whose name may hold a comma). Each entry is read with
    :func:`propulsion.selection.motor_item`: a shipped motor's name stays a name; a path
    separator, a ``.csv`` ending or an existing file or folder makes a path.

    Parameters
    ----------
    text : str, sequence of str, or None
        The option's text, or its texts when repeated; None (or no text) for every
        shipped motor.

    Returns
    -------
    list of str and Path, Path or None
        The entries in order (names as str, files and folders as Path); one file or folder
        alone as a Path; None when the option was not given.
    """
    from propulsion.selection import motor_item

    if text is None:
        return None
    texts = [text] if isinstance(text, str) else list(text)
    if not texts:
        return None
    entries: list[str | Path] = []
    for part in texts:
        path = Path(part)
        try:
            whole = path.exists()
        except (OSError, ValueError):  # a name the file system refuses (too long)
            whole = False
        pieces = [part] if whole else part.split(",")
        entries.extend(motor_item(piece) for piece in pieces if piece.strip())
    if len(entries) == 1 and isinstance(entries[0], Path):
        return entries[0]
    return entries


def pick_view(result: PickResult, units: DisplayUnits, top: int = 15) -> RenderableType:
    """The motor stacks, best first: each stack's ideal Δv against the drag-free need, its
    flight (apogee, target margin), its propulsion and payload margins, and flags from the
    plausibility rules; then a summary, the closest stacks when none meets the target, the
    verdict and the caution.

    Parameters
    ----------
    result : PickResult
        What :func:`propulsion.selection.pick` returned (SI units).
    units : DisplayUnits
        Display units for the table.
    top : int
        Rows shown [count].

    Returns
    -------
    RenderableType
        A rich renderable.
    """
    from rich.console import Group
    from rich.text import Text

    from propulsion.ascent import RAIL_EXIT_SPEED_MIN
    from propulsion.report.sheet import _Fitted
    from propulsion.report.tables import (
        _head,
        _num,
        _q,
        _table,
        caution_panel,
        mission_summary,
        verdict_text,
    )
    from propulsion.selection import CRITERION_TEXT

    length, speed = units.label("length"), units.label("speed")
    shown = list(result.rows[: max(top, 0)])
    need = f"{_q(result.drag_free_delta_v, 'speed', units)} {speed}"
    title = f"Motor stacks for {result.mission.name}: ideal budget, flight and margins"
    order = f"Best first by {CRITERION_TEXT[result.criterion]}"
    if result.flown > len(shown):
        order += f" (the first {len(shown)} of {result.flown} flown)"
    table = _table(title)
    # the sections name the lines of the motors column, once, in the header; a stack of k
    # stages flies the top k sections, and a dash stands for each section below them
    sections = max((row.stages for row in shown), key=len, default=())
    table.add_column("#", justify="right", no_wrap=True)
    table.add_column("Motors: " + ", ".join(sections))
    with_mass = result.criterion == "least_mass"  # the ranked quantity; always in --json
    impulse = _head("Impulse", "impulse", units)
    if with_mass:  # under the impulse, on a line of its own: the table stays in 80 columns
        impulse += f", liftoff {_head('mass', 'mass', units)}"
    table.add_column(impulse, justify="right")
    table.add_column(_head("Ideal Δv", "speed", units), justify="right")
    table.add_column(_head("Apogee", "length", units), justify="right")
    table.add_column(_head("Target margin", "length", units), justify="right")
    table.add_column("Propulsion margin (%)", justify="right")
    table.add_column(_head("Payload margin", "mass", units), justify="right")
    table.add_column("Flags")
    rail = f"rail<{_q(RAIL_EXIT_SPEED_MIN, 'speed', units, 2)}"
    for row in shown:
        # a place for the stacks that meet the target, a dash for those that fall short
        place = Text("—", style="red") if row.rank is None else Text(str(row.rank))
        total = f"{_q(row.total_impulse, 'impulse', units)} {row.impulse_class}"
        if with_mass:
            total += f"\n{_q(row.liftoff_mass, 'mass', units)}"
        motors = [name if count == 1 else f"{count} × {name}" for name, count, _ in row.choice]
        label = "\n".join(["—"] * (len(sections) - len(motors)) + motors)
        table.add_row(
            place,
            Text(label, no_wrap=True),
            Text(total, no_wrap=True),
            _q(row.ideal_delta_v, "speed", units),
            _q(row.apogee, "length", units),
            _signed(_q(row.margin, "length", units), row.margin),
            _signed(_num(row.propulsion_margin * 100.0, 3), row.propulsion_margin),
            _signed(_q(row.payload_margin, "mass", units, 3), row.payload_margin),
            _flags(row, rail),
        )
    pruned = result.pruned
    target = f"{_q(result.target_apogee, 'length', units)} {length}"
    asked = result.needed_apogee - result.target_apogee
    with_margin = ""
    if math.isfinite(asked) and asked > 0:
        with_margin = (
            f" with the {_q(asked, 'length', units)} {length} target margin of [margins.flight]"
        )
    fit = "fits" if result.enumerated == 1 else "fit"
    meet = "meets" if result.meeting == 1 else "meet"
    summary = Text()
    summary.append(
        f"{order}. {_plural(result.enumerated, 'motor stack')} {fit} the airframe; "
        f"{len(result.pruned_rows)} pruned by the ideal budget "
        f"({pruned['delta_v']} with less ideal Δv than the drag-free {need}, "
        f"{pruned['thrust_to_weight']} with liftoff T/W below 1); "
        f"{result.flown} flown; {result.meeting} {meet} the {target} apogee{with_margin}."
    )
    minimum = sorted(
        {row.thrust_to_weight_minimum for row in shown if "thrust_to_weight" in row.flags}
    )
    low_thrust = "/".join(f"{value:g}" for value in minimum) if minimum else "n"
    notes = Text(
        f"#: the place of a stack that meets the target (with the target margin "
        f"[margins.flight] asks for); —: it falls short. Ideal Δv: the budget's, every "
        f"stage burnt; no stack with less than the drag-free {need} (the burnout speed "
        "of a vertical climb that coasts to the target) can reach it. Apogee and target "
        "margin (apogee - target): flown as `propulsion fly` does. Propulsion margin: "
        "the share of total impulse the stack may lose; payload margin: the payload it "
        "could add; both for the stacks that meet the target (— for the others). "
        "Flags: ok, or thin (the margin [margins.flight] judges is below what it asks); "
        f"T/W<{low_thrust} (liftoff thrust-to-weight below the propellant family's usual "
        f"minimum); {rail} (rail exit below {_q(RAIL_EXIT_SPEED_MIN, 'speed', units, 2)} "
        f"{speed}); ign (an upper stage lights descending, too slow to steer or tilted "
        "over 20 deg; ranked last); !n (other plausibility warnings, listed by --json). "
        "Clusters need 2, 2.155 and 2.414 motor diameters for 2, 3 and 4 motors.",
        style="dim",
    )
    closest = result.closest()
    best = result.best
    if best is not None:
        verdict_line = verdict_text(
            True,
            f"Best by {CRITERION_TEXT[result.criterion]}: {best.motors}; total impulse "
            f"{_q(best.total_impulse, 'impulse', units)} {units.label('impulse')} "
            f"({best.impulse_class}), apogee {_q(best.apogee, 'length', units)} {length}.",
        )
    else:
        text = f"No stack reaches the {target} apogee{with_margin}"
        if closest and math.isfinite(closest[0].shortfall):
            first = closest[0]
            short = f"{_q(first.shortfall, 'length', units)} {length} short"
            if not first.flown:
                short = "at least " + short
            text += f"; the closest, {first.motors}, is {short}"
        verdict_line = verdict_text(False, text + ".")
    sheet: RenderableType = _Fitted(table)  # numbers stay whole; headers and flags wrap
    if not shown:
        sheet = Text("No stack was flown: the ideal budget ruled out every stack.")
    parts: list[RenderableType] = [mission_summary(result.mission), sheet, summary, notes]
    files = _own_files([*(row.choice for row in shown), *(entry.choice for entry in closest)])
    if files:
        parts.append(files)
    if closest:
        parts.extend([Text(), _closest_table(result, closest, units)])
    parts.extend([Text(), verdict_line, caution_panel()])
    return Group(*parts)


def _plural(count: int, word: str) -> str:
    """``"1 motor stack"``, ``"7 motor stacks"``."""
    return f"{count} {word}" if count == 1 else f"{count} {word}s"


def _signed(text: str, value: float) -> str:
    """A margin's text with a plus sign when it is positive."""
    return "+" + text if math.isfinite(value) and value > 0 else text


def _flags(row: Candidate, rail: str) -> Text:
    """The compact flags of a stack: what the plausibility rules warn about, or ``ok``."""
    from rich.text import Text

    parts = []
    if row.passes is False and row.meets_target:
        parts.append("thin")
    if "thrust_to_weight" in row.flags:
        parts.append(f"T/W<{row.thrust_to_weight_minimum:g}")
    if "rail_exit" in row.flags:
        parts.append(rail)
    if "ignition" in row.flags:
        parts.append("ign")
    # the warnings behind the flags are in row.warnings too; count the others
    flagged = ("rail exit:", "ignition:")
    others = [
        warning
        for warning in row.warnings
        if not warning.startswith(flagged)
        and not ("thrust-to-weight" in warning and "usual minimum" in warning)
    ]
    if others:
        parts.append(f"!{len(others)}")
    if not parts:
        return Text("ok", style="green")
    return Text(" ".join(parts), style="yellow")


def _own_files(choices: Iterable[Choice]) -> Text | None:
    """The curve file of each of the user's motors in these choices, or None."""
    from rich.text import Text

    files: dict[str, str] = {}
    for choice in choices:
        for name, _count, file in choice:
            if file is not None:
                files.setdefault(name, file)
    if not files:
        return None
    return Text(
        "Your motors: " + "; ".join(f"{name} = {file}" for name, file in files.items()),
        style="dim",
    )


def _closest_table(
    result: PickResult, closest: Sequence[ShortStack], units: DisplayUnits
) -> RenderableType:
    """The stacks that come closest to a target none reaches, and how far each falls short."""
    from rich.console import Group
    from rich.text import Text

    from propulsion.report.tables import _head, _q, _table

    needed = f"{_q(result.needed_apogee, 'length', units)} {units.label('length')}"
    table = _table(f"Closest stacks, best first ({needed} needed)")
    table.add_column("#", justify="right", no_wrap=True)
    table.add_column("Motors per stage", no_wrap=True)
    table.add_column(_head("Apogee", "length", units), justify="right", min_width=6)
    table.add_column(_head("Short by", "length", units), justify="right", min_width=8)
    table.add_column(_head("Margin", "length", units), justify="right", min_width=7)
    table.add_column("From")
    for place, entry in enumerate(closest, start=1):
        apogee = _q(entry.apogee, "length", units)
        short = _q(entry.shortfall, "length", units)
        margin = _q(entry.target_margin, "length", units)
        if entry.how == "flown":
            source = "flight"
        elif entry.how == "delta_v":
            apogee, short, margin = f"≤ {apogee}", f"≥ {short}", f"≤ {margin}"
            source = "bound"
        else:
            source = f"no liftoff, T/W {_q(entry.liftoff_thrust_to_weight, '', units, 3)}"
        table.add_row(str(place), entry.motors.replace("; ", "\n"), apogee, short, margin, source)
    note = Text(
        "Short by: the needed apogee - the apogee. Margin: apogee - target. flight: as "
        "flown. bound: pruned, not flown; a drag-free climb on its ideal delta-v reaches "
        "the apogee shown at most, so it falls short by at least that much.",
        style="dim",
    )
    return Group(table, note)


def pick_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    motors: list[str] | None = typer.Option(
        None,
        "--motors",
        "-m",
        help="Shipped motor names, your thrust-curve CSV files and folders of them, "
        "separated by commas or with the option repeated (default: every shipped motor). "
        "With files or folders alone, every shipped motor is tried beside them; shipped "
        "names choose which.",
        show_default=False,
    ),
    no_library: bool = typer.Option(
        False,
        "--no-library",
        help="Leave out the shipped motors that --motors does not name: only your files "
        "and folders.",
    ),
    stages: str | None = typer.Option(
        None,
        "--stages",
        "-s",
        help="Stack sizes to try: a count (2) or a range (1..2); default: 1 up to the "
        "mission's number of stages. A k-stage stack flies the top k stages.",
        show_default=False,
    ),
    max_cluster: int = typer.Option(
        1, "--max-cluster", min=1, max=4, help="Most motors side by side in one stage (1-4)."
    ),
    rank: Rank = typer.Option(Rank.least_impulse, "--rank", "-r", help="How to rank the stacks."),
    apogee: str | None = typer.Option(
        None,
        "--apogee",
        help='Target apogee above the site, with its unit ("3 km"), instead of the first leg\'s.',
        show_default=False,
    ),
    top: int = typer.Option(15, "--top", min=1, help="Rows shown in the table."),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Pick motors and stack size from a motor library to reach the target apogee.

    The mission's stages are the airframe sections (inert mass without motors, diameter,
    drag curve). Every motor that fits is tried in every section, alone or clustered;
    stacks that cannot reach the target even without losses are pruned, the rest are
    flown and ranked.

    Example: propulsion pick missions/two_stage_competition.toml --stages 1..2 --max-cluster 2

    Example: propulsion pick missions/hobby_single_stage.toml --motors my_motors/,pd-H113

    Exit code 0 when at least one stack meets the target, 1 when none does, 2 on bad input.
    """
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeRemainingColumn,
    )

    from propulsion.mission import load_mission
    from propulsion.selection import PickError, pick
    from propulsion.units import UnitParseError, parse_quantity

    with guard():
        mission = load_mission(mission_file)
        chosen = parse_motors(motors)
        if no_library and chosen is None:
            raise PickError(
                "--no-library leaves no motor to try",
                "your curve files or folders with --motors (my_curve.csv, my_motors/)",
            )
        counts = parse_stage_counts(stages) if stages is not None else None
        target = None
        if apogee is not None:
            try:
                target = parse_quantity(apogee, "length")
            except UnitParseError as exc:
                raise PickError(
                    f"--apogee {apogee!r}: {exc.reason}", 'a height with its unit, such as "3 km"'
                ) from exc
        status = stderr()
        with Progress(
            TextColumn("Flying candidate stacks"),
            BarColumn(),
            MofNCompleteColumn(),
            TimeRemainingColumn(),
            console=status,
            transient=True,
            # on a pipe or a file the bar would leave an empty line behind
            disable=json_output or not status.is_terminal,
        ) as bar:
            task = bar.add_task("fly", total=None)

            def advance(done: int, total: int) -> None:
                bar.update(task, completed=done, total=total)

            result = pick(
                mission,
                motors=chosen,
                library=not no_library,
                stage_counts=counts,
                max_cluster=max_cluster,
                criterion=rank.value,
                target_apogee=target,
                progress=advance,
            )
    if json_output:
        emit_json(result.to_dict())
    else:
        stdout().print(pick_view(result, units.display(), top))
    if result.meeting == 0:
        raise typer.Exit(1)
