"""`propulsion firing`: static-fire logs of one motor to a motor file, with its spread."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def firing_command(
    logs: list[Path] = typer.Argument(
        ...,
        help="Static-fire logs of one motor: CSV, TSV or whitespace-separated, with a header "
        "naming the columns and their units, e.g. 'time (ms),force (kgf)'.",
        show_default=False,
        metavar="LOG",
    ),
    output: Path | None = typer.Option(
        None,
        "--output",
        "-o",
        help="Write the motor file (the thrust-curve CSV of data/README.md) to this file. "
        "Needs --propellant-mass.",
    ),
    propellant_mass: str | None = typer.Option(
        None,
        "--propellant-mass",
        help="Propellant of one motor, e.g. '0.42 kg': for the Isp and the motor file.",
    ),
    name: str | None = typer.Option(
        None, "--name", help="The motor's name in the file (default: the file's name)."
    ),
    diameter: str | None = typer.Option(None, "--diameter", help="Motor diameter, e.g. '54 mm'."),
    length: str | None = typer.Option(None, "--length", help="Motor length, e.g. '330 mm'."),
    loaded_mass: str | None = typer.Option(
        None, "--loaded-mass", help="Whole motor as loaded, e.g. '0.95 kg'."
    ),
    propellant: str | None = typer.Option(
        None, "--propellant", help="Propellant family key (see `propulsion data`)."
    ),
    time_unit: str | None = typer.Option(
        None, "--time-unit", help="Unit of the time column when the header gives none: s, ms."
    ),
    thrust_unit: str | None = typer.Option(
        None,
        "--thrust-unit",
        help="Unit of the thrust column when the header gives none: N, kgf, lbf.",
    ),
    thrust_column: str | None = typer.Option(
        None, "--thrust-column", help="The thrust column's name, when a log has more than two."
    ),
    threshold: str = typer.Option(
        "5 %",
        "--threshold",
        help="Burn start and end at this fraction of peak thrust (default 5%: common "
        "practice, no source).",
    ),
    cutoff: str | None = typer.Option(
        None,
        "--filter",
        help="Zero-phase low-pass filter with this cutoff, e.g. '50 Hz' (default: none).",
    ),
    stage: str | None = typer.Option(
        None, "--stage", help="Stage name for the [[dispersion]] tables (default: NAME)."
    ),
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw the logs, burn windows and curves to this .png or .svg file.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite output files that exist."),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Import static-fire logs: tare, burn window, total impulse with its error, motor file.

    Example: propulsion firing data/firings/demo_fire_1.csv data/firings/demo_fire_2.tsv
    data/firings/demo_fire_3.txt --propellant-mass '0.42 kg' -o my_motor.csv

    Several logs of one motor give the mean and spread of total impulse and burn time,
    the mean curve, and [[dispersion]] tables for a mission file.

    Exit code 0 when the logs were read (and the motor file written), 2 on bad input.
    """
    from propulsion.firing import (
        FiringError,
        import_firings,
        motor_csv,
        parse_cutoff,
        parse_threshold,
        parse_unit,
        read_firing_log,
    )
    from propulsion.report.files import all_or_nothing, check_output

    with guard(), all_or_nothing() as outputs:
        outputs.inputs.extend((Path(log), "a firing log") for log in logs)
        fraction = parse_threshold(threshold)
        frequency = parse_cutoff(cutoff) if cutoff is not None else None
        for text, dimension, flag in (
            (time_unit, "time", "--time-unit"),
            (thrust_unit, "force", "--thrust-unit"),
        ):
            if text is not None:
                parse_unit(text, dimension, flag)
        mass = _quantity(propellant_mass, "mass", "--propellant-mass")
        metadata = {
            "diameter": _quantity(diameter, "length", "--diameter"),
            "length": _quantity(length, "length", "--length"),
            "loaded_mass": _quantity(loaded_mass, "mass", "--loaded-mass"),
        }
        family = _family(propellant)
        motor_name = _name(name, output, logs)
        if output is not None:
            if mass is None:
                raise FiringError(
                    "the motor file needs the propellant mass",
                    "--propellant-mass with its unit, e.g. '0.42 kg'",
                )
            loaded = metadata["loaded_mass"]
            if loaded is not None and loaded < mass:
                raise FiringError(
                    "--loaded-mass is less than --propellant-mass",
                    "a loaded mass at least the propellant mass",
                )
            check_output(output, force, suffixes=(".csv",))
        if plot is not None:
            from propulsion.report.plots import check_plot_path

            check_plot_path(plot, force)
        read = [read_firing_log(log, time_unit, thrust_unit, thrust_column) for log in logs]
        result = import_firings(read, fraction, frequency, mass)
        if output is not None and mass is not None:
            from propulsion.report.files import write_atomic
            from propulsion.report.firing_view import filter_text, threshold_text

            note = (
                f"Imported by propulsion firing from {result.count} static-fire "
                f"{'log' if result.count == 1 else 'logs'} "
                f"({'; '.join(Path(log).name for log in logs)}). Tare from the samples before "
                f"ignition. Filter: {filter_text(frequency)}. Burn window at "
                f"{threshold_text(fraction)}. Curve: "
                + (
                    "the mean of the firings on a normalised time base."
                    if result.curve == "mean curve"
                    else "the firing's own."
                )
            )
            text = motor_csv(
                result,
                motor_name,
                mass,
                diameter=metadata["diameter"],
                length=metadata["length"],
                loaded_mass=metadata["loaded_mass"],
                propellant_family=family,
                note=note,
            )
            write_atomic(output, text, force)
        if plot is not None:
            from propulsion.report.firing_plots import firing_figure
            from propulsion.report.plots import save_figure

            save_figure(firing_figure(result, units.display(), motor_name), plot, force)
    if json_output:
        emit_json(
            {
                "output": None if output is None else str(output),
                "name": motor_name,
                **result.to_dict(stage),
            }
        )
        return
    from propulsion.report.firing_view import firing_view

    stdout().print(firing_view(result, units.display(), output, motor_name, stage))


def _quantity(text: str | None, dimension: str, flag: str) -> float | None:
    """An option's quantity in SI, None when not given; a positive value required."""
    from propulsion.firing import FiringError
    from propulsion.units import UnitParseError, parse_quantity

    if text is None:
        return None
    try:
        value = parse_quantity(text, dimension)
    except UnitParseError as exc:
        raise FiringError(
            f"{flag} {text[:20]!r}: {exc.reason}", f"a {dimension} with its unit"
        ) from None
    if not value > 0.0:
        raise FiringError(f"{flag} {text[:20]!r} is not above zero", f"a {dimension} above zero")
    return value


def _family(key: str | None) -> str | None:
    """A propellant family key, checked against data/propellants.csv."""
    if key is None:
        return None
    import difflib

    from propulsion.catalog import propellant_families
    from propulsion.firing import FiringError

    families = propellant_families()
    if key not in families:
        close = difflib.get_close_matches(key, list(families), n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise FiringError(
            f"--propellant {key[:40]!r} is not a propellant family{hint}",
            "a key from data/propellants.csv (see `propulsion data`)",
        )
    return key


def _name(name: str | None, output: Path | None, logs: list[Path]) -> str:
    """The motor's name: as given (one line of printable text), or the output's stem."""
    from propulsion.firing import FiringError
    from propulsion.text import printable

    if name is None:
        stem = (output or logs[0]).stem
        return " ".join(printable(stem).split()) or "imported-motor"
    if not name.strip() or printable(name) != name or "\n" in name or "\t" in name:
        raise FiringError("--name must be one line of printable text", "a name such as 'team-J550'")
    return name.strip()
