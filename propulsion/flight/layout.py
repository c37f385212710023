"""Where each number sits in the arrays the flight kernel reads and writes.

The compiled kernel (:mod:`propulsion.flight.kernel`) works on plain float arrays; this module
names their columns once, for the kernel and for the Python code around it. Every name is a
module-level integer, which numba folds into the compiled code as a constant.

State vector ``y`` (``NY`` components, SI):

========  =============================================================================
index     meaning
========  =============================================================================
0..2      position [m]: Earth-centred inertial (round Earth), or east, north, up from
          the launch site (flat Earth)
3..5      inertial velocity [m/s]
6         mass [kg]
7         ideal delta-v: integral of vacuum thrust / mass [m/s]
8         gravity loss [m/s]
9         drag loss [m/s]
10        steering loss [m/s]
11        back-pressure loss [m/s]
12        pad loss: thrust spent while the pad still holds the vehicle [m/s]
13        Earth-rotation credit [m/s]
========  =============================================================================

The ledger integrals (7..13) are defined so that ideal + credit - losses is the change of
the *ledger speed*: the speed relative to the rotating Earth while the vehicle
is in the atmosphere, the inertial speed once it has left it (see
:mod:`propulsion.flight.kernel`).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import numpy.typing as npt

# --- state ---------------------------------------------------------------------------------
Y_R = 0
Y_V = 3
Y_M = 6
Y_IDEAL = 7
Y_GRAVITY = 8
Y_DRAG = 9
Y_STEERING = 10
Y_BACK = 11
Y_PAD = 12
Y_ROTATION = 13
NY = 14

#: Ledger integrals in state order, with the names the results use.
LEDGER_TERMS = ("ideal", "gravity", "drag", "steering", "pressure", "pad", "rotation")

# --- per-sample parameters: P[n, NP] ------------------------------------------------------
P_MASS = 0  # mass at ignition of the first stage [kg]
P_SITE_ALTITUDE = 1  # launch site above sea level [m]
P_RAIL = 2  # rail length [m]
P_ELEVATION = 3  # rail elevation above the horizon [rad]
P_AZIMUTH = 4  # launch azimuth, clockwise from north [rad]
P_LATITUDE = 5  # site latitude [rad]
P_OMEGA = 6  # Earth's rotation rate used by this flight [rad/s] (0: no rotation)
P_CD_SCALE = 7  # drag coefficient factor
P_WIND_SCALE = 8  # wind profile factor
P_WIND_TURN = 9  # wind profile turned clockwise by this angle [rad]
P_WIND_ALONG = 10  # steady wind blowing along the launch azimuth [m/s]
P_KICK_ANGLE = 11  # pitch kick [rad]
P_KICK_TIME = 12  # pitch kick start time [s] (inf: not by time)
P_KICK_SPEED = 13  # pitch kick start air speed [m/s] (inf: not by speed)
P_KICK_DURATION = 14  # pitch kick duration [s]
P_CUTOFF_ENERGY = 15  # orbital energy at which the last stage cuts off [J/kg] (NaN: none)
P_HOLD_SPEED = 16  # below this air speed the thrust holds its direction [m/s]
P_MAX_TIME = 17  # the flight stops at this time [s]
P_START_TIME = 18  # airborne start: time [s]
P_START_STATE = 19  # airborne start: position (3) and velocity (3), frame of the state
P_GUIDE_A = 25  # guidance "orbit": tan(pitch) = A + B tau of the steered stage (NaN: unsolved)
P_GUIDE_B = 26  # ...tau being the time since its ignition over its burn time
NP = 27

# --- per-stage parameters: S[n, s, NS] --------------------------------------------------
S_INERT = 0  # inert mass, motor cases included [kg]
S_PROPELLANT = 1  # propellant loaded [kg]
S_USABLE = 2  # propellant burnt [kg]
S_AREA = 3  # drag reference area of the stack from this stage up [m^2]
S_SEPARATION_DELAY = 4  # burnout to separation [s]
S_IGNITION_DELAY = 5  # separation below to ignition [s]
S_IMPULSE_SCALE = 6  # factor on a motor curve's thrust
S_TIME_SCALE = 7  # factor on a motor curve's time
S_THRUST_VACUUM = 8  # engine cluster vacuum thrust [N]
S_EXIT_AREA = 9  # engine cluster nozzle exit area [m^2]; a motor cluster's, when its file gives it
S_MASS_FLOW = 10  # engine cluster mass flow [kg/s]
S_IS_MOTOR = 11  # 1: thrust from the curve; 0: an engine
S_CURVE_IMPULSE = 12  # total impulse of the (unscaled) cluster curve [N s]
S_STEERED = 13  # 1: the guidance law steers this stage while it burns
S_TEST_PRESSURE = 14  # ambient pressure a motor's curve was measured at [Pa]
NS = 15

# --- settings shared by a batch: C[NC] (integers) ----------------------------------------
C_EARTH = 0  # EARTH_FLAT, EARTH_ROUND, EARTH_ELLIPSOID
C_STOP = 1  # STOP_APOGEE, STOP_GROUND
C_AIRBORNE = 2  # 1: start in free flight from P_START_*
C_STAGES = 3  # number of stages
C_GUIDANCE = 4  # GUIDE_GRAVITY_TURN, GUIDE_LINEAR_TANGENT, GUIDE_ORBIT
NC = 5

EARTH_FLAT = 0
EARTH_ROUND = 1
EARTH_ELLIPSOID = 2
STOP_APOGEE = 0
STOP_GROUND = 1
GUIDE_GRAVITY_TURN = 0
GUIDE_LINEAR_TANGENT = 1
GUIDE_ORBIT = 2  # linear-tangent steering with parameters solved for a target orbit

# --- discrete state of one flight: Z[NZ] (kept as floats) -------------------------------
Z_STAGE = 0  # lowest attached stage
Z_PHASE = 1  # WAITING, BURNING, BURNT
Z_IGNITION_TIME = 2
Z_IGNITION_MASS = 3
Z_NEXT_TIME = 4  # next scheduled change [s]
Z_ON_RAIL = 5
Z_LIFTED = 6
Z_KICK_START = 7
Z_KICK_END = 8
Z_GUIDE_ANGLE = 9  # linear tangent: flight-path angle at ignition [rad]
Z_RISEN = 10  # more than a metre above the site once
Z_HOLD = 11  # thrust direction held (air speed below P_HOLD_SPEED)
Z_HOLD_DIRECTION = 12  # (3) held thrust direction, inertial frame
Z_INERTIAL = 15  # the ledger has switched to inertial angles (left the atmosphere)
Z_BURN_TIME = 16  # burn time of the burning stage [s]
Z_WATCH_APOGEE = 17  # the last stage has burnt out and the flight is still rising
Z_CURVE_INDEX = 18  # index of the next thrust-curve point of a burning motor
Z_THRUST_DIRECTION = 19  # (3) thrust direction at the last derivative, inertial frame
Z_MACH_KNOT = 22  # points of the drag curve at or below the current Mach number
Z_LAYER_KNOT = 23  # atmosphere layer tops at or below the current geopotential altitude
Z_WIND_KNOT = 24  # wind profile heights at or below the current height
Z_KICK_DONE = 25  # the pitch programme is over (its scheduled end has been passed)
NZ = 26

WAITING = 0
BURNING = 1
BURNT = 2

# --- auxiliary quantities of one derivative evaluation: A[NA] -------------------------
A_ALTITUDE = 0  # above the launch site [m]
A_ALTITUDE_SEA_LEVEL = 1  # [m]
A_DENSITY = 2
A_PRESSURE = 3
A_SOUND = 4
A_AIR_SPEED = 5
A_MACH = 6  # NaN above the atmosphere
A_DYNAMIC_PRESSURE = 7
A_THRUST = 8
A_DRAG = 9
A_GROUND_SPEED = 10  # relative to the rotating Earth [m/s]
A_INERTIAL_SPEED = 11
A_VERTICAL_SPEED = 12  # relative to the rotating Earth [m/s]
A_ACCELERATION = 13  # sensed (non-gravitational) acceleration [m/s^2]
A_RAIL_DISTANCE = 14  # along the rail from the site [m]
A_RAIL_ACCELERATION = 15  # along the rail, if nothing held the vehicle [m/s^2]
A_ENERGY = 16  # orbital specific energy [J/kg] (NaN on a flat Earth)
A_TILT = 17  # thrust direction from the local vertical [rad] (its cosine inside the kernel)
A_LEDGER_SPEED = 18  # speed the ledger closes on [m/s]
A_FLIGHT_PATH = 19  # Earth-relative flight-path angle [rad] (its sine inside the kernel)
A_DIRECTION = 20  # (3) unit vector of the thrust, inertial frame
NA = 23

# --- derived quantities for output: D[ND] (aux first, then geometry) ------------------
D_DOWNRANGE = NA
D_CROSSRANGE = NA + 1
D_EAST = NA + 2
D_NORTH = NA + 3
D_LATITUDE = NA + 4
D_LONGITUDE = NA + 5
D_HEADING = NA + 6  # Earth-relative velocity, clockwise from north [rad]
D_MASS = NA + 7
ND = NA + 8

#: Names of the derived quantities, in column order (SI).
DESCRIBED = (
    "altitude",
    "altitude_sea_level",
    "density",
    "pressure",
    "speed_of_sound",
    "air_speed",
    "mach",
    "dynamic_pressure",
    "thrust",
    "drag",
    "ground_speed",
    "inertial_speed",
    "vertical_speed",
    "acceleration",
    "rail_distance",
    "rail_acceleration",
    "energy",
    "tilt",
    "ledger_speed",
    "flight_path_angle",
    "direction_x",
    "direction_y",
    "direction_z",
    "downrange",
    "crossrange",
    "east",
    "north",
    "latitude",
    "longitude",
    "heading",
    "mass",
)
assert len(DESCRIBED) == ND

# --- event slots: E[...] ------------------------------------------------------------------
E_LIFTOFF = 0
E_RAIL_EXIT = 1
E_KICK = 2
E_LEFT_ATMOSPHERE = 3
E_REENTRY = 4
E_APOGEE = 5
E_CUTOFF = 6
E_GROUND = 7
E_FINAL = 8
E_MAX_DYNAMIC_PRESSURE = 9
E_MAX_MACH = 10
E_MAX_ACCELERATION = 11
E_MAX_ALTITUDE = 12
E_FIRST_HOLD = 13  # the first time the thrust holds its direction in free flight
E_STAGE = 14  # then per stage k: ignition 14 + 3k, burnout 15 + 3k, separation 16 + 3k

EVENT_NAMES = (
    "liftoff",
    "rail_exit",
    "kick",
    "left_atmosphere",
    "reentry",
    "apogee",
    "cutoff",
    "ground",
    "final",
    "max_dynamic_pressure",
    "max_mach",
    "max_acceleration",
    "max_altitude",
    "first_hold",
)
assert len(EVENT_NAMES) == E_STAGE


def event_count(stages: int) -> int:
    """Number of event slots for a vehicle of ``stages`` stages."""
    return E_STAGE + 3 * stages


def event_slot(name: str) -> int:
    """Slot of an event name: one of EVENT_NAMES, or ``ignition:K``, ``burnout:K``,
    ``separation:K``."""
    if ":" in name:
        kind, stage = name.split(":")
        offset = ("ignition", "burnout", "separation").index(kind)
        return E_STAGE + 3 * int(stage) + offset
    return EVENT_NAMES.index(name)


# --- status of a finished flight ----------------------------------------------------------
ST_FLYING = 0
ST_APOGEE = 1
ST_GROUND = 2
ST_ORBIT = 3
ST_BURNOUT = 4
ST_NO_LIFTOFF = 5
ST_TIME_LIMIT = 6
ST_STEP_FAILURE = 7

STATUS_NAMES = (
    "flying",
    "apogee",
    "ground",
    "orbit",
    "burnout",
    "no liftoff",
    "time limit",
    "step failure",
)

# --- the launch site's frame, computed once per flight: F[NF] ---------------------------
F_SITE = 0  # (3) site position, Earth-fixed frame (= inertial at time 0) [m]
F_UP = 3  # (3) local vertical at the site
F_EAST = 6  # (3)
F_NORTH = 9  # (3)
F_AZIMUTH = 12  # (3) horizontal unit vector along the launch azimuth
F_RAIL = 15  # (3) rail direction
F_PLANE = 18  # (3) normal of the launch plane (up x azimuth direction)
F_WIND_TURN = 21  # cosine and sine of the wind profile's turn
F_AZIMUTH_SINE = 23  # sine and cosine of the launch azimuth
NF = 25


class Tables(NamedTuple):
    """Tables shared by every sample of a batch (SI), as the kernel reads them.

    Thrust curves of the stages are concatenated: stage k's points are
    ``curve_time[curve_start[k]:curve_start[k + 1]]`` (time [s], cluster thrust [N]).
    Drag curves likewise (Mach, drag coefficient). The wind profile gives the wind's
    east and north components [m/s] against height above the site [m] (empty: calm).
    The atmosphere is a layer table (see :func:`propulsion.atmosphere.layer_table`):
    geopotential layer tops [m'] and rows A, L, C, K, E per layer.
    """

    curve_time: npt.NDArray[np.float64]
    curve_thrust: npt.NDArray[np.float64]
    curve_start: npt.NDArray[np.int64]
    drag_mach: npt.NDArray[np.float64]
    drag_cd: npt.NDArray[np.float64]
    drag_start: npt.NDArray[np.int64]
    wind_height: npt.NDArray[np.float64]
    wind_east: npt.NDArray[np.float64]
    wind_north: npt.NDArray[np.float64]
    layer_tops: npt.NDArray[np.float64]
    layer_rows: npt.NDArray[np.float64]
