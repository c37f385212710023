"""`propulsion data`: list the shipped propellant families, motors and drag curves."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout

if TYPE_CHECKING:
    from propulsion.vehicle import Motor


def own_motors(entries: list[str | Path] | Path | None) -> list[tuple[Motor, str]]:
    """The user's motors of ``data --motors``, each with its curve file as given.

    Parameters
    ----------
    entries : list of str and Path, Path or None
        What :func:`propulsion.cli.pick.parse_motors` read: shipped names (listed
        anyway, so skipped), curve files and folders of them.

    Returns
    -------
    list of (Motor, str)
        Each curve once (a file given twice, or in a folder given too, counts once).

    Raises
    ------
    MissionFileNotFoundError
        A name that is no shipped motor and no file or folder.
    DataPathError
        A folder without ``*.csv`` files.
    DataFileError
        A file that is not a thrust curve (with its file and line).
    """
    from propulsion import catalog
    from propulsion.errors import MissionFileNotFoundError

    if entries is None:
        return []
    shipped = set(catalog.motor_names())
    found: list[tuple[Motor, str]] = []
    seen: set[Path] = set()
    for entry in [entries] if isinstance(entries, Path) else entries:
        if isinstance(entry, str):
            if entry in shipped:
                continue
            raise MissionFileNotFoundError(entry, "shipped motor, motor file or folder")
        files = catalog.motor_files(entry)
        if not files:
            raise catalog.DataPathError(
                entry,
                f"the folder {entry} holds no thrust curves",
                "CSV files in the format of data/README.md ('time [s],thrust [N]')",
            )
        for file in files:
            motor = catalog.read_thrust_curve(file)
            if file.resolve() not in seen:
                seen.add(file.resolve())
                found.append((motor, str(file)))
    return found


def data_command(
    motors: list[str] | None = typer.Option(
        None,
        "--motors",
        "-m",
        help="Your thrust-curve CSV files and folders of them, separated by commas or with "
        "the option repeated: listed with the shipped motors, marked as yours.",
        show_default=False,
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """List the propellant families, demo motors and drag curves shipped in data/.

    Example: propulsion data --json

    Example: propulsion data --motors my_motors/,my_curve.csv
    """
    from propulsion import catalog
    from propulsion.cli.pick import parse_motors

    with guard():
        families = catalog.propellant_families()
        listed: list[tuple[Motor, str | None]] = [
            (catalog.load_motor(name), None) for name in catalog.motor_names()
        ]
        listed += own_motors(parse_motors(motors))
        # one list in impulse order: the user's motors among the shipped ones (stable sort)
        listed.sort(key=lambda pair: pair[0].total_impulse)
        curves = [catalog.load_drag_curve(name) for name in catalog.drag_curve_names()]
    shown = [motor for motor, _ in listed]
    files = [file for _, file in listed]
    if json_output:
        emit_json(
            {
                "data_dir": str(catalog.data_dir()),
                "propellant_families": [
                    {
                        "key": f.key,
                        "name": f.name,
                        "category": f.category,
                        "isp_min_s": f.isp_min,
                        "isp_max_s": f.isp_max,
                        "density_kg_m3": f.density,
                        "stage_mass_fraction_min": f.stage_mass_fraction_min,
                        "stage_mass_fraction_max": f.stage_mass_fraction_max,
                        "liftoff_thrust_to_weight_min": f.liftoff_thrust_to_weight_min,
                        "source": f.source,
                    }
                    for f in families.values()
                ],
                "motors": [
                    {
                        "name": m.name,
                        "origin": "shipped" if file is None else "user",
                        "file": file,
                        "impulse_class": m.impulse_class,
                        "total_impulse_n_s": m.total_impulse,
                        "average_thrust_n": m.average_thrust,
                        "burn_time_s": m.burn_time,
                        "specific_impulse_s": m.specific_impulse,
                        "propellant_mass_kg": m.propellant_mass,
                        "loaded_mass_kg": m.loaded_mass,
                        "diameter_m": m.diameter,
                        "propellant_family": m.propellant_family,
                    }
                    for m, file in listed
                ],
                "drag_curves": [
                    {"name": c.name, "mach_max": float(c.mach[-1]), "source": c.source}
                    for c in curves
                ],
            },
            caution=False,
        )
        return
    from propulsion.report.tables import data_view

    stdout().print(data_view(families, shown, curves, units.display(), files))
