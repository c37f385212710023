"""The compiled flight kernel: one sample at a time, each with its own steps and events.

A point mass with thrust, drag and gravity flies in three dimensions: in an Earth-centred
inertial frame over a rotating spherical (or WGS 84 ellipsoidal, with J2) Earth, or over a
flat Earth with uniform gravity. The air is a layer table (the U.S. Standard Atmosphere
1976 by default) that co-rotates with the Earth, plus a wind profile. Everything here is
plain floats and arrays, compiled by numba (``cache=True``: the machine code is kept on
disk, so only the very first run compiles). Each sample is integrated on its own by an
adaptive Dormand–Prince 5(4) method, so a sample's numbers do not depend on the batch,
the chunk or the thread it runs in.

Steps end exactly on every scheduled change (ignitions, burnouts, separations, thrust-
curve points, the start and end of a timed pitch kick). State-dependent events (lift-off,
rail exit, a pitch kick by speed, the air speed crossing the attitude-hold threshold, the
top of the atmosphere, apogee, ground impact, orbital cutoff) are found on the step's
cubic Hermite interpolant, then refined by stepping again from the start of the step
(Illinois regula falsi on integrated states), and the step is cut there. Maxima of
dynamic pressure, Mach number and altitude are found inside steps by golden-section
search; step ends (which include every model switch) are candidates too.

The delta-v ledger rides in the state. While the vehicle is in the atmosphere the ledger
follows its speed relative to the rotating Earth (the textbook convention for gravity,
drag and steering losses during ascent [2]); when it leaves the atmosphere, the ledger
switches to the inertial speed, and the difference between the two speeds at that moment
is booked, with the centrifugal term before it, as the Earth-rotation credit. Thus
ideal + credit - gravity - drag - steering - back-pressure - pad loss equals the change of
that ledger speed, by construction. While the pad holds a vehicle whose thrust is still
below its weight, nothing moves: the ideal delta-v of that thrust is booked as the pad loss,
and gravity loss starts with the motion.

References
----------
.. [1] J. R. Dormand and P. J. Prince, "A family of embedded Runge-Kutta formulae",
   J. Comput. Appl. Math. 6(1), 19-26, 1980; E. Hairer, S. P. Nørsett and G. Wanner,
   Solving Ordinary Differential Equations I, 2nd ed., Springer, 1993, II.4 and II.6.
.. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013, section
   11.2 (gravity turn, delta-v losses); G. P. Sutton and O. Biblarz, Rocket Propulsion
   Elements, 9th ed., Wiley, 2017, chapter 4.
.. [3] NIMA TR8350.2, Department of Defense World Geodetic System 1984, 3rd ed., 2000
   (ellipsoid, GM, rotation rate, J2); B. R. Bowring, "Transformation from spatial to
   geographical coordinates", Survey Review 23(181), 1976 (geodetic latitude).
.. [4] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, TypeVar

import numpy as np
from numba import njit

from propulsion.atmosphere import TOP_ALTITUDE
from propulsion.constants import (
    EARTH_EQUATORIAL_RADIUS,
    EARTH_FLATTENING,
    EARTH_J2,
    EARTH_MU,
    STANDARD_GRAVITY,
    USSA76_EARTH_RADIUS,
    USSA76_GAMMA,
    USSA76_GAS_CONSTANT,
    USSA76_MOLAR_MASS,
)
from propulsion.flight.layout import (
    A_ACCELERATION,
    A_AIR_SPEED,
    A_ALTITUDE,
    A_ALTITUDE_SEA_LEVEL,
    A_DENSITY,
    A_DIRECTION,
    A_DRAG,
    A_DYNAMIC_PRESSURE,
    A_ENERGY,
    A_FLIGHT_PATH,
    A_GROUND_SPEED,
    A_INERTIAL_SPEED,
    A_LEDGER_SPEED,
    A_MACH,
    A_PRESSURE,
    A_RAIL_ACCELERATION,
    A_RAIL_DISTANCE,
    A_SOUND,
    A_THRUST,
    A_TILT,
    A_VERTICAL_SPEED,
    BURNING,
    BURNT,
    C_AIRBORNE,
    C_EARTH,
    C_GUIDANCE,
    C_STAGES,
    C_STOP,
    D_CROSSRANGE,
    D_DOWNRANGE,
    D_EAST,
    D_HEADING,
    D_LATITUDE,
    D_LONGITUDE,
    D_MASS,
    D_NORTH,
    E_APOGEE,
    E_CUTOFF,
    E_FINAL,
    E_FIRST_HOLD,
    E_GROUND,
    E_KICK,
    E_LEFT_ATMOSPHERE,
    E_LIFTOFF,
    E_MAX_ACCELERATION,
    E_MAX_ALTITUDE,
    E_MAX_DYNAMIC_PRESSURE,
    E_MAX_MACH,
    E_RAIL_EXIT,
    E_REENTRY,
    E_STAGE,
    EARTH_ELLIPSOID,
    EARTH_FLAT,
    F_AZIMUTH,
    F_AZIMUTH_SINE,
    F_EAST,
    F_NORTH,
    F_PLANE,
    F_RAIL,
    F_SITE,
    F_UP,
    F_WIND_TURN,
    GUIDE_GRAVITY_TURN,
    GUIDE_ORBIT,
    NA,
    NF,
    NY,
    NZ,
    P_AZIMUTH,
    P_CD_SCALE,
    P_CUTOFF_ENERGY,
    P_ELEVATION,
    P_GUIDE_A,
    P_GUIDE_B,
    P_HOLD_SPEED,
    P_KICK_ANGLE,
    P_KICK_DURATION,
    P_KICK_SPEED,
    P_KICK_TIME,
    P_LATITUDE,
    P_MASS,
    P_MAX_TIME,
    P_OMEGA,
    P_RAIL,
    P_SITE_ALTITUDE,
    P_START_STATE,
    P_START_TIME,
    P_WIND_ALONG,
    P_WIND_SCALE,
    P_WIND_TURN,
    S_AREA,
    S_CURVE_IMPULSE,
    S_EXIT_AREA,
    S_IGNITION_DELAY,
    S_IMPULSE_SCALE,
    S_INERT,
    S_IS_MOTOR,
    S_MASS_FLOW,
    S_PROPELLANT,
    S_SEPARATION_DELAY,
    S_STEERED,
    S_TEST_PRESSURE,
    S_THRUST_VACUUM,
    S_TIME_SCALE,
    S_USABLE,
    ST_APOGEE,
    ST_BURNOUT,
    ST_FLYING,
    ST_GROUND,
    ST_NO_LIFTOFF,
    ST_ORBIT,
    ST_STEP_FAILURE,
    ST_TIME_LIMIT,
    STOP_GROUND,
    WAITING,
    Y_BACK,
    Y_DRAG,
    Y_GRAVITY,
    Y_IDEAL,
    Y_M,
    Y_PAD,
    Y_ROTATION,
    Y_STEERING,
    Z_BURN_TIME,
    Z_CURVE_INDEX,
    Z_GUIDE_ANGLE,
    Z_HOLD,
    Z_HOLD_DIRECTION,
    Z_IGNITION_MASS,
    Z_IGNITION_TIME,
    Z_INERTIAL,
    Z_KICK_DONE,
    Z_KICK_END,
    Z_KICK_START,
    Z_LAYER_KNOT,
    Z_LIFTED,
    Z_MACH_KNOT,
    Z_NEXT_TIME,
    Z_ON_RAIL,
    Z_PHASE,
    Z_RISEN,
    Z_STAGE,
    Z_WATCH_APOGEE,
    Z_WIND_KNOT,
    Tables,
)

__all__ = ["MEMORY", "derivative", "describe", "fly_batch", "site_frame"]

# The kernel allocates nothing: the caller hands it every buffer. That lets it run without
# numba's reference counting, which costs about 30 ns per call of a helper that takes arrays
# (measured on this kernel: 0.7 us per derivative with it, well under half without).
_JIT = {"cache": True, "nogil": True, "fastmath": False, "error_model": "numpy", "_nrt": False}
F = TypeVar("F", bound=Callable[..., Any])
compiled: Callable[[F], F] = njit(**_JIT)  # type: ignore[call-overload]
"""The decorator of every kernel function: compiled once, cached on disk, no reference
counting, the interpreter lock released."""

RE = EARTH_EQUATORIAL_RADIUS
MU = EARTH_MU
G0 = STANDARD_GRAVITY
J2 = EARTH_J2
E2 = EARTH_FLATTENING * (2.0 - EARTH_FLATTENING)  # first eccentricity squared (WGS 84)
RB = RE * (1.0 - EARTH_FLATTENING)  # semi-minor axis [m]
EP2 = E2 / (1.0 - E2)  # second eccentricity squared
TOP = TOP_ALTITUDE
R0 = USSA76_EARTH_RADIUS
DENSITY_FACTOR = USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT
SOUND_FACTOR = USSA76_GAMMA * USSA76_GAS_CONSTANT / USSA76_MOLAR_MASS
INF = math.inf

# Dormand–Prince 5(4) tableau [1] (first same as last).
C2, C3, C4, C5 = 1 / 5, 3 / 10, 4 / 5, 8 / 9
A21 = 1 / 5
A31, A32 = 3 / 40, 9 / 40
A41, A42, A43 = 44 / 45, -56 / 15, 32 / 9
A51, A52, A53, A54 = 19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729
A61, A62, A63, A64, A65 = 9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656
B1, B3, B4, B5, B6 = 35 / 384, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84
E1 = 35 / 384 - 5179 / 57600
E3 = 500 / 1113 - 7571 / 16695
E4 = 125 / 192 - 393 / 640
E5 = -2187 / 6784 + 92097 / 339200
E6 = 11 / 84 - 187 / 2100
E7 = -1 / 40

# Absolute tolerances of the step control, per unit of the relative tolerance: position
# [m], speed and ledger [m/s], mass [kg] (at rtol 1e-8: 1e-4 m, 1e-6 m/s, 1e-9 kg).
ATOL_POSITION = 1e4
ATOL_SPEED = 1e2
ATOL_MASS = 1e-1
MAX_STEPS = 2_000_000
GOLDEN = 0.5 * (math.sqrt(5.0) - 1.0)

# Event kinds watched inside steps.
K_LIFTOFF, K_RAIL, K_KICK, K_HOLD, K_TOP, K_APOGEE, K_GROUND, K_CUTOFF = range(8)
N_KINDS = 8


# ----------------------------------------------------------------------------------------
# Frames
# ----------------------------------------------------------------------------------------
@compiled
def _dot(a: np.ndarray, b: np.ndarray) -> float:
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


@compiled
def _norm(a: np.ndarray) -> float:
    return math.sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2])


@compiled
def site_frame(p: np.ndarray, earth: int, out: np.ndarray) -> None:
    """The launch site's position and unit vectors (Earth-fixed frame), into ``out`` (NF).

    Round Earth: the site lies on the x-z plane (longitude 0 at time 0) at geocentric
    latitude equal to the given latitude, on a sphere of the WGS 84 equatorial radius.
    Ellipsoid: geodetic latitude on the WGS 84 ellipsoid [3]. Flat Earth: x east, y north,
    z up, the origin at the site.
    """
    lat = p[P_LATITUDE]
    az = p[P_AZIMUTH]
    el = p[P_ELEVATION]
    h = p[P_SITE_ALTITUDE]
    if earth == EARTH_FLAT:
        for j in range(3):
            out[F_SITE + j] = 0.0
        out[F_UP], out[F_UP + 1], out[F_UP + 2] = 0.0, 0.0, 1.0
        out[F_EAST], out[F_EAST + 1], out[F_EAST + 2] = 1.0, 0.0, 0.0
        out[F_NORTH], out[F_NORTH + 1], out[F_NORTH + 2] = 0.0, 1.0, 0.0
    else:
        s, c = math.sin(lat), math.cos(lat)
        if earth == EARTH_ELLIPSOID:
            n = RE / math.sqrt(1.0 - E2 * s * s)
            out[F_SITE] = (n + h) * c
            out[F_SITE + 1] = 0.0
            out[F_SITE + 2] = (n * (1.0 - E2) + h) * s
        else:
            out[F_SITE] = (RE + h) * c
            out[F_SITE + 1] = 0.0
            out[F_SITE + 2] = (RE + h) * s
        out[F_UP], out[F_UP + 1], out[F_UP + 2] = c, 0.0, s
        out[F_EAST], out[F_EAST + 1], out[F_EAST + 2] = 0.0, 1.0, 0.0
        out[F_NORTH], out[F_NORTH + 1], out[F_NORTH + 2] = -s, 0.0, c
    sa, ca = math.sin(az), math.cos(az)
    ce = math.cos(el)
    if abs(ce) < 1e-12:  # a vertical rail is exactly vertical (cos 90 deg is 6e-17)
        ce = 0.0
    se = math.sin(el)
    for j in range(3):
        d = sa * out[F_EAST + j] + ca * out[F_NORTH + j]
        out[F_AZIMUTH + j] = d
        out[F_RAIL + j] = ce * d + se * out[F_UP + j]
    # plane normal: up x azimuth direction
    ux, uy, uz = out[F_UP], out[F_UP + 1], out[F_UP + 2]
    dx, dy, dz = out[F_AZIMUTH], out[F_AZIMUTH + 1], out[F_AZIMUTH + 2]
    out[F_PLANE] = uy * dz - uz * dy
    out[F_PLANE + 1] = uz * dx - ux * dz
    out[F_PLANE + 2] = ux * dy - uy * dx
    out[F_WIND_TURN] = math.cos(p[P_WIND_TURN])
    out[F_WIND_TURN + 1] = math.sin(p[P_WIND_TURN])
    out[F_AZIMUTH_SINE] = sa
    out[F_AZIMUTH_SINE + 1] = ca


@compiled
def _frame(x: float, y: float, z: float, earth: int, site_altitude: float) -> tuple:
    """Altitude above sea level and the local up, east, north unit vectors (inertial frame)
    at a position, with the sine and cosine of the latitude (NaN on a flat Earth):
    (altitude, up x, y, z, east x, y, z, north x, y, z, sin lat, cos lat)."""
    if earth == EARTH_FLAT:
        nan = math.nan
        return z + site_altitude, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 0.0, 1.0, 0.0, nan, nan
    rho = math.sqrt(x * x + y * y)
    if rho > 0.0:
        co, so = x / rho, y / rho
    else:  # over a pole: any meridian will do
        co, so = 1.0, 0.0
    if earth == EARTH_ELLIPSOID:
        # Bowring's formula: one evaluation, millimetre-accurate for flight altitudes
        beta = math.atan2(z * RE, rho * RB)
        sb, cb = math.sin(beta), math.cos(beta)
        lat = math.atan2(z + EP2 * RB * sb * sb * sb, rho - E2 * RE * cb * cb * cb)
        sl, cl = math.sin(lat), math.cos(lat)
        n = RE / math.sqrt(1.0 - E2 * sl * sl)
        # the height formula that stays well conditioned: by rho away from the poles
        altitude = rho / cl - n if cl > 0.1 else z / sl - n * (1.0 - E2)
    else:
        radius = math.sqrt(rho * rho + z * z)
        sl, cl = z / radius, rho / radius
        altitude = radius - RE
    return altitude, cl * co, cl * so, sl, -so, co, 0.0, -sl * co, -sl * so, cl, sl, cl


@compiled
def _local(r: np.ndarray, earth: int, site_altitude: float, g: np.ndarray) -> float:
    """Local up, east, north (inertial frame) into g[0:9]; returns altitude above sea level.

    Also writes the sine and cosine of the latitude into g[9] and g[10] (NaN on a flat
    Earth).
    """
    frame = _frame(r[0], r[1], r[2], earth, site_altitude)
    for j in range(11):
        g[j] = frame[j + 1]
    return frame[0]


@compiled
def _gravity(x: float, y: float, z: float, earth: int) -> tuple:
    """Gravitational acceleration [m/s^2]: uniform, inverse-square, or with J2 [3]."""
    if earth == EARTH_FLAT:
        return 0.0, 0.0, -G0
    r2 = x * x + y * y + z * z
    radius = math.sqrt(r2)
    k = -MU / (r2 * radius)
    gx, gy, gz = k * x, k * y, k * z
    if earth == EARTH_ELLIPSOID:
        f = -1.5 * J2 * MU * RE * RE / (r2 * r2 * radius)
        q = 5.0 * z * z / r2
        gx += f * x * (1.0 - q)
        gy += f * y * (1.0 - q)
        gz += f * z * (3.0 - q)
    return gx, gy, gz


# ----------------------------------------------------------------------------------------
# Air
# ----------------------------------------------------------------------------------------
@compiled
def _air(altitude: float, tb: Tables, layer: int, out: np.ndarray) -> None:
    """Density [kg/m^3], pressure [Pa], speed of sound [m/s] into out[0:3] [4].

    ``layer`` is the layer the step flies in (its formula is continued a little past the
    layer's edges within the step, so no step sees a kink); -1: find it.
    """
    h = R0 * altitude / (R0 + altitude)
    tops = tb.layer_tops
    rows = tb.layer_rows
    if layer < 0:
        layer = 0
        while layer < tops.size and h > tops[layer]:
            layer += 1
    temperature = rows[0, layer] + rows[1, layer] * h
    out[2] = math.sqrt(SOUND_FACTOR * temperature)
    if layer >= tops.size:  # above the top of the atmosphere
        out[0] = 0.0
        out[1] = 0.0
        return
    pressure = math.exp(
        rows[2, layer] + rows[3, layer] * h - rows[4, layer] * math.log(temperature)
    )
    out[0] = pressure * DENSITY_FACTOR / temperature
    out[1] = pressure


@compiled
def _piece(x: float, xs: np.ndarray, ys: np.ndarray, lo: int, hi: int, count: int) -> float:
    """A piecewise-linear table xs[lo:hi] -> ys, read on one piece.

    ``count`` points lie at or below the step's start: the piece between points count-1
    and count is continued linearly past its ends within the step (so no step sees a
    kink); before the first point and after the last the table is constant. -1: find
    the piece from x.
    """
    if count < 0:
        return _interp(x, xs, ys, lo, hi)
    if count == 0:
        return ys[lo]
    if lo + count >= hi:
        return ys[hi - 1]
    a = lo + count - 1
    b = a + 1
    return ys[a] + (x - xs[a]) / (xs[b] - xs[a]) * (ys[b] - ys[a])


@compiled
def _interp(x: float, xs: np.ndarray, ys: np.ndarray, lo: int, hi: int) -> float:
    """Linear interpolation in xs[lo:hi] (increasing), held constant beyond the ends."""
    if x <= xs[lo]:
        return ys[lo]
    if x >= xs[hi - 1]:
        return ys[hi - 1]
    a, b = lo, hi - 1
    while b - a > 1:
        m = (a + b) // 2
        if xs[m] <= x:
            a = m
        else:
            b = m
    w = (x - xs[a]) / (xs[b] - xs[a])
    return ys[a] + w * (ys[b] - ys[a])


@compiled
def _wind(height: float, p: np.ndarray, tb: Tables, fr: np.ndarray, count: int) -> tuple:
    """Wind (east, north) [m/s], relative to the ground, at a height above the site."""
    east = 0.0
    north = 0.0
    n = tb.wind_height.size
    if n:
        e0 = _piece(height, tb.wind_height, tb.wind_east, 0, n, count)
        n0 = _piece(height, tb.wind_height, tb.wind_north, 0, n, count)
        ct, st = fr[F_WIND_TURN], fr[F_WIND_TURN + 1]
        scale = p[P_WIND_SCALE]
        east = scale * (e0 * ct + n0 * st)
        north = scale * (n0 * ct - e0 * st)
    along = p[P_WIND_ALONG]
    if along != 0.0:
        east += along * fr[F_AZIMUTH_SINE]
        north += along * fr[F_AZIMUTH_SINE + 1]
    return east, north


# ----------------------------------------------------------------------------------------
# Propulsion and steering
# ----------------------------------------------------------------------------------------
@compiled
def _thrust(t: float, z: np.ndarray, s: np.ndarray, tb: Tables, pressure: float) -> tuple:
    """Thrust [N], vacuum thrust [N] and mass flow [kg/s] of the burning stage."""
    if z[Z_PHASE] != BURNING:
        return 0.0, 0.0, 0.0
    k = int(z[Z_STAGE])
    row = s[k]
    if row[S_IS_MOTOR] > 0.5:
        scale_t = row[S_TIME_SCALE]
        since = (t - z[Z_IGNITION_TIME]) / scale_t
        lo, hi = tb.curve_start[k], tb.curve_start[k + 1]
        # the piece of the curve the step flies on: between the point before the step's
        # start and the next one (z[Z_CURVE_INDEX]), continued linearly within the step
        b = int(z[Z_CURVE_INDEX])
        if b <= lo or b >= hi:
            if since < tb.curve_time[lo] or since > tb.curve_time[hi - 1]:
                return 0.0, 0.0, 0.0
            curve = _interp(since, tb.curve_time, tb.curve_thrust, lo, hi)
        else:
            a = b - 1
            curve = tb.curve_thrust[a] + (since - tb.curve_time[a]) / (
                tb.curve_time[b] - tb.curve_time[a]
            ) * (tb.curve_thrust[b] - tb.curve_thrust[a])
        force = curve * row[S_IMPULSE_SCALE] / scale_t
        flow = curve / scale_t * row[S_USABLE] / row[S_CURVE_IMPULSE]
        area = row[S_EXIT_AREA]
        if area > 0.0 and curve > 0.0:
            # the curve was measured at the test pressure: the thrust equation moves it to
            # the ambient pressure, F = F_test + (p_test - p_a) A_e [Sutton & Biblarz, ch. 3]
            vacuum = force + row[S_TEST_PRESSURE] * area
            thrust = vacuum - pressure * area
            return (thrust if thrust > 0.0 else 0.0), vacuum, flow
        return force, force, flow
    vacuum = row[S_THRUST_VACUUM]
    force = vacuum - pressure * row[S_EXIT_AREA]
    if force < 0.0:
        force = 0.0
    return force, vacuum, row[S_MASS_FLOW]


@compiled
def _direction(  # type: ignore[no-untyped-def]
    t, vx, vy, vz, ux, uy, uz, z, p, s, c, fr, air_x, air_y, air_z, air_speed
):
    """Unit thrust direction (inertial frame) and whether rail or pad constrain the motion.

    ``ux, uy, uz`` is the local vertical. On the rail or the pad: along the rail. During a
    pitch programme: the launch direction in the local frame, tilted by the kick as it
    progresses. A stage steered by the linear-tangent law: tan(pitch) = tan(pitch at
    ignition) (1 - t / burn time), or under guidance "orbit" tan(pitch) = A + B t / burn
    time with A, B solved for the target orbit (t from its ignition); in the plane of the
    inertial velocity (no yaw steering). Otherwise along the air-relative velocity, unless
    the air speed is below the hold threshold: then the direction last flown is held.
    """
    omega_t = p[P_OMEGA] * t
    cw, sw = 1.0, 0.0
    if omega_t != 0.0:
        cw, sw = math.cos(omega_t), math.sin(omega_t)
    if z[Z_ON_RAIL] > 0.5 or z[Z_LIFTED] < 0.5:
        rx, ry, rz = fr[F_RAIL], fr[F_RAIL + 1], fr[F_RAIL + 2]
        return cw * rx - sw * ry, sw * rx + cw * ry, rz, True
    k = int(z[Z_STAGE])
    angle = 0.0
    hx, hy, hz = 0.0, 0.0, 0.0
    steered = False
    if _kick_active(t, z, p):
        progress = 0.0
        if t > z[Z_KICK_START]:
            progress = min((t - z[Z_KICK_START]) / p[P_KICK_DURATION], 1.0)
        # the launch plane turns with the Earth; downrange is its normal x up
        nx0, ny0, nz = fr[F_PLANE], fr[F_PLANE + 1], fr[F_PLANE + 2]
        nx, ny = cw * nx0 - sw * ny0, sw * nx0 + cw * ny0
        hx, hy, hz = ny * uz - nz * uy, nz * ux - nx * uz, nx * uy - ny * ux
        angle = p[P_ELEVATION] - p[P_KICK_ANGLE] * progress
        steered = True
    elif c[C_GUIDANCE] != GUIDE_GRAVITY_TURN and s[k, S_STEERED] > 0.5 and z[Z_PHASE] == BURNING:
        tau = (t - z[Z_IGNITION_TIME]) / z[Z_BURN_TIME]
        tau = min(max(tau, 0.0), 1.0)
        if c[C_GUIDANCE] == GUIDE_ORBIT and math.isfinite(p[P_GUIDE_A]):
            # the parameters solved for the target orbit (propulsion.guidance)
            angle = math.atan(p[P_GUIDE_A] + p[P_GUIDE_B] * tau)
        else:
            angle = math.atan(math.tan(z[Z_GUIDE_ANGLE]) * (1.0 - tau))
        # in the plane of the inertial velocity: the horizontal part of the velocity
        vertical = vx * ux + vy * uy + vz * uz
        hx, hy, hz = vx - vertical * ux, vy - vertical * uy, vz - vertical * uz
        steered = True
    if steered:
        size = math.sqrt(hx * hx + hy * hy + hz * hz)
        if size > 0.0:
            ca, sa = math.cos(angle) / size, math.sin(angle)
            return ca * hx + sa * ux, ca * hy + sa * uy, ca * hz + sa * uz, False
    if z[Z_HOLD] > 0.5 or air_speed <= 1e-9:
        return z[Z_HOLD_DIRECTION], z[Z_HOLD_DIRECTION + 1], z[Z_HOLD_DIRECTION + 2], False
    return air_x / air_speed, air_y / air_speed, air_z / air_speed, False


# ----------------------------------------------------------------------------------------
# Equations of motion
# ----------------------------------------------------------------------------------------
@compiled
def derivative(
    t: float,
    y: np.ndarray,
    z: np.ndarray,
    p: np.ndarray,
    s: np.ndarray,
    c: np.ndarray,
    tb: Tables,
    fr: np.ndarray,
    f: np.ndarray,
    a: np.ndarray,
    work: np.ndarray,
) -> None:
    """Time derivative of the state into ``f`` (NY) and the auxiliary quantities into ``a``.

    ``work`` is scratch space (at least 40 floats).
    """
    earth = c[C_EARTH]
    omega = p[P_OMEGA]
    x, yy, zz = y[0], y[1], y[2]
    vx, vy, vz = y[3], y[4], y[5]
    site_altitude = p[P_SITE_ALTITUDE]
    altitude, ux, uy, uz, ex, ey, ez, nx, ny, nz, _, _ = _frame(x, yy, zz, earth, site_altitude)
    height = altitude - site_altitude
    # velocity relative to the rotating Earth, and to the air
    wx, wy, wz = vx + omega * yy, vy - omega * x, vz
    east, north = _wind(height, p, tb, fr, int(z[Z_WIND_KNOT]))
    air_x = wx - (east * ex + north * nx)
    air_y = wy - (east * ey + north * ny)
    air_z = wz - (east * ez + north * nz)
    air_speed = math.sqrt(air_x * air_x + air_y * air_y + air_z * air_z)
    atmosphere = work[20:23]
    _air(altitude, tb, int(z[Z_LAYER_KNOT]), atmosphere)
    density, pressure, sound = atmosphere[0], atmosphere[1], atmosphere[2]
    mach = air_speed / sound if density > 0.0 else math.nan
    k = int(z[Z_STAGE])
    lo, hi = tb.drag_start[k], tb.drag_start[k + 1]
    cd = _piece(
        mach if density > 0.0 else 0.0, tb.drag_mach, tb.drag_cd, lo, hi, int(z[Z_MACH_KNOT])
    )
    drag_factor = 0.5 * density * air_speed * cd * p[P_CD_SCALE] * s[k, S_AREA]  # N s/m
    thrust, vacuum, flow = _thrust(t, z, s, tb, pressure)
    dx, dy, dz, constrained = _direction(
        t, vx, vy, vz, ux, uy, uz, z, p, s, c, fr, air_x, air_y, air_z, air_speed
    )
    gx, gy, gz = _gravity(x, yy, zz, earth)
    mass = y[Y_M]
    fx = (thrust * dx - drag_factor * air_x) / mass + gx
    fy = (thrust * dy - drag_factor * air_y) / mass + gy
    fz = (thrust * dz - drag_factor * air_z) / mass + gz
    # centripetal acceleration of a point fixed to the Earth: omega x (omega x r)
    w2 = omega * omega
    cx, cy = -w2 * x, -w2 * yy
    rail_acceleration = math.nan
    rail_distance = math.nan
    held = False
    if constrained:
        # the rail turns with the Earth: the vehicle moves only along it
        cw, sw = math.cos(omega * t), math.sin(omega * t)
        fixed_x = cw * x + sw * yy
        fixed_y = -sw * x + cw * yy
        rail_distance = (
            (fixed_x - fr[F_SITE]) * fr[F_RAIL]
            + (fixed_y - fr[F_SITE + 1]) * fr[F_RAIL + 1]
            + (zz - fr[F_SITE + 2]) * fr[F_RAIL + 2]
        )
        along = dx * (fx - cx) + dy * (fy - cy) + dz * fz
        rail_acceleration = along
        if z[Z_LIFTED] < 0.5:
            # the pad holds the vehicle until the lift-off event lets it go (the event
            # is where the thrust along the rail first exceeds the weight along it)
            along = 0.0
            held = True
        speed_along = dx * wx + dy * wy + dz * wz
        # s'' u + 2 omega x (s' u) + omega x (omega x r)
        ax = along * dx - 2.0 * omega * speed_along * dy + cx
        ay = along * dy + 2.0 * omega * speed_along * dx + cy
        az = along * dz
    else:
        ax, ay, az = fx, fy, fz
    f[0], f[1], f[2] = vx, vy, vz
    f[3], f[4], f[5] = ax, ay, az
    f[Y_M] = -flow
    # the ledger: rates along the Earth-relative velocity (inertial once out of the air)
    inertial = z[Z_INERTIAL] > 0.5
    ground_speed = math.sqrt(wx * wx + wy * wy + wz * wz)
    speed = math.sqrt(vx * vx + vy * vy + vz * vz)
    if inertial:
        reference, bx, by, bz = speed, vx, vy, vz
    else:
        reference, bx, by, bz = ground_speed, wx, wy, wz
    if reference > 1e-9:
        e_x, e_y, e_z = bx / reference, by / reference, bz / reference
    else:
        e_x, e_y, e_z = dx, dy, dz
    ideal = vacuum / mass
    back = (vacuum - thrust) / mass
    steering = thrust / mass * (1.0 - (dx * e_x + dy * e_y + dz * e_z))
    drag = drag_factor * (air_x * e_x + air_y * e_y + air_z * e_z) / mass
    rotation = 0.0 if inertial else -(cx * e_x + cy * e_y)
    f[Y_IDEAL] = ideal
    f[Y_BACK] = back
    f[Y_STEERING] = steering
    f[Y_DRAG] = drag
    f[Y_ROTATION] = rotation
    if held:
        # on the pad nothing moves: what the thrust gives is lost to the pad (gravity has
        # taken nothing yet, since there is no motion to slow)
        f[Y_GRAVITY] = 0.0
        f[Y_PAD] = ideal - back - steering - drag + rotation
    else:
        f[Y_GRAVITY] = -(gx * e_x + gy * e_y + gz * e_z)
        # the rail's push is across the motion (zero along it)
        f[Y_PAD] = -((ax - fx) * e_x + (ay - fy) * e_y + (az - fz) * e_z)
    # auxiliary quantities
    vertical = wx * ux + wy * uy + wz * uz
    a[A_ALTITUDE] = height
    a[A_ALTITUDE_SEA_LEVEL] = altitude
    a[A_DENSITY] = density
    a[A_PRESSURE] = pressure
    a[A_SOUND] = sound
    a[A_AIR_SPEED] = air_speed
    a[A_MACH] = mach
    a[A_DYNAMIC_PRESSURE] = 0.5 * density * air_speed * air_speed
    a[A_THRUST] = thrust
    a[A_DRAG] = drag_factor * air_speed
    a[A_GROUND_SPEED] = ground_speed
    a[A_INERTIAL_SPEED] = speed
    a[A_VERTICAL_SPEED] = vertical
    sx, sy, sz = ax - gx, ay - gy, az - gz
    a[A_ACCELERATION] = math.sqrt(sx * sx + sy * sy + sz * sz)
    a[A_RAIL_DISTANCE] = rail_distance
    a[A_RAIL_ACCELERATION] = rail_acceleration
    if earth == EARTH_FLAT:
        a[A_ENERGY] = math.nan
    else:
        a[A_ENERGY] = 0.5 * speed * speed - MU / math.sqrt(x * x + yy * yy + zz * zz)
    a[A_TILT] = dx * ux + dy * uy + dz * uz  # the cosine here; describe() turns it into the angle
    a[A_LEDGER_SPEED] = reference
    a[A_FLIGHT_PATH] = vertical / ground_speed if ground_speed > 0.0 else math.nan
    a[A_DIRECTION] = dx
    a[A_DIRECTION + 1] = dy
    a[A_DIRECTION + 2] = dz


@compiled
def describe(
    t: float,
    y: np.ndarray,
    z: np.ndarray,
    p: np.ndarray,
    s: np.ndarray,
    c: np.ndarray,
    tb: Tables,
    fr: np.ndarray,
    d: np.ndarray,
    work: np.ndarray,
) -> None:
    """Every derived quantity of a state (layout.DESCRIBED order) into ``d`` (ND)."""
    f = work[61:75]
    derivative(t, y, z, p, s, c, tb, fr, f, d[0:NA], work)
    earth = c[C_EARTH]
    omega_t = p[P_OMEGA] * t
    g = work[50:61]
    _local(y[0:3], earth, p[P_SITE_ALTITUDE], g)
    az = p[P_AZIMUTH]
    if earth == EARTH_FLAT:
        east, north = y[0], y[1]
        d[D_LATITUDE] = math.nan
        d[D_LONGITUDE] = math.nan
    else:
        # the point in the Earth-fixed frame, seen from the site on the sphere
        cw, sw = math.cos(omega_t), math.sin(omega_t)
        x = cw * y[0] + sw * y[1]
        yy = -sw * y[0] + cw * y[1]
        zz = y[2]
        size = math.sqrt(x * x + yy * yy + zz * zz)
        ux, uy, uz = x / size, yy / size, zz / size
        site = fr[F_SITE : F_SITE + 3]
        site_size = _norm(site)
        sx, sy, sz = site[0] / site_size, site[1] / site_size, site[2] / site_size
        cos_c = ux * sx + uy * sy + uz * sz
        px, py, pz = ux - cos_c * sx, uy - cos_c * sy, uz - cos_c * sz
        sin_c = math.sqrt(px * px + py * py + pz * pz)
        central = math.atan2(sin_c, cos_c)
        distance = RE * central
        # geocentric east and north at the site
        lat_c = math.atan2(sz, math.sqrt(sx * sx + sy * sy))
        ex, ey, ez = 0.0, 1.0, 0.0
        nx, ny, nz = -math.sin(lat_c), 0.0, math.cos(lat_c)
        if sin_c > 0.0:
            east = distance * (px * ex + py * ey + pz * ez) / sin_c
            north = distance * (px * nx + py * ny + pz * nz) / sin_c
        else:
            east, north = 0.0, 0.0
        d[D_LATITUDE] = math.atan2(g[9], g[10])
        d[D_LONGITUDE] = math.atan2(yy, x)
    d[D_EAST] = east
    d[D_NORTH] = north
    d[D_DOWNRANGE] = east * math.sin(az) + north * math.cos(az)
    d[D_CROSSRANGE] = east * math.cos(az) - north * math.sin(az)
    omega = p[P_OMEGA]
    we = y[3] + omega * y[1]
    wn = y[4] - omega * y[0]
    wz = y[5]
    ve = we * g[3] + wn * g[4] + wz * g[5]
    vn = we * g[6] + wn * g[7] + wz * g[8]
    d[D_HEADING] = math.atan2(ve, vn) if (ve != 0.0 or vn != 0.0) else math.nan
    d[D_MASS] = y[Y_M]
    d[A_TILT] = math.acos(min(max(d[A_TILT], -1.0), 1.0))
    if math.isfinite(d[A_FLIGHT_PATH]):
        d[A_FLIGHT_PATH] = math.asin(min(max(d[A_FLIGHT_PATH], -1.0), 1.0))


# ----------------------------------------------------------------------------------------
# Integrator
# ----------------------------------------------------------------------------------------
@compiled
def _step(t, y, h, f0, z, p, s, c, tb, fr, k, y1, f1, a1, error, work):  # type: ignore[no-untyped-def]
    """One Dormand–Prince 5(4) step: y1, f1 = f(t + h, y1), a1, and the error estimate."""
    tmp = work[100 : 100 + NY]
    a_scratch = work[120 : 120 + NA]
    for j in range(NY):
        tmp[j] = y[j] + h * A21 * f0[j]
    derivative(t + C2 * h, tmp, z, p, s, c, tb, fr, k[1], a_scratch, work)
    for j in range(NY):
        tmp[j] = y[j] + h * (A31 * f0[j] + A32 * k[1, j])
    derivative(t + C3 * h, tmp, z, p, s, c, tb, fr, k[2], a_scratch, work)
    for j in range(NY):
        tmp[j] = y[j] + h * (A41 * f0[j] + A42 * k[1, j] + A43 * k[2, j])
    derivative(t + C4 * h, tmp, z, p, s, c, tb, fr, k[3], a_scratch, work)
    for j in range(NY):
        tmp[j] = y[j] + h * (A51 * f0[j] + A52 * k[1, j] + A53 * k[2, j] + A54 * k[3, j])
    derivative(t + C5 * h, tmp, z, p, s, c, tb, fr, k[4], a_scratch, work)
    for j in range(NY):
        tmp[j] = y[j] + h * (
            A61 * f0[j] + A62 * k[1, j] + A63 * k[2, j] + A64 * k[3, j] + A65 * k[4, j]
        )
    derivative(t + h, tmp, z, p, s, c, tb, fr, k[5], a_scratch, work)
    for j in range(NY):
        y1[j] = y[j] + h * (B1 * f0[j] + B3 * k[2, j] + B4 * k[3, j] + B5 * k[4, j] + B6 * k[5, j])
    derivative(t + h, y1, z, p, s, c, tb, fr, f1, a1, work)
    for j in range(NY):
        error[j] = h * (
            E1 * f0[j] + E3 * k[2, j] + E4 * k[3, j] + E5 * k[4, j] + E6 * k[5, j] + E7 * f1[j]
        )


@compiled
def _copy(source: np.ndarray, target: np.ndarray) -> None:
    for j in range(source.size):
        target[j] = source[j]


@compiled
def _error_norm(error: np.ndarray, y0: np.ndarray, y1: np.ndarray, rtol: float) -> float:
    """Root-mean-square scaled error (Hairer et al., eq. II.4.11)."""
    total = 0.0
    for j in range(NY):
        if j < 3:
            atol = ATOL_POSITION
        elif j == Y_M:
            atol = ATOL_MASS
        else:
            atol = ATOL_SPEED
        scale = rtol * (atol + max(abs(y0[j]), abs(y1[j])))
        ratio = error[j] / scale
        total += ratio * ratio
    return math.sqrt(total / NY)


# The continuous extension of the Dormand-Prince 5(4) pair, of order four: the
# coefficients of theta, theta^2, theta^3, theta^4 for stages 1, 3, 4, 5, 6, 7 (stage 2
# does not enter). L. F. Shampine, "Some practical Runge-Kutta formulas", Mathematics of
# Computation 46(173), 135-150, 1986 (with the optimum c6 of the same paper).
P1 = (1.0, -8048581381 / 2820520608, 8663915743 / 2820520608, -12715105075 / 11282082432)
P3 = (0.0, 131558114200 / 32700410799, -68118460800 / 10900136933, 87487479700 / 32700410799)
P4 = (0.0, -1754552775 / 470086768, 14199869525 / 1410260304, -10690763975 / 1880347072)
P5 = (
    0.0,
    127303824393 / 49829197408,
    -318862633887 / 49829197408,
    701980252875 / 199316789632,
)
P6 = (0.0, -282668133 / 205662961, 2019193451 / 616988883, -1453857185 / 822651844)
P7 = (0.0, 40617522 / 29380423, -110615467 / 29380423, 69997945 / 29380423)


@compiled
def _dense(y0, f0, k, f1, h, theta, out):  # type: ignore[no-untyped-def]
    """The step's continuous extension (order four) at fraction ``theta``: free, from the
    stages of the step (f0, k[1..5], f1)."""
    t1 = theta
    t2 = t1 * theta
    t3 = t2 * theta
    t4 = t3 * theta
    b1 = P1[0] * t1 + P1[1] * t2 + P1[2] * t3 + P1[3] * t4
    b3 = P3[1] * t2 + P3[2] * t3 + P3[3] * t4
    b4 = P4[1] * t2 + P4[2] * t3 + P4[3] * t4
    b5 = P5[1] * t2 + P5[2] * t3 + P5[3] * t4
    b6 = P6[1] * t2 + P6[2] * t3 + P6[3] * t4
    b7 = P7[1] * t2 + P7[2] * t3 + P7[3] * t4
    for j in range(NY):
        out[j] = y0[j] + h * (
            b1 * f0[j] + b3 * k[2, j] + b4 * k[3, j] + b5 * k[4, j] + b6 * k[5, j] + b7 * f1[j]
        )


@compiled
def _hermite(y0, y1, f0, f1, h, theta, out):  # type: ignore[no-untyped-def]
    """Cubic Hermite interpolant of a step at fraction ``theta`` (Hairer et al., II.6)."""
    t2 = theta * theta
    t3 = t2 * theta
    h00 = 2 * t3 - 3 * t2 + 1
    h10 = t3 - 2 * t2 + theta
    h01 = -2 * t3 + 3 * t2
    h11 = t3 - t2
    for j in range(NY):
        out[j] = h00 * y0[j] + h10 * h * f0[j] + h01 * y1[j] + h11 * h * f1[j]


@compiled
def _event_value(kind: int, a: np.ndarray, p: np.ndarray) -> float:
    if kind == K_LIFTOFF:
        return a[A_RAIL_ACCELERATION]
    if kind == K_RAIL:
        return a[A_RAIL_DISTANCE] - p[P_RAIL]
    if kind == K_KICK:
        return a[A_AIR_SPEED] - p[P_KICK_SPEED]
    if kind == K_HOLD:
        return a[A_AIR_SPEED] - p[P_HOLD_SPEED]
    if kind == K_TOP:
        return a[A_ALTITUDE_SEA_LEVEL] - TOP
    if kind == K_APOGEE:
        return a[A_VERTICAL_SPEED]
    if kind == K_GROUND:
        return a[A_ALTITUDE]
    return a[A_ENERGY] - p[P_CUTOFF_ENERGY]


@compiled
def _kick_active(t: float, z: np.ndarray, p: np.ndarray) -> bool:
    """The pitch programme steers: from lift-off to the end of the kick, that end included
    (the step that ends there flies the programme to its last stage)."""
    return p[P_KICK_ANGLE] > 0.0 and z[Z_KICK_DONE] < 0.5 and t <= z[Z_KICK_END]


@compiled
def _watch(kind: int, t: float, z: np.ndarray, p: np.ndarray, s: np.ndarray, c: np.ndarray) -> int:
    """Direction in which an event is watched now: +1 rising, -1 falling, 2 both, 0 not."""
    constrained = z[Z_ON_RAIL] > 0.5 or z[Z_LIFTED] < 0.5
    last = c[C_STAGES] - 1
    k = int(z[Z_STAGE])
    if kind == K_LIFTOFF:
        return 1 if z[Z_LIFTED] < 0.5 and z[Z_PHASE] == BURNING else 0
    if kind == K_RAIL:
        return 1 if z[Z_ON_RAIL] > 0.5 and z[Z_LIFTED] > 0.5 else 0
    if kind == K_KICK:
        if math.isfinite(p[P_KICK_SPEED]) and not math.isfinite(z[Z_KICK_START]):
            return 1 if z[Z_LIFTED] > 0.5 else 0
        return 0
    if kind == K_HOLD:
        if constrained or _kick_active(t, z, p):
            return 0
        steered = c[C_GUIDANCE] != GUIDE_GRAVITY_TURN and s[k, S_STEERED] > 0.5
        if steered and z[Z_PHASE] == BURNING:
            return 0
        return 1 if z[Z_HOLD] > 0.5 else -1
    if kind == K_TOP:
        return 2
    if kind == K_APOGEE:
        return -1 if z[Z_WATCH_APOGEE] > 0.5 else 0
    if kind == K_GROUND:
        return -1 if z[Z_RISEN] > 0.5 else 0
    # cutoff
    if (
        math.isfinite(p[P_CUTOFF_ENERGY])
        and c[C_EARTH] != EARTH_FLAT
        and k == last
        and z[Z_PHASE] == BURNING
    ):
        return 1
    return 0


@compiled
def _crossed(direction: int, g0: float, g1: float) -> bool:
    if direction == 1:
        return g0 < 0.0 and g1 >= 0.0
    if direction == -1:
        return g0 > 0.0 and g1 <= 0.0
    if direction == 2:
        return (g0 < 0.0 and g1 >= 0.0) or (g0 > 0.0 and g1 <= 0.0)
    return False


@compiled
def _root_on_interpolant(  # type: ignore[no-untyped-def]
    kind,
    g_start,
    g_end,
    tolerance,
    t0,
    y0,
    k,
    f0,
    f1,
    h,
    z,
    p,
    s,
    c,
    tb,
    fr,
    state,
    work,
    point=0.0,
):
    """Fraction of the step where an event function crosses zero, on the step's continuous
    extension (:func:`_dense`).

    Illinois regula falsi to ``tolerance`` in the fraction; returns the end of the final
    bracket on the far side of the root. Kinds past the events are table points: the
    value is the table's variable minus ``point``.
    """
    f = work[150 : 150 + NY]
    a = work[170 : 170 + NA]
    lo, hi = 0.0, 1.0
    glo, ghi = g_start, g_end
    side = 0
    for _ in range(60):
        theta = (lo * ghi - hi * glo) / (ghi - glo)
        if not lo < theta < hi:
            theta = 0.5 * (lo + hi)
        _dense(y0, f0, k, f1, h, theta, state)
        derivative(t0 + theta * h, state, z, p, s, c, tb, fr, f, a, work)
        if kind < N_KINDS:
            gm = _event_value(kind, a, p)
        else:
            gm = _knot_value(kind - N_KINDS, a, z, tb) - point
        if not math.isfinite(gm):
            return hi
        if gm * ghi > 0.0 or gm == 0.0:
            hi, ghi = theta, gm
            if side == -1:
                glo *= 0.5
            side = -1
        else:
            lo, glo = theta, gm
            if side == 1:
                ghi *= 0.5
            side = 1
        if hi - lo < tolerance or gm == 0.0:
            break
    return hi


# ----------------------------------------------------------------------------------------
# One flight
# ----------------------------------------------------------------------------------------
@compiled
def _set_event(slot, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work):  # type: ignore[no-untyped-def]
    ev_t[slot] = t
    for j in range(NY):
        ev_y[slot, j] = y[j]
    describe(t, y, z, p, s, c, tb, fr, ev_d[slot], work)


@compiled
def _enter_free(z: np.ndarray, a: np.ndarray, p: np.ndarray) -> None:
    """Start free flight: hold the thrust direction if the air is too slow to steer it."""
    if a[A_AIR_SPEED] < p[P_HOLD_SPEED]:
        z[Z_HOLD] = 1.0
        for j in range(3):
            z[Z_HOLD_DIRECTION + j] = a[A_DIRECTION + j]
    else:
        z[Z_HOLD] = 0.0


@compiled
def _burn_time(k: int, s: np.ndarray, tb: Tables) -> float:
    row = s[k]
    if row[S_IS_MOTOR] > 0.5:
        return row[S_TIME_SCALE] * tb.curve_time[tb.curve_start[k + 1] - 1]
    if row[S_MASS_FLOW] > 0.0:
        return row[S_USABLE] / row[S_MASS_FLOW]
    return 0.0


@compiled
def _next_curve_point(t: float, z: np.ndarray, s: np.ndarray, tb: Tables) -> float:
    """Time of the next thrust-curve point of a burning motor (inf if none)."""
    if z[Z_PHASE] != BURNING:
        return INF
    k = int(z[Z_STAGE])
    if s[k, S_IS_MOTOR] < 0.5:
        return INF
    lo, hi = tb.curve_start[k], tb.curve_start[k + 1]
    scale = s[k, S_TIME_SCALE]
    start = z[Z_IGNITION_TIME]
    i = int(z[Z_CURVE_INDEX])
    if i < lo:
        i = lo
    while i < hi and start + scale * tb.curve_time[i] <= t * (1.0 + 1e-15) + 1e-12:
        i += 1
    z[Z_CURVE_INDEX] = i
    if i >= hi:
        return INF
    return start + scale * tb.curve_time[i]


@compiled
def _transitions(t, y, z, p, s, c, tb, fr, f, a, ev_t, ev_y, ev_d, work):  # type: ignore[no-untyped-def]
    """Apply the scheduled changes due at time t; returns a status if the flight ends."""
    stages = c[C_STAGES]
    status = ST_FLYING
    _forget_knots(z)
    for _ in range(3 * stages + 2):
        if t < z[Z_NEXT_TIME]:
            break
        k = int(z[Z_STAGE])
        phase = z[Z_PHASE]
        base = E_STAGE + 3 * k
        if phase == WAITING:
            z[Z_PHASE] = BURNING
            z[Z_IGNITION_TIME] = t
            z[Z_IGNITION_MASS] = y[Y_M]
            z[Z_BURN_TIME] = _burn_time(k, s, tb)
            z[Z_NEXT_TIME] = t + z[Z_BURN_TIME]
            z[Z_CURVE_INDEX] = tb.curve_start[k]
            speed = _norm(y[3:6])
            derivative(t, y, z, p, s, c, tb, fr, f, a, work)
            vertical = 0.0
            if speed > 1e-9:
                g = work[80:91]
                _local(y[0:3], c[C_EARTH], p[P_SITE_ALTITUDE], g)
                vertical = _dot(y[3:6], g[0:3]) / speed
            z[Z_GUIDE_ANGLE] = math.asin(min(max(vertical, -1.0), 1.0))
            _set_event(base, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            if z[Z_LIFTED] < 0.5:
                derivative(t, y, z, p, s, c, tb, fr, f, a, work)
                if a[A_RAIL_ACCELERATION] > 0.0:
                    z[Z_LIFTED] = 1.0
                    _set_event(E_LIFTOFF, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
                    if z[Z_ON_RAIL] < 0.5:
                        derivative(t, y, z, p, s, c, tb, fr, f, a, work)
                        _enter_free(z, a, p)
        elif phase == BURNING:
            _set_event(base + 1, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            z[Z_PHASE] = BURNT
            last = k == stages - 1
            z[Z_NEXT_TIME] = INF if last else t + s[k, S_SEPARATION_DELAY]
            if k == 0 and z[Z_LIFTED] < 0.5:
                return ST_NO_LIFTOFF
            if last:
                if math.isfinite(p[P_CUTOFF_ENERGY]) and c[C_EARTH] != EARTH_FLAT:
                    return ST_BURNOUT
                derivative(t, y, z, p, s, c, tb, fr, f, a, work)
                if a[A_VERTICAL_SPEED] > 0.0:
                    z[Z_WATCH_APOGEE] = 1.0
                elif c[C_STOP] != STOP_GROUND:
                    status = ST_APOGEE
                    break
        else:
            if k >= stages - 1:
                z[Z_NEXT_TIME] = INF
                break
            burnt = z[Z_IGNITION_MASS] - y[Y_M]
            y[Y_M] -= s[k, S_INERT] + s[k, S_PROPELLANT] - burnt
            z[Z_STAGE] = k + 1
            z[Z_PHASE] = WAITING
            z[Z_NEXT_TIME] = t + s[k + 1, S_IGNITION_DELAY]
            _set_event(base + 2, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
    return status


@compiled
def _golden(  # type: ignore[no-untyped-def]
    which, t0, y0, y1, f0, f1, h, z, p, s, c, tb, fr, state, work
):
    """Maximum of a quantity inside a step, on the interpolant (Brent's method).

    ``which`` picks the quantity: 0 dynamic pressure, 1 Mach, 2 altitude. Golden-section
    steps with parabolic interpolation, to 1e-5 of the step [R. P. Brent, Algorithms for
    Minimization without Derivatives, Prentice-Hall, 1973, chapter 5]. Returns (fraction
    of the step, value).
    """
    f = work[150 : 150 + NY]
    a = work[170 : 170 + NA]
    cgold = 1.0 - GOLDEN
    lo, hi = 0.0, 1.0
    x = w = v = lo + cgold * (hi - lo)
    fx = -_air_value(which, x, t0, y0, y1, f0, f1, h, z, p, s, c, tb, fr, state, f, a, work)
    fw = fv = fx
    d = 0.0
    e = 0.0
    for _ in range(40):
        middle = 0.5 * (lo + hi)
        tol1 = 1e-4 * abs(x) + 1e-9
        tol2 = 2.0 * tol1
        if abs(x - middle) <= tol2 - 0.5 * (hi - lo):
            break
        parabolic = False
        if abs(e) > tol1:
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            pp = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                pp = -pp
            q = abs(q)
            if abs(pp) < abs(0.5 * q * e) and q * (lo - x) < pp < q * (hi - x):
                e, d = d, pp / q
                u = x + d
                if u - lo < tol2 or hi - u < tol2:
                    d = tol1 if middle >= x else -tol1
                parabolic = True
        if not parabolic:
            e = (lo - x) if x >= middle else (hi - x)
            d = cgold * e
        u = x + d if abs(d) >= tol1 else x + (tol1 if d > 0 else -tol1)
        fu = -_air_value(which, u, t0, y0, y1, f0, f1, h, z, p, s, c, tb, fr, state, f, a, work)
        if fu <= fx:
            if u >= x:
                lo = x
            else:
                hi = x
            v, fv = w, fw
            w, fw = x, fx
            x, fx = u, fu
        else:
            if u < x:
                lo = u
            else:
                hi = u
            if fu <= fw or w == x:
                v, fv = w, fw
                w, fw = u, fu
            elif fu <= fv or v in (x, w):
                v, fv = u, fu
    return x, -fx


@compiled
def _air_value(  # type: ignore[no-untyped-def]
    which, theta, t0, y0, y1, f0, f1, h, z, p, s, c, tb, fr, state, f, a, work
):
    _hermite(y0, y1, f0, f1, h, theta, state)
    derivative(t0 + theta * h, state, z, p, s, c, tb, fr, f, a, work)
    return _quantity(which, a)


@compiled
def _quantity(which: int, a: np.ndarray) -> float:
    if which == 0:
        return a[A_DYNAMIC_PRESSURE]
    if which == 1:
        value = a[A_MACH]
        return value if math.isfinite(value) else -INF
    return a[A_ALTITUDE]


# A window around a peak of a quantity: two consecutive steps (states, derivatives and
# discrete states), searched for the peak when the flight is over.
W_USED = 0
W_NODE = 1
W_T0 = 2
W_H0 = 3
W_T1 = 4
W_H1 = 5
W_Y0 = 6
W_Y1 = W_Y0 + NY
W_Y2 = W_Y1 + NY
W_F0 = W_Y2 + NY
W_F1 = W_F0 + NY
W_G1 = W_F1 + NY
W_G2 = W_G1 + NY
W_Z0 = W_G2 + NY
W_Z1 = W_Z0 + NZ
WINDOW = W_Z1 + NZ


@compiled
def _search_window(  # type: ignore[no-untyped-def]
    which, window, p, s, c, tb, fr, state, work, k, f_out, a_out, error
):
    """The peak of a quantity in a window: (0 first step or 1 second, fraction, value).

    A probe near the node between the steps tells which one holds the peak; it is
    searched on its interpolant, and a Dormand–Prince step from the start of the step to
    the peak gives the state there, as exact as any step end, into ``state``.
    """
    y0 = window[W_Y0 : W_Y0 + NY]
    y1 = window[W_Y1 : W_Y1 + NY]
    y2 = window[W_Y2 : W_Y2 + NY]
    f0 = window[W_F0 : W_F0 + NY]
    f1 = window[W_F1 : W_F1 + NY]
    g1 = window[W_G1 : W_G1 + NY]
    g2 = window[W_G2 : W_G2 + NY]
    z0 = window[W_Z0 : W_Z0 + NZ]
    z1 = window[W_Z1 : W_Z1 + NZ]
    t0, h0, t1, h1 = window[W_T0], window[W_H0], window[W_T1], window[W_H1]
    f = work[150 : 150 + NY]
    a = work[170 : 170 + NA]
    node = window[W_NODE]
    # which side of the node is the peak on? A probe 1e-3 into the longer of the two
    # steps tells (a probe into a very short step would compare values that differ by
    # round-off only)
    if h0 >= h1:
        near = _air_value(
            which, 1.0 - 1e-3, t0, y0, y1, f0, f1, h0, z0, p, s, c, tb, fr, state, f, a, work
        )
        side = 0 if near > node else 1
    else:
        near = _air_value(
            which, 1e-3, t1, y1, y2, g1, g2, h1, z1, p, s, c, tb, fr, state, f, a, work
        )
        side = 1 if near > node else 0
    if side == 0:
        theta, _ = _golden(which, t0, y0, y1, f0, f1, h0, z0, p, s, c, tb, fr, state, work)
        _step(t0, y0, h0 * theta, f0, z0, p, s, c, tb, fr, k, state, f_out, a_out, error, work)
    else:
        theta, _ = _golden(which, t1, y1, y2, g1, g2, h1, z1, p, s, c, tb, fr, state, work)
        _step(t1, y1, h1 * theta, g1, z1, p, s, c, tb, fr, k, state, f_out, a_out, error, work)
    return side, theta, _quantity(which, a_out)


# Scratch memory of one flight: named regions of one float buffer (the kernel allocates
# nothing). Offsets in floats.
_REGIONS = (
    ("work", 200),
    ("frame", NF),
    ("y", NY),
    ("z", NZ),
    ("f0", NY),
    ("a0", NA),
    ("y1", NY),
    ("f1", NY),
    ("a1", NA),
    ("error", NY),
    ("state", NY),
    ("probe", NA),
    ("f_probe", NY),
    ("k", 6 * NY),
    ("best", 4),
    ("best_t", 4),
    ("best_y", 4 * NY),
    ("best_z", 4 * NZ),
    ("previous_y", NY),
    ("previous_f0", NY),
    ("previous_f1", NY),
    ("previous_z", NZ),
    ("node", 3),
    ("node_before", 3),
    ("g0", N_KINDS),
    ("windows", 3 * WINDOW),
)
_OFFSET = {}
_total = 0
for _name, _size in _REGIONS:
    _OFFSET[_name] = (_total, _total + _size)
    _total += _size
MEMORY = _total
"""Floats of scratch memory one flight needs."""
M_WORK = _OFFSET["work"]
M_FRAME = _OFFSET["frame"]
M_Y = _OFFSET["y"]
M_Z = _OFFSET["z"]
M_F0 = _OFFSET["f0"]
M_A0 = _OFFSET["a0"]
M_Y1 = _OFFSET["y1"]
M_F1 = _OFFSET["f1"]
M_A1 = _OFFSET["a1"]
M_ERROR = _OFFSET["error"]
M_STATE = _OFFSET["state"]
M_PROBE = _OFFSET["probe"]
M_F_PROBE = _OFFSET["f_probe"]
M_K = _OFFSET["k"]
M_BEST = _OFFSET["best"]
M_BEST_T = _OFFSET["best_t"]
M_BEST_Y = _OFFSET["best_y"]
M_BEST_Z = _OFFSET["best_z"]
M_PREVIOUS_Y = _OFFSET["previous_y"]
M_PREVIOUS_F0 = _OFFSET["previous_f0"]
M_PREVIOUS_F1 = _OFFSET["previous_f1"]
M_PREVIOUS_Z = _OFFSET["previous_z"]
M_NODE = _OFFSET["node"]
M_NODE_BEFORE = _OFFSET["node_before"]
M_G0 = _OFFSET["g0"]
M_WINDOWS = _OFFSET["windows"]


@compiled
def _count_at_or_below(x: float, points: np.ndarray, lo: int, hi: int) -> int:
    """How many of points[lo:hi] (increasing) are at or below x (-1 if x is NaN)."""
    if not math.isfinite(x):
        return -1
    count = 0
    for i in range(lo, hi):
        if points[i] <= x:
            count += 1
        else:
            break
    return count


@compiled
def _knot_value(which: int, a: np.ndarray, z: np.ndarray, tb: Tables) -> float:
    """The variable a piecewise-linear table is read at: Mach, geopotential, height."""
    if which == 0:
        return a[A_MACH]
    if which == 1:
        altitude = a[A_ALTITUDE_SEA_LEVEL]
        return R0 * altitude / (R0 + altitude)
    return a[A_ALTITUDE]


@compiled
def _knot_table(which: int, z: np.ndarray, tb: Tables) -> tuple:
    """The points of a table where the step must end (none for a one-point table, which
    is constant)."""
    if which == 0:
        k = int(z[Z_STAGE])
        lo, hi = tb.drag_start[k], tb.drag_start[k + 1]
        return tb.drag_mach, lo, hi if hi - lo > 1 else lo
    if which == 1:
        return tb.layer_tops, 0, tb.layer_tops.size
    n = tb.wind_height.size
    return tb.wind_height, 0, n if n > 1 else 0


@compiled
def _forget_knots(z: np.ndarray) -> None:
    """Read the tables by search until the pieces are located again."""
    for which in range(3):
        z[Z_MACH_KNOT + which] = -1.0


@compiled
def _locate_knots(a: np.ndarray, z: np.ndarray, tb: Tables) -> None:
    """Which interval of each piecewise-linear table the flight is in now."""
    for which in range(3):
        points, lo, hi = _knot_table(which, z, tb)
        z[Z_MACH_KNOT + which] = _count_at_or_below(_knot_value(which, a, z, tb), points, lo, hi)


@compiled
def _fly(  # type: ignore[no-untyped-def]
    p, s, c, tb, rtol, ev_t, ev_y, ev_d, rec_t, rec_y, rec_d, record, mem
):
    """Integrate one flight from its start to its end.

    With ``record``, every accepted step goes into rec_t, rec_y, rec_d until they are full.
    Returns (status, accepted steps, steps recorded, whether the record overflowed).
    """
    for j in range(MEMORY):
        mem[j] = 0.0
    work = mem[M_WORK[0] : M_WORK[1]]
    fr = mem[M_FRAME[0] : M_FRAME[1]]
    y = mem[M_Y[0] : M_Y[1]]
    z = mem[M_Z[0] : M_Z[1]]
    f0 = mem[M_F0[0] : M_F0[1]]
    a0 = mem[M_A0[0] : M_A0[1]]
    y1 = mem[M_Y1[0] : M_Y1[1]]
    f1 = mem[M_F1[0] : M_F1[1]]
    a1 = mem[M_A1[0] : M_A1[1]]
    error = mem[M_ERROR[0] : M_ERROR[1]]
    state = mem[M_STATE[0] : M_STATE[1]]
    probe = mem[M_PROBE[0] : M_PROBE[1]]
    f_probe = mem[M_F_PROBE[0] : M_F_PROBE[1]]
    k = mem[M_K[0] : M_K[1]].reshape((6, NY))
    best = mem[M_BEST[0] : M_BEST[1]]
    best_t = mem[M_BEST_T[0] : M_BEST_T[1]]
    best_y = mem[M_BEST_Y[0] : M_BEST_Y[1]].reshape((4, NY))
    best_z = mem[M_BEST_Z[0] : M_BEST_Z[1]].reshape((4, NZ))
    previous_y = mem[M_PREVIOUS_Y[0] : M_PREVIOUS_Y[1]]
    previous_f0 = mem[M_PREVIOUS_F0[0] : M_PREVIOUS_F0[1]]
    previous_f1 = mem[M_PREVIOUS_F1[0] : M_PREVIOUS_F1[1]]
    previous_z = mem[M_PREVIOUS_Z[0] : M_PREVIOUS_Z[1]]
    node = mem[M_NODE[0] : M_NODE[1]]
    node_before = mem[M_NODE_BEFORE[0] : M_NODE_BEFORE[1]]
    g0 = mem[M_G0[0] : M_G0[1]]
    windows = mem[M_WINDOWS[0] : M_WINDOWS[1]].reshape((3, WINDOW))

    site_frame(p, c[C_EARTH], fr)
    omega = p[P_OMEGA]
    _forget_knots(z)
    z[Z_KICK_START] = INF
    z[Z_KICK_END] = INF
    if p[P_KICK_ANGLE] > 0.0 and math.isfinite(p[P_KICK_TIME]):
        z[Z_KICK_START] = p[P_KICK_TIME]
        z[Z_KICK_END] = p[P_KICK_TIME] + p[P_KICK_DURATION]
    if c[C_AIRBORNE] == 1:
        t = p[P_START_TIME]
        for j in range(6):
            y[j] = p[P_START_STATE + j]
        z[Z_LIFTED] = 1.0
        z[Z_RISEN] = 1.0
        z[Z_ON_RAIL] = 0.0
    else:
        t = 0.0
        for j in range(3):
            y[j] = fr[F_SITE + j]
        # the pad moves with the Earth
        y[3] = -omega * y[1]
        y[4] = omega * y[0]
        y[5] = 0.0
        z[Z_ON_RAIL] = 1.0 if p[P_RAIL] > 0.0 else 0.0
    y[Y_M] = p[P_MASS]
    z[Z_NEXT_TIME] = t
    z[Z_STAGE] = 0.0
    z[Z_PHASE] = WAITING
    derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
    for j in range(3):
        z[Z_HOLD_DIRECTION + j] = a0[A_DIRECTION + j]
    if c[C_AIRBORNE] == 1:
        _enter_free(z, a0, p)
    # flying above the atmosphere from the start: the ledger is inertial from the start
    if a0[A_ALTITUDE_SEA_LEVEL] > TOP:
        z[Z_INERTIAL] = 1.0
    status = _transitions(t, y, z, p, s, c, tb, fr, f0, a0, ev_t, ev_y, ev_d, work)
    derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
    _locate_knots(a0, z, tb)
    capacity = rec_t.size if record else 0
    overflow = False
    count = 0
    if record and capacity > 0:
        rec_t[0] = t
        _copy(y, rec_y[0])
        describe(t, y, z, p, s, c, tb, fr, rec_d[0], work)
        count = 1
    # running maxima (dynamic pressure, Mach, altitude, acceleration): value, time, state
    for q in range(3):
        best[q] = _quantity(q, a0)
        best_t[q] = t
        _copy(y, best_y[q])
        _copy(z, best_z[q])
        node[q] = best[q]
        node_before[q] = -INF
    best[3], best_t[3] = a0[A_ACCELERATION], t
    _copy(y, best_y[3])
    _copy(z, best_z[3])
    has_previous = False
    previous_t, previous_h = t, 0.0
    h = 1e-3
    steps = 0
    failures = 0
    max_time = p[P_MAX_TIME]
    while status == ST_FLYING:
        # the step ends on the next scheduled change
        limit = min(z[Z_NEXT_TIME], max_time)
        limit = min(limit, _next_curve_point(t, z, s, tb))
        if z[Z_KICK_START] > t:
            limit = min(limit, z[Z_KICK_START])
        if z[Z_KICK_END] > t:
            limit = min(limit, z[Z_KICK_END])
        scheduled = False
        wanted = h
        if h >= limit - t:
            h = limit - t
            scheduled = True
        if h < 1e-12:
            h = 1e-12
        _step(t, y, h, f0, z, p, s, c, tb, fr, k, y1, f1, a1, error, work)
        norm = _error_norm(error, y, y1, rtol)
        if not math.isfinite(norm):
            norm = 1e10
        if norm > 1.0:
            h = h * max(0.2, 0.9 * norm ** (-0.2))
            failures += 1
            if h < 1e-12 * max(1.0, abs(t)) or failures > 200:
                status = ST_STEP_FAILURE
                break
            continue
        failures = 0
        factor = 5.0 if norm == 0.0 else min(5.0, max(0.2, 0.9 * norm ** (-0.2)))
        h_next = h * factor
        if scheduled and h_next < wanted:
            # the step was cut short by a scheduled change, not by its error
            h_next = min(wanted, 5.0 * h_next)
        t1 = limit if scheduled else t + h
        # events inside the step: the earliest one wins
        fired = -1
        theta_fired = 2.0
        for kind in range(N_KINDS):
            direction = _watch(kind, t, z, p, s, c)
            if direction == 0:
                continue
            g0[kind] = _event_value(kind, a0, p)
            g1 = _event_value(kind, a1, p)
            if not _crossed(direction, g0[kind], g1):
                continue
            theta = _root_on_interpolant(
                kind, g0[kind], g1, 1e-9, t, y, k, f0, f1, h, z, p, s, c, tb, fr, state, work
            )
            if theta < theta_fired:
                theta_fired = theta
                fired = kind
        # a point of a piecewise-linear table (drag curve, atmosphere layer, wind profile)
        # crossed inside the step: the step ends there, so no step straddles a kink
        knot = -1
        for which in range(3):
            points, lo, hi = _knot_table(which, z, tb)
            start = int(z[Z_MACH_KNOT + which])
            end = _count_at_or_below(_knot_value(which, a1, z, tb), points, lo, hi)
            if start < 0 or end < 0 or end == start:
                continue
            point = points[lo + start] if end > start else points[lo + start - 1]
            x0 = _knot_value(which, a0, z, tb) - point
            x1 = _knot_value(which, a1, z, tb) - point
            theta = _root_on_interpolant(
                N_KINDS + which, x0, x1, 1e-5, t, y, k, f0, f1, h, z, p, s, c, tb, fr, state,
                work, point,
            )  # fmt: skip
            theta = min(theta + 1e-9, 1.0)
            if theta < theta_fired:
                theta_fired = theta
                fired = -1
                knot = which
        if fired >= 0:
            # step again from the start to the event: the root on the continuous extension
            # is accurate to the integration error. If the integrated state there has not
            # crossed yet, a second one close by on the other side brackets the root, and
            # regula falsi (Illinois) on integrated states closes the bracket to 1e-9 of
            # the step; the cut lands on its far side, so the crossing has happened there.
            ghi = _event_value(fired, a1, p)
            glo = g0[fired]
            slope = abs(ghi - glo)
            lo_theta, hi_theta = 0.0, 1.0
            # aim just past the root on the extension: usually the integrated state there
            # has crossed too, and one step suffices
            theta = min(theta_fired + 1e-9, 1.0)
            side = 0
            for attempt in range(12):
                _step(
                    t, y, h * theta, f0, z, p, s, c, tb, fr, k, state, f_probe, probe, error, work
                )
                gm = _event_value(fired, probe, p)
                past = gm * ghi > 0.0 or gm == 0.0
                if past:
                    hi_theta, ghi = theta, gm
                    _copy(state, y1)
                    _copy(f_probe, f1)
                    _copy(probe, a1)
                    if side == -1:
                        glo *= 0.5
                    side = -1
                else:
                    lo_theta, glo = theta, gm
                    if side == 1:
                        ghi *= 0.5
                    side = 1
                if hi_theta - lo_theta < 1e-9 or gm == 0.0:
                    break
                if past and abs(gm) < 1e-9 * slope:
                    break  # past the root, and within 1e-9 of the step of it
                if attempt == 0:
                    reach = max(2.0 * abs(gm) / slope, 1e-9)
                    theta = theta - reach if past else theta + reach
                else:
                    theta = (lo_theta * ghi - hi_theta * glo) / (ghi - glo)
                if not lo_theta < theta < hi_theta:
                    theta = 0.5 * (lo_theta + hi_theta)
            t1 = t + h * hi_theta
            h_next = max(h * hi_theta, 1e-6)
            h = h * hi_theta
            scheduled = False
        elif knot >= 0:
            # the state at the table's point from the step's continuous extension (the
            # step's own accuracy, at no cost), and the derivative there
            _dense(y, f0, k, f1, h, theta_fired, y1)
            derivative(t + h * theta_fired, y1, z, p, s, c, tb, fr, f1, a1, work)
            t1 = t + h * theta_fired
            h = h * theta_fired
            scheduled = False
        steps += 1
        # maxima: every step end is a candidate (model switches are step ends); where the
        # values at the step ends peak higher than ever before, the two steps around the
        # peak are kept, and searched once the flight is over
        for q in range(3):
            value = _quantity(q, a1)
            peak = node[q] >= node_before[q] and node[q] > value
            if has_previous and peak and node[q] >= best[q]:
                window = windows[q]
                window[W_T0] = previous_t
                window[W_H0] = previous_h
                window[W_T1] = t
                window[W_H1] = h
                window[W_NODE] = node[q]
                window[W_USED] = 1.0
                _copy(previous_y, window[W_Y0 : W_Y0 + NY])
                _copy(y, window[W_Y1 : W_Y1 + NY])
                _copy(y1, window[W_Y2 : W_Y2 + NY])
                _copy(previous_f0, window[W_F0 : W_F0 + NY])
                _copy(previous_f1, window[W_F1 : W_F1 + NY])
                _copy(f0, window[W_G1 : W_G1 + NY])
                _copy(f1, window[W_G2 : W_G2 + NY])
                _copy(previous_z, window[W_Z0 : W_Z0 + NZ])
                _copy(z, window[W_Z1 : W_Z1 + NZ])
            if value > best[q]:
                best[q], best_t[q] = value, t1
                _copy(y1, best_y[q])
                _copy(z, best_z[q])
            node_before[q] = node[q]
            node[q] = value
        if a1[A_ACCELERATION] > best[3]:
            best[3], best_t[3] = a1[A_ACCELERATION], t1
            _copy(y1, best_y[3])
            _copy(z, best_z[3])
        has_previous = True
        previous_t, previous_h = t, h
        _copy(y, previous_y)
        _copy(f0, previous_f0)
        _copy(f1, previous_f1)
        _copy(z, previous_z)
        if record:
            if count + 2 > capacity:
                overflow = True
            else:
                rec_t[count] = t1
                _copy(y1, rec_y[count])
                describe(t1, y1, z, p, s, c, tb, fr, rec_d[count], work)
                count += 1
        # accept
        t = t1
        _copy(y1, y)
        _copy(f1, f0)
        _copy(a1, a0)
        h = h_next
        changed = False
        if knot >= 0:
            # the next step flies on the table's next piece
            _locate_knots(a0, z, tb)
            derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
        if fired == K_LIFTOFF:
            z[Z_LIFTED] = 1.0
            _set_event(E_LIFTOFF, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            changed = True
            if z[Z_ON_RAIL] < 0.5:
                derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
                _enter_free(z, a0, p)
        elif fired == K_RAIL:
            z[Z_ON_RAIL] = 0.0
            _set_event(E_RAIL_EXIT, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
            if not _kick_active(t, z, p):
                _enter_free(z, a0, p)
            changed = True
        elif fired == K_KICK:
            z[Z_KICK_START] = t
            z[Z_KICK_END] = t + p[P_KICK_DURATION]
            _set_event(E_KICK, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            changed = True
        elif fired == K_HOLD:
            if z[Z_HOLD] > 0.5:
                z[Z_HOLD] = 0.0
            else:
                z[Z_HOLD] = 1.0
                for j in range(3):
                    z[Z_HOLD_DIRECTION + j] = a0[A_DIRECTION + j]
                if not math.isfinite(ev_t[E_FIRST_HOLD]):
                    _set_event(E_FIRST_HOLD, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            changed = True
        elif fired == K_TOP:
            if a0[A_VERTICAL_SPEED] >= 0.0:
                if z[Z_INERTIAL] < 0.5:
                    # leave the atmosphere: the ledger goes inertial, and the difference
                    # of the two speeds is what the rotating Earth gave
                    z[Z_INERTIAL] = 1.0
                    y[Y_ROTATION] += a0[A_INERTIAL_SPEED] - a0[A_GROUND_SPEED]
                if not math.isfinite(ev_t[E_LEFT_ATMOSPHERE]):
                    _set_event(E_LEFT_ATMOSPHERE, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            elif not math.isfinite(ev_t[E_REENTRY]):
                _set_event(E_REENTRY, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            changed = True
        elif fired == K_APOGEE:
            _set_event(E_APOGEE, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            z[Z_WATCH_APOGEE] = 0.0
            if c[C_STOP] != STOP_GROUND:
                status = ST_APOGEE
        elif fired == K_GROUND:
            _set_event(E_GROUND, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            status = ST_GROUND
        elif fired == K_CUTOFF:
            _set_event(E_CUTOFF, t, y, z, p, s, c, tb, fr, ev_t, ev_y, ev_d, work)
            z[Z_PHASE] = BURNT
            z[Z_NEXT_TIME] = INF
            status = ST_ORBIT
        if status != ST_FLYING:
            break
        # a timed kick ends: free flight begins
        if scheduled and p[P_KICK_ANGLE] > 0.0 and t == z[Z_KICK_END] and z[Z_LIFTED] > 0.5:
            z[Z_KICK_DONE] = 1.0
            if z[Z_ON_RAIL] < 0.5:
                _enter_free(z, a0, p)
            changed = True
        if a0[A_ALTITUDE] > 1.0:
            z[Z_RISEN] = 1.0
        if t >= z[Z_NEXT_TIME]:
            status = _transitions(t, y, z, p, s, c, tb, fr, f0, a0, ev_t, ev_y, ev_d, work)
            changed = True
        if status == ST_FLYING and t >= max_time:
            status = ST_TIME_LIMIT
        if changed:
            _forget_knots(z)
            derivative(t, y, z, p, s, c, tb, fr, f0, a0, work)
            _locate_knots(a0, z, tb)
            if a0[A_ACCELERATION] > best[3]:
                best[3], best_t[3] = a0[A_ACCELERATION], t
                _copy(y, best_y[3])
                _copy(z, best_z[3])
            if record and status == ST_FLYING and count < capacity:
                rec_t[count] = t
                _copy(y, rec_y[count])
                describe(t, y, z, p, s, c, tb, fr, rec_d[count], work)
                count += 1
        if steps >= MAX_STEPS:
            status = ST_STEP_FAILURE
    # the peaks inside steps
    for q in range(3):
        window = windows[q]
        if window[W_USED] < 0.5:
            continue
        side, theta, found = _search_window(
            q, window, p, s, c, tb, fr, state, work, k, f_probe, probe, error
        )
        if found > best[q]:
            best[q] = found
            if side == 0:
                best_t[q] = window[W_T0] + theta * window[W_H0]
                _copy(window[W_Z0 : W_Z0 + NZ], best_z[q])
            else:
                best_t[q] = window[W_T1] + theta * window[W_H1]
                _copy(window[W_Z1 : W_Z1 + NZ], best_z[q])
            _copy(state, best_y[q])
    # the flight's apogee is its highest point once the last stage has burnt out
    last_burnout = E_STAGE + 3 * (c[C_STAGES] - 1) + 1
    ended_high = status == ST_APOGEE or (status == ST_GROUND and math.isfinite(ev_t[last_burnout]))
    orbital = math.isfinite(p[P_CUTOFF_ENERGY]) and c[C_EARTH] != EARTH_FLAT
    if ended_high and not orbital and not math.isfinite(ev_t[E_APOGEE]):
        ev_t[E_APOGEE] = best_t[2]
        for j in range(NY):
            ev_y[E_APOGEE, j] = best_y[2, j]
        describe(best_t[2], best_y[2], best_z[2], p, s, c, tb, fr, ev_d[E_APOGEE], work)
    slots = (E_MAX_DYNAMIC_PRESSURE, E_MAX_MACH, E_MAX_ALTITUDE, E_MAX_ACCELERATION)
    for q in range(4):
        slot = slots[q]
        if math.isfinite(best_t[q]) and best[q] > -INF:
            ev_t[slot] = best_t[q]
            for j in range(NY):
                ev_y[slot, j] = best_y[q, j]
            describe(best_t[q], best_y[q], best_z[q], p, s, c, tb, fr, ev_d[slot], work)
    ev_t[E_FINAL] = t
    for j in range(NY):
        ev_y[E_FINAL, j] = y[j]
    describe(t, y, z, p, s, c, tb, fr, ev_d[E_FINAL], work)
    return status, steps, count, overflow


@compiled
def fly_batch(  # type: ignore[no-untyped-def]
    lo,
    hi,
    params,
    stage_params,
    settings,
    tb,
    rtol,
    status,
    steps,
    ev_t,
    ev_y,
    ev_d,
    mem,
    recorded,
    rec_t,
    rec_y,
    rec_d,
    rec_info,
):
    """Fly samples lo..hi-1; each writes only its own rows of the outputs.

    ``mem`` is scratch memory of at least MEMORY floats, for this call alone. Sample
    ``recorded`` (if it lies in lo..hi-1) keeps its accepted steps in rec_t, rec_y,
    rec_d; rec_info[0] gets how many, rec_info[1] 1 if the buffers were too small. One
    entry point for both, so a new process loads one compiled function from the cache.
    """
    for i in range(lo, hi):
        ev_t[i, :] = math.nan
        ev_y[i, :, :] = math.nan
        ev_d[i, :, :] = math.nan
        record = i == recorded
        result = _fly(
            params[i], stage_params[i], settings, tb, rtol, ev_t[i], ev_y[i], ev_d[i],
            rec_t, rec_y, rec_d, record, mem,
        )  # fmt: skip
        status[i] = result[0]
        steps[i] = result[1]
        if record:
            rec_info[0] = result[2]
            rec_info[1] = 1 if result[3] else 0
