"""Exports: tables as CSV text in the chosen display units."""

from __future__ import annotations

import io
from typing import TYPE_CHECKING

from propulsion.units import DisplayUnits, to_display

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["trajectory_csv"]

# trajectory column -> (name, dimension) ; dimensionless columns keep their name
_COLUMNS = {
    "time_s": ("time", "time"),
    "altitude_m": ("altitude", "length"),
    "downrange_m": ("downrange", "length"),
    "speed_m_s": ("speed", "speed"),
    "inertial_speed_m_s": ("inertial_speed", "speed"),
    "vertical_speed_m_s": ("vertical_speed", "speed"),
    "dynamic_pressure_pa": ("dynamic_pressure", "pressure"),
    "mass_kg": ("mass", "mass"),
}


def trajectory_csv(frame: pd.DataFrame, units: DisplayUnits) -> str:
    """The trajectory as CSV text, each column converted to its display unit.

    Headers name the unit in brackets (``altitude [ft]``), as the data tables do.
    """
    out = frame.copy()
    names = {}
    for column in frame.columns:
        if column in _COLUMNS:
            name, dimension = _COLUMNS[column]
            out[column] = [to_display(float(v), dimension, units) for v in frame[column]]
            names[column] = f"{name} [{units.unit(dimension).replace('**', '^')}]"
        elif column == "acceleration_g":
            names[column] = "acceleration [g]"
        elif column == "flight_path_angle_deg":
            names[column] = "flight_path_angle [deg]"
    out = out.rename(columns=names)
    buffer = io.StringIO()
    out.to_csv(buffer, index=False, float_format="%.9g")
    return buffer.getvalue()
