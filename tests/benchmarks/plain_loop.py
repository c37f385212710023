"""The speed baseline: a two-stage flight written by hand, one sample at a time.

This is what a competent user would write to fly the two-stage example
(``missions/two_stage_competition.toml``) without the compiled kernel: a point mass in the
vertical plane of the launch over a round, non-rotating Earth (inverse-square gravity, the
WGS 84 equatorial radius and GM), the U.S. Standard Atmosphere 1976 by layers with
:mod:`math`, the drag curve and the motors' thrust curves interpolated on every call, and
:func:`scipy.integrate.solve_ivp` (RK45, rtol 1e-6) phase by phase: the rail, the booster
burn, the coast to separation, the coast to ignition, the sustainer burn and the coast to
apogee (a terminal event on the vertical speed). The motor curves, masses, delays and the
drag curve are read from the parsed mission once (:func:`plain_tables`), not per sample.

The same module defines the benchmark case: six dispersed quantities of that mission
(:func:`draw_samples`) and the batch of the compiled kernel that flies the same samples
(:func:`kernel_core`).
"""

from __future__ import annotations

import bisect
import math
from typing import NamedTuple

import numpy as np
import numpy.typing as npt
from scipy.integrate import solve_ivp

from propulsion import flight
from propulsion.constants import (
    EARTH_EQUATORIAL_RADIUS,
    EARTH_MU,
    STANDARD_GRAVITY,
    USSA76_EARTH_RADIUS,
    USSA76_GAMMA,
    USSA76_GAS_CONSTANT,
    USSA76_MOLAR_MASS,
    USSA76_SEA_LEVEL_PRESSURE,
    USSA76_SEA_LEVEL_TEMPERATURE,
)
from propulsion.mission import Mission
from propulsion.vehicle import Motor

RTOL = 1e-6
"""Relative tolerance of every solve_ivp call in the benchmark [dimensionless]."""
ATOL = 1e-6
"""Absolute tolerance of every solve_ivp call (scipy's default) [SI units of the state]."""

# U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562: base geopotential altitude [m'] and
# temperature gradient [K/m'] of the seven layers up to 84 852 m' (86 km).
_LAYER_BASE = (0.0, 11_000.0, 20_000.0, 32_000.0, 47_000.0, 51_000.0, 71_000.0)
_LAYER_LAPSE = (-6.5e-3, 0.0, 1.0e-3, 2.8e-3, 0.0, -2.8e-3, -2.0e-3)
_TOP = 84_852.0
_HYDROSTATIC = STANDARD_GRAVITY * USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT  # g0 M0 / R* [K/m']


class PlainTables(NamedTuple):
    """What the loop reads from the mission, once (SI).

    Per stage (booster, sustainer): propellant loaded and burnt [kg], drag reference area
    [m^2], thrust curve (time [s], thrust [N]) and its total impulse [N s].
    """

    payload: float
    site_altitude: float
    rail_length: float
    propellant: tuple[float, float]
    usable: tuple[float, float]
    area: tuple[float, float]
    separation_delay: float
    ignition_delay: float
    curve_time: tuple[list[float], list[float]]
    curve_thrust: tuple[list[float], list[float]]
    curve_impulse: tuple[float, float]
    drag_mach: tuple[list[float], list[float]]
    drag_cd: tuple[list[float], list[float]]
    layers: tuple[tuple[float, float, float, float], ...]  # base H, T, P and gradient


def plain_tables(mission: Mission) -> PlainTables:
    """Read the two-stage example's curves, masses and delays from a parsed mission."""
    booster, sustainer = mission.vehicle.stages[:2]
    curve_time, curve_thrust, impulse, mach, cd, area = [], [], [], [], [], []
    for stage in (booster, sustainer):
        motor = stage.propulsion
        assert isinstance(motor, Motor) and stage.drag_curve is not None and stage.diameter
        curve_time.append([float(x) for x in motor.time])
        curve_thrust.append([stage.count * float(x) for x in motor.thrust])
        impulse.append(stage.count * motor.total_impulse)
        mach.append([float(x) for x in stage.drag_curve.mach])
        cd.append([float(x) for x in stage.drag_curve.drag_coefficient])
        area.append(math.pi * stage.diameter**2 / 4)
    # base temperature and pressure of each layer, from sea level up
    layers = []
    temperature, pressure = USSA76_SEA_LEVEL_TEMPERATURE, USSA76_SEA_LEVEL_PRESSURE
    for index, (base, lapse) in enumerate(zip(_LAYER_BASE, _LAYER_LAPSE, strict=True)):
        layers.append((base, temperature, pressure, lapse))
        top = _LAYER_BASE[index + 1] if index + 1 < len(_LAYER_BASE) else _TOP
        if lapse == 0.0:
            pressure *= math.exp(-_HYDROSTATIC * (top - base) / temperature)
        else:
            new = temperature + lapse * (top - base)
            pressure *= (temperature / new) ** (_HYDROSTATIC / lapse)
            temperature = new
    return PlainTables(
        payload=mission.vehicle.payload_mass,
        site_altitude=mission.launch.altitude,
        rail_length=mission.launch.rail_length or 0.0,
        propellant=(booster.propellant_mass, sustainer.propellant_mass),
        usable=(booster.usable_propellant, sustainer.usable_propellant),
        area=(area[0], area[1]),
        separation_delay=booster.separation_delay,
        ignition_delay=sustainer.ignition_delay,
        curve_time=(curve_time[0], curve_time[1]),
        curve_thrust=(curve_thrust[0], curve_thrust[1]),
        curve_impulse=(impulse[0], impulse[1]),
        drag_mach=(mach[0], mach[1]),
        drag_cd=(cd[0], cd[1]),
        layers=tuple(layers),
    )


def _lerp(x: float, xs: list[float], ys: list[float]) -> float:
    """Linear interpolation, held constant beyond the ends."""
    if x <= xs[0]:
        return ys[0]
    if x >= xs[-1]:
        return ys[-1]
    i = bisect.bisect_right(xs, x)
    return ys[i - 1] + (ys[i] - ys[i - 1]) * (x - xs[i - 1]) / (xs[i] - xs[i - 1])


def _air(altitude: float, layers: tuple[tuple[float, float, float, float], ...]) -> tuple:
    """Density [kg/m^3] and speed of sound [m/s] at an altitude above sea level [m]."""
    h = USSA76_EARTH_RADIUS * altitude / (USSA76_EARTH_RADIUS + altitude)
    if h > _TOP:
        return 0.0, 1.0
    i = len(layers) - 1
    while i > 0 and h < layers[i][0]:
        i -= 1
    base, t_base, p_base, lapse = layers[i]
    temperature = t_base + lapse * (h - base)
    if lapse == 0.0:
        pressure = p_base * math.exp(-_HYDROSTATIC * (h - base) / t_base)
    else:
        pressure = p_base * (t_base / temperature) ** (_HYDROSTATIC / lapse)
    density = pressure * USSA76_MOLAR_MASS / (USSA76_GAS_CONSTANT * temperature)
    sound = math.sqrt(USSA76_GAMMA * USSA76_GAS_CONSTANT * temperature / USSA76_MOLAR_MASS)
    return density, sound


def fly_plain(
    sample: dict[str, float], tables: PlainTables, rtol: float = RTOL, atol: float = ATOL
) -> float:
    """Apogee above the site [m] of one sample of the two-stage example.

    ``sample`` holds ``booster_impulse`` and ``sustainer_impulse`` (factors on the thrust
    curves), ``drag_scale``, ``booster_inert`` and ``sustainer_inert`` [kg] and
    ``elevation`` (of the rail) [rad]. ``rtol`` and ``atol`` go to every solve_ivp call.
    """
    tb = tables
    # x along the ground from the pad, z up; the Earth's centre lies below the pad
    centre = EARTH_EQUATORIAL_RADIUS + tb.site_altitude
    inert = (sample["booster_inert"], sample["sustainer_inert"])
    impulse = (sample["booster_impulse"], sample["sustainer_impulse"])
    drag_scale = sample["drag_scale"]
    elevation = sample["elevation"]
    ce, se = math.cos(elevation), math.sin(elevation)

    def motor(k: int, since: float) -> tuple[float, float]:
        """Thrust [N] and mass flow [kg/s] of stage k, ``since`` seconds after ignition."""
        curve = _lerp(since, tb.curve_time[k], tb.curve_thrust[k])
        return impulse[k] * curve, tb.usable[k] * curve / tb.curve_impulse[k]

    def drag(k: int, altitude: float, speed: float) -> float:
        """Drag force [N] on the stack whose lowest stage is k."""
        density, sound = _air(altitude, tb.layers)
        cd = _lerp(speed / sound, tb.drag_mach[k], tb.drag_cd[k])
        return 0.5 * density * speed * speed * cd * drag_scale * tb.area[k]

    def rail(t: float, y: npt.NDArray[np.float64]) -> list[float]:
        s, v, m = y
        x, z = s * ce, s * se
        r = math.hypot(x, z + centre)
        thrust, flow = motor(0, t)
        g_along = EARTH_MU / r**3 * (x * ce + (z + centre) * se)
        a = (thrust - drag(0, r - EARTH_EQUATORIAL_RADIUS, v)) / m - g_along
        if s <= 0.0 and v <= 0.0 and a < 0.0:
            a = 0.0  # still on the pad: the thrust does not lift the weight yet
        return [v, a, -flow]

    def free(k: int, ignition: float, burning: bool):  # type: ignore[no-untyped-def]
        def rates(t: float, y: npt.NDArray[np.float64]) -> list[float]:
            x, z, vx, vz, m = y
            cz = z + centre
            r = math.hypot(x, cz)
            speed = math.hypot(vx, vz)
            thrust, flow = motor(k, t - ignition) if burning else (0.0, 0.0)
            push = (thrust - drag(k, r - EARTH_EQUATORIAL_RADIUS, speed)) / (m * speed)
            g = EARTH_MU / r**3
            return [vx, vz, push * vx - g * x, push * vz - g * cz, -flow]

        return rates

    def rail_exit(t: float, y: npt.NDArray[np.float64]) -> float:
        return float(y[0] - tb.rail_length)

    def apogee(t: float, y: npt.NDArray[np.float64]) -> float:
        return float(y[0] * y[2] + (y[1] + centre) * y[3])  # r . v: zero at the top

    rail_exit.terminal = True  # type: ignore[attr-defined]
    rail_exit.direction = 1  # type: ignore[attr-defined]
    apogee.terminal = True  # type: ignore[attr-defined]
    apogee.direction = -1  # type: ignore[attr-defined]

    mass = tb.payload + sum(inert) + sum(tb.propellant)
    burnout = tb.curve_time[0][-1]
    on_rail = solve_ivp(
        rail, (0.0, burnout), [0.0, 0.0, mass], rtol=rtol, atol=atol, events=rail_exit
    )
    s, v, m = on_rail.y[:, -1]
    t = float(on_rail.t[-1])
    y = [s * ce, s * se, v * ce, v * se, m]
    # booster burn, coast to separation
    for end, burning in ((burnout, True), (burnout + tb.separation_delay, False)):
        if end > t:
            y = solve_ivp(free(0, 0.0, burning), (t, end), y, rtol=rtol, atol=atol).y[:, -1]
            t = end
    burnt = mass - y[4]
    y[4] -= inert[0] + tb.propellant[0] - burnt  # the booster leaves
    # coast to ignition, sustainer burn, coast to apogee
    ignition = t + tb.ignition_delay
    y = solve_ivp(free(1, ignition, False), (t, ignition), y, rtol=rtol, atol=atol).y[:, -1]
    t = ignition + tb.curve_time[1][-1]
    y = solve_ivp(free(1, ignition, True), (ignition, t), y, rtol=rtol, atol=atol).y[:, -1]
    top = solve_ivp(
        free(1, ignition, False), (t, t + 3600.0), y, rtol=rtol, atol=atol, events=apogee
    )
    x, z = top.y[0, -1], top.y[1, -1]
    return math.hypot(x, z + centre) - centre


# ----------------------------------------------------------------------------------------
# The benchmark case
# ----------------------------------------------------------------------------------------
KEYS = (
    "booster_impulse",
    "sustainer_impulse",
    "drag_scale",
    "booster_inert",
    "sustainer_inert",
    "elevation",
)


def draw_samples(mission: Mission, n: int, seed: int) -> dict[str, npt.NDArray[np.float64]]:
    """``n`` samples of the six dispersed quantities, from the mission's distributions.

    The motors' impulse factors (normal), the drag factor (uniform), the sustainer's inert
    mass (normal) and the rail elevation (triangular) follow the file's ``[[dispersion]]``
    tables; the booster's inert mass gets the sustainer's spread (the file does not give
    one). The wind and the booster's burn-time factor are left out.
    """
    rng = np.random.default_rng(seed)
    spread = {item.field: item for item in mission.dispersions}
    booster, sustainer = mission.vehicle.stages[:2]

    def normal(field: str, mean: float) -> npt.NDArray[np.float64]:
        return rng.normal(mean, spread[field].sigma, n)

    samples = {
        "booster_impulse": normal("stage.booster.motor.impulse_scale", 1.0),
        "sustainer_impulse": normal("stage.sustainer.motor.impulse_scale", 1.0),
    }
    drag = spread["vehicle.drag_scale"]
    samples["drag_scale"] = rng.uniform(drag.low, drag.high, n)
    sigma = spread["stage.sustainer.inert_mass"].sigma
    samples["booster_inert"] = rng.normal(booster.inert_mass, sigma, n)
    samples["sustainer_inert"] = rng.normal(sustainer.inert_mass, sigma, n)
    elevation = spread["launch.elevation"]
    samples["elevation"] = rng.triangular(elevation.low, elevation.mode, elevation.high, n)
    return samples


def kernel_core(mission: Mission, samples: dict[str, npt.NDArray[np.float64]]) -> flight.FlightCore:
    """The compiled kernel's batch for the same samples (one column per sample)."""
    n = len(samples["elevation"])
    core = flight.build_core(mission, stages=2, n=n)
    core.impulse_scale[0] = samples["booster_impulse"]
    core.impulse_scale[1] = samples["sustainer_impulse"]
    core.cd_scale = samples["drag_scale"].copy()
    for k, key in enumerate(("booster_inert", "sustainer_inert")):
        change = samples[key] - core.inert[k]
        core.inert[k] = samples[key]
        core.mass_initial = core.mass_initial + change
    core.elevation = samples["elevation"].copy()
    return core


def sample(samples: dict[str, npt.NDArray[np.float64]], i: int) -> dict[str, float]:
    """Sample i as the plain loop takes it."""
    return {key: float(samples[key][i]) for key in KEYS}
