"""The U.S. Standard Atmosphere, 1976, from -5 km to 86 km geometric altitude.

The model is built from the standard's own definitions, not from its printed tables: seven
layers in geopotential altitude, each with a constant gradient of the molecular-scale
temperature, the hydrostatic equation integrated layer by layer, and the ideal-gas law. The base
pressure of every layer is computed once, at import, from the layer equations.

All inputs and outputs are plain SI floats or numpy arrays: altitudes in [m], temperature in
[K], pressure in [Pa], density in [kg/m^3], speed of sound in [m/s].

Two entry points:

* :func:`ussa1976` checks its input, accepts a float or an array of any shape, and returns an
  :class:`AtmosphereState`.
* :func:`density_pressure_sound` is the unchecked fast path for the flight core: a 1-D float
  array in, three arrays out, a fixed handful of numpy calls and no Python loop over elements.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
import numpy.typing as npt

from propulsion.constants import (
    STANDARD_GRAVITY,
    USSA76_EARTH_RADIUS,
    USSA76_GAMMA,
    USSA76_GAS_CONSTANT,
    USSA76_MOLAR_MASS,
    USSA76_SEA_LEVEL_PRESSURE,
    USSA76_SEA_LEVEL_TEMPERATURE,
)

ArrayLike = float | npt.NDArray[np.float64]
FloatArray = npt.NDArray[np.float64]

__all__ = [
    "LOWEST_ALTITUDE",
    "TOP_ALTITUDE",
    "AtmosphereState",
    "density_pressure_sound",
    "geometric_altitude",
    "geopotential_altitude",
    "layer_table",
    "standard_profile",
    "ussa1976",
]

#: Lowest geometric altitude :func:`ussa1976` accepts [m]; the standard's tables start here.
LOWEST_ALTITUDE: float = -5_000.0

#: Geometric altitude where the lower-atmosphere model ends [m]. Above it :func:`ussa1976`
#: returns zero pressure and density.
TOP_ALTITUDE: float = 86_000.0

# --- Layer definitions -------------------------------------------------------------------------
# U.S. Standard Atmosphere, 1976 (NOAA-S/T 76-1562), the table of reference levels and
# gradients of the molecular-scale temperature (recalled from memory): base geopotential
# altitude H_b [m'] and gradient L_M,b [K/m'] of each layer. The last layer ends at 84 852 m',
# which is 86 km geometric.
_BASE_GEOPOTENTIAL = (0.0, 11_000.0, 20_000.0, 32_000.0, 47_000.0, 51_000.0, 71_000.0)
_LAPSE_RATE = (-6.5e-3, 0.0, 1.0e-3, 2.8e-3, 0.0, -2.8e-3, -2.0e-3)

# g0' M0 / R* [K/m'], the hydrostatic constant of the layer equations.
_HYDROSTATIC = STANDARD_GRAVITY * USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT
# M0 / R* [kg K/J] for the ideal-gas law and gamma R* / M0 [J/(kg K)] for the speed of sound.
_DENSITY_FACTOR = USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT
_SOUND_FACTOR = USSA76_GAMMA * USSA76_GAS_CONSTANT / USSA76_MOLAR_MASS


def _geopotential(z: float) -> float:
    """Scalar form of :func:`geopotential_altitude`, with the same operation order."""
    return USSA76_EARTH_RADIUS * z / (USSA76_EARTH_RADIUS + z)


# The model's top in geopotential altitude, computed exactly as the array code computes H, so
# that z = 86 km lands on the boundary bit for bit.
_TOP_GEOPOTENTIAL = _geopotential(TOP_ALTITUDE)


def _layer_coefficients() -> tuple[FloatArray, FloatArray, FloatArray]:
    """Base temperatures, base pressures and the per-layer coefficient table.

    Within layer b the molecular-scale temperature and the pressure are written as

        T = A_b + L_b H
        ln P = C_b + K_b H - E_b ln T

    with A_b = T_b - L_b H_b, and for a gradient layer (L_b != 0) E_b = g0' M0 / (R* L_b),
    K_b = 0, C_b = ln P_b + E_b ln T_b; for an isothermal layer (L_b = 0) E_b = 0,
    K_b = -g0' M0 / (R* T_b), C_b = ln P_b - K_b H_b. Both are the standard's layer equations
    rearranged so one formula serves every layer and no lapse rate is ever divided by.

    An eighth row covers everything above 86 km: the temperature is held at its 86 km value
    (L = 0) and K = -inf, so ln P = -inf and P = exp(-inf) = 0 without any branch.
    """
    n_layers = len(_BASE_GEOPOTENTIAL)
    base_temperature = np.empty(n_layers + 1)
    base_pressure = np.empty(n_layers + 1)
    base_temperature[0] = USSA76_SEA_LEVEL_TEMPERATURE
    base_pressure[0] = USSA76_SEA_LEVEL_PRESSURE
    tops = (*_BASE_GEOPOTENTIAL[1:], _TOP_GEOPOTENTIAL)
    coefficients = np.empty((5, n_layers + 1))  # rows: A, L, C, K, E
    for b in range(n_layers):
        h_b, lapse = _BASE_GEOPOTENTIAL[b], _LAPSE_RATE[b]
        t_b, p_b = float(base_temperature[b]), float(base_pressure[b])
        t_top = t_b + lapse * (tops[b] - h_b)
        if lapse == 0.0:
            p_top = p_b * math.exp(-_HYDROSTATIC * (tops[b] - h_b) / t_b)
            exponent, isothermal = 0.0, -_HYDROSTATIC / t_b
            log_constant = math.log(p_b) - isothermal * h_b
        else:
            exponent = _HYDROSTATIC / lapse
            p_top = p_b * (t_b / t_top) ** exponent
            isothermal = 0.0
            log_constant = math.log(p_b) + exponent * math.log(t_b)
        coefficients[:, b] = (t_b - lapse * h_b, lapse, log_constant, isothermal, exponent)
        base_temperature[b + 1] = t_top
        base_pressure[b + 1] = p_top
    coefficients[:, n_layers] = (base_temperature[n_layers], 0.0, 0.0, -math.inf, 0.0)
    return base_temperature, base_pressure, coefficients


# Base temperature and pressure of each layer, the last entry being the values at 86 km.
_BASE_TEMPERATURE, _BASE_PRESSURE, _COEFFICIENTS = _layer_coefficients()
# Upper edges of the layers for np.searchsorted(side="left"): H equal to an edge belongs to the
# layer below it (the profile is continuous there), H above 86 km (and NaN) to the last row.
_LAYER_TOPS = np.array([*_BASE_GEOPOTENTIAL[1:], _TOP_GEOPOTENTIAL])


def layer_table() -> tuple[FloatArray, FloatArray]:
    """The standard's layers as the flight kernel reads them: (tops, rows).

    ``tops`` holds the geopotential altitude [m'] where each of the seven layers ends (the
    last one at 86 km geometric); ``rows`` (5, 8) holds A, L, C, K, E of each layer, as in
    :func:`density_pressure_sound`, and an eighth column for everything above 86 km. Copies:
    the caller may change them.
    """
    return _LAYER_TOPS.copy(), _COEFFICIENTS.copy()


def standard_profile() -> tuple[FloatArray, FloatArray, FloatArray]:
    """The standard's defining temperature profile: (edges, temperatures, gradients).

    ``edges`` (8,) holds the geopotential altitudes [m'] of the layer bases and, last, the
    top at 86 km geometric; ``temperatures`` (8,) the molecular-scale temperature [K] at
    each edge; ``gradients`` (7,) each layer's temperature gradient [K/m'], exactly as the
    standard defines them. :mod:`propulsion.weather` builds the day's air from them.
    Copies: the caller may change them.
    """
    edges = np.array([*_BASE_GEOPOTENTIAL, _TOP_GEOPOTENTIAL])
    return edges, _BASE_TEMPERATURE.copy(), np.array(_LAPSE_RATE)


class AtmosphereState(NamedTuple):
    """Temperature, pressure, density and speed of sound at one or more altitudes.

    Each field is a ``float`` for a scalar altitude and an array of the altitude's shape
    otherwise.
    """

    temperature: ArrayLike
    """Molecular-scale temperature [K] (equal to the kinetic temperature below 80 km)."""
    pressure: ArrayLike
    """Static pressure [Pa]."""
    density: ArrayLike
    """Mass density [kg/m^3]."""
    speed_of_sound: ArrayLike
    """Speed of sound [m/s]."""


def _as_result(arr: FloatArray) -> ArrayLike:
    if arr.ndim == 0:
        return float(arr)
    return arr


def geopotential_altitude(altitude: ArrayLike) -> ArrayLike:
    r"""
    Geopotential altitude from geometric altitude.

    Parameters
    ----------
    altitude : float or numpy.ndarray
        Geometric altitude above mean sea level [m]. Must be finite and above -r0.

    Returns
    -------
    geopotential_altitude : float or numpy.ndarray
        Geopotential altitude [m'] (geopotential metres).

    Raises
    ------
    ValueError
        If an altitude is not finite or not above -r0.

    Notes
    -----
    .. math:: H = \frac{r_0 Z}{r_0 + Z}

    with :math:`r_0` = 6 356 766 m, the effective Earth radius adopted by the standard.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government Printing Office,
       Washington D.C., 1976, equation (18) (equation number recalled from memory).
    """
    z = np.asarray(altitude, dtype=np.float64)
    if not np.all(np.isfinite(z)) or np.any(z <= -USSA76_EARTH_RADIUS):
        raise ValueError(f"altitude must be finite and above -r0, got {altitude!r}")
    return _as_result(USSA76_EARTH_RADIUS * z / (USSA76_EARTH_RADIUS + z))


def geometric_altitude(geopotential: ArrayLike) -> ArrayLike:
    r"""
    Geometric altitude from geopotential altitude, the inverse of
    :func:`geopotential_altitude`.

    Parameters
    ----------
    geopotential : float or numpy.ndarray
        Geopotential altitude [m']. Must be finite and below r0.

    Returns
    -------
    altitude : float or numpy.ndarray
        Geometric altitude above mean sea level [m].

    Raises
    ------
    ValueError
        If a geopotential altitude is not finite or not below r0.

    Notes
    -----
    .. math:: Z = \frac{r_0 H}{r_0 - H}

    with :math:`r_0` = 6 356 766 m.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government Printing Office,
       Washington D.C., 1976, equation (18) solved for Z (equation number recalled
       from memory).
    """
    h = np.asarray(geopotential, dtype=np.float64)
    if not np.all(np.isfinite(h)) or np.any(h >= USSA76_EARTH_RADIUS):
        raise ValueError(f"geopotential must be finite and below r0, got {geopotential!r}")
    return _as_result(USSA76_EARTH_RADIUS * h / (USSA76_EARTH_RADIUS - h))


def _evaluate(z: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Temperature, pressure, density, speed of sound on a 1-D array; no checks."""
    h = USSA76_EARTH_RADIUS * z / (USSA76_EARTH_RADIUS + z)
    # np.take fetches each element's five layer coefficients in one call; on 10 000 elements it
    # is several times faster than the equivalent fancy index _COEFFICIENTS[:, layer].
    layer = np.searchsorted(_LAYER_TOPS, h)
    a, lapse, log_constant, isothermal, exponent = np.take(_COEFFICIENTS, layer, axis=1)
    temperature = a + lapse * h
    pressure = np.exp(log_constant + isothermal * h - exponent * np.log(temperature))
    density = pressure * _DENSITY_FACTOR / temperature
    speed_of_sound = np.sqrt(_SOUND_FACTOR * temperature)
    return temperature, pressure, density, speed_of_sound


def density_pressure_sound(altitude: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    r"""
    Density, pressure and speed of sound of the U.S. Standard Atmosphere, 1976: the fast,
    unchecked path for the flight core.

    Same model and same numbers as :func:`ussa1976`, without its input checks and without the
    temperature. Costs 17 numpy calls (plus ``np.asarray``) whatever the array length: one
    ``np.searchsorted`` picks each element's layer, one ``np.take`` fetches that layer's
    coefficients, and a single formula serves isothermal and gradient layers alike (no
    ``np.where``).

    Parameters
    ----------
    altitude : numpy.ndarray
        Geometric altitudes above mean sea level [m], a 1-D float64 array. Not checked: the
        caller keeps the values finite and at or above -5000 m. NaN gives NaN; values below
        -5000 m continue the lowest layer.

    Returns
    -------
    density : numpy.ndarray
        Mass density [kg/m^3]; 0 above 86 km.
    pressure : numpy.ndarray
        Static pressure [Pa]; 0 above 86 km.
    speed_of_sound : numpy.ndarray
        Speed of sound [m/s]; held at its 86 km value above 86 km.

    Notes
    -----
    See :func:`ussa1976` for the equations. Here each layer's equations are rearranged, once
    at import, into :math:`T_M = A_b + L_b H` and
    :math:`\ln P = C_b + K_b H - E_b \ln T_M`, where a gradient layer has :math:`K_b = 0`,
    :math:`E_b = g_0' M_0 / (R^* L_b)` and an isothermal layer has :math:`E_b = 0`,
    :math:`K_b = -g_0' M_0 / (R^* T_b)`. No lapse rate is divided by at run time. A row with
    :math:`K = -\infty` above 86 km makes the pressure exactly 0 there.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government Printing Office,
       Washington D.C., 1976, equations (18), (23), (33a), (33b), (42) and (50)
       (equation numbers recalled from memory).
    """
    _, pressure, density, speed_of_sound = _evaluate(np.asarray(altitude, dtype=np.float64))
    return density, pressure, speed_of_sound


def ussa1976(altitude: ArrayLike) -> AtmosphereState:
    r"""
    Temperature, pressure, density and speed of sound of the U.S. Standard Atmosphere, 1976,
    from -5 km to 86 km geometric altitude.

    Parameters
    ----------
    altitude : float or numpy.ndarray
        Geometric altitude above mean sea level [m], any shape. Must be finite and at or above
        -5000 m. Above 86 000 m the model's range has ended: see Returns.

    Returns
    -------
    state : AtmosphereState
        Named tuple with the fields

        * ``temperature`` -- molecular-scale temperature :math:`T_M` [K]
        * ``pressure`` -- static pressure [Pa]
        * ``density`` -- mass density [kg/m^3]
        * ``speed_of_sound`` -- speed of sound [m/s]

        each a ``float`` for scalar input, else an array of the input's shape. Above 86 km
        pressure and density are 0 (this lower-atmosphere model ends there; the standard's
        upper model is not implemented) and temperature and speed of sound keep their 86 km
        values.

    Raises
    ------
    ValueError
        If an altitude is NaN or infinite, or below -5000 m.

    Notes
    -----
    The geometric altitude :math:`Z` is turned into geopotential altitude

    .. math:: H = \frac{r_0 Z}{r_0 + Z}, \qquad r_0 = 6\,356\,766\ \mathrm{m}.

    Seven layers with bases :math:`H_b` = 0, 11, 20, 32, 47, 51, 71 km' (the last ending at
    84.852 km', i.e. 86 km geometric) have constant gradients :math:`L_b` = -6.5, 0, +1.0,
    +2.8, 0, -2.8, -2.0 K/km' of the molecular-scale temperature

    .. math:: T_M = T_{M,b} + L_b (H - H_b),

    starting from :math:`T_0` = 288.15 K and :math:`P_0` = 101 325 Pa at :math:`H = 0`.
    Integrating the hydrostatic equation gives, for :math:`L_b \ne 0`,

    .. math:: P = P_b \left(\frac{T_{M,b}}{T_M}\right)^{g_0' M_0 / (R^* L_b)}

    and, for :math:`L_b = 0`,

    .. math:: P = P_b \exp\left(-\frac{g_0' M_0 (H - H_b)}{R^* T_{M,b}}\right),

    where the base pressures :math:`P_b` come from applying these equations layer after layer
    (computed once at import). Density and speed of sound follow from

    .. math:: \rho = \frac{P M_0}{R^* T_M}, \qquad C_s = \sqrt{\frac{\gamma R^* T_M}{M_0}},

    with the standard's constants :math:`R^*` = 8.31432 J/(mol K), :math:`M_0` =
    0.0289644 kg/mol, :math:`g_0'` = 9.80665 m^2/(s^2 m') and :math:`\gamma` = 1.4. Below 0 m
    the first layer is extended down to -5 km.

    The temperature returned is the molecular-scale temperature :math:`T_M`. Below 80 km the
    mean molar mass :math:`M` equals :math:`M_0` and :math:`T_M` is the kinetic temperature
    :math:`T` printed in the standard's tables. Between 80 and 86 km the standard lets
    :math:`M` fall slightly (to :math:`M/M_0` = 0.999579 at 86 km, recalled from memory), and
    the tabulated kinetic temperature is :math:`T = T_M M / M_0`: lower than the value
    returned here by up to about 0.08 K at 86 km. Density and speed of sound are not affected,
    because :math:`P M / (R^* T) = P M_0 / (R^* T_M)` and
    :math:`\gamma R^* T / M = \gamma R^* T_M / M_0`.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government Printing Office,
       Washington D.C., 1976: geopotential altitude, equation (18); molecular-scale
       temperature, equation (23); pressure, equations (33a) and (33b); density, equation
       (42); speed of sound, equation (50) (equation numbers recalled from memory). Table I
       of the same document gives the resulting values by geometric altitude.
    """
    z = np.asarray(altitude, dtype=np.float64)
    if not np.all(np.isfinite(z)):
        raise ValueError(f"altitude must be finite, got {altitude!r}")
    if np.any(z < LOWEST_ALTITUDE):
        raise ValueError(
            f"altitude must be at or above {LOWEST_ALTITUDE:g} m (the model's lower end), "
            f"got {altitude!r}"
        )
    temperature, pressure, density, speed_of_sound = _evaluate(z.reshape(-1))
    if z.ndim == 0:
        return AtmosphereState(
            float(temperature[0]), float(pressure[0]), float(density[0]), float(speed_of_sound[0])
        )
    shape = z.shape
    return AtmosphereState(
        temperature.reshape(shape),
        pressure.reshape(shape),
        density.reshape(shape),
        speed_of_sound.reshape(shape),
    )
