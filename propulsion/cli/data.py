"""`propulsion data`: list the shipped propellant families, motors and drag curves."""

from __future__ import annotations

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def data_command(
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """List the propellant families, demo motors and drag curves shipped in data/.

    Example: propulsion data --json
    """
    from propulsion import catalog

    with guard():
        families = catalog.propellant_families()
        motors = [catalog.load_motor(name) for name in catalog.motor_names()]
        curves = [catalog.load_drag_curve(name) for name in catalog.drag_curve_names()]
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
                    for m in motors
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

    stdout().print(data_view(families, motors, curves, units.display()))
