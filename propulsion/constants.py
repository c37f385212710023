"""Physical constants and reference values, all in SI units.

Every constant is a plain ``float``. The comment next to each one names the standard or
agreement that defines it. Values marked "recalled from memory" were typed from the cited
document without the document at hand; the exact defining values (g0, the pound) are fixed by
definition and cannot drift.
"""

# --- Gravity and customary units -------------------------------------------------------------

# Standard acceleration of gravity [m/s^2], exact by definition.
# Source: 3rd General Conference on Weights and Measures (CGPM), 1901, "980.665 cm/s^2".
STANDARD_GRAVITY: float = 9.80665

# International avoirdupois pound [kg], exact by definition.
# Source: International yard and pound agreement, 1959 (U.S. Federal Register notice of
# 1 July 1959); also NIST Special Publication 811 (2008), Appendix B.
POUND_MASS: float = 0.45359237

# Pound-force [N]: the weight of one pound mass under standard gravity, exact by definition
# (= 4.4482216152605 N). Source: NIST Special Publication 811 (2008), Appendix B.
POUND_FORCE: float = POUND_MASS * STANDARD_GRAVITY

# --- Earth: World Geodetic System 1984 -------------------------------------------------------

# Semi-major axis of the WGS 84 ellipsoid (equatorial radius) [m], defining parameter.
# Source: NIMA TR8350.2, "Department of Defense World Geodetic System 1984", 3rd ed. (2000),
# Table 3.1 (recalled from memory).
EARTH_EQUATORIAL_RADIUS: float = 6378137.0

# Earth's gravitational constant GM, atmosphere included [m^3/s^2], WGS 84 defining parameter.
# Source: NIMA TR8350.2, 3rd ed. (2000), Table 3.1 (recalled from memory).
EARTH_MU: float = 3.986004418e14

# Nominal mean angular velocity of the Earth [rad/s], WGS 84 defining parameter.
# Source: NIMA TR8350.2, 3rd ed. (2000), Table 3.1 (recalled from memory).
EARTH_ROTATION_RATE: float = 7.292115e-5

# Flattening of the WGS 84 ellipsoid, 1 / 298.257223563, defining parameter.
# Source: NIMA TR8350.2, 3rd ed. (2000), Table 3.1 (recalled from memory).
EARTH_FLATTENING: float = 1.0 / 298.257223563

# Second-degree zonal harmonic J2 of the WGS 84 gravity model (unnormalised; the normalised
# coefficient is C20 = -4.84166774985e-4, and J2 = -sqrt(5) C20).
# Source: NIMA TR8350.2, 3rd ed. (2000), Table 3.1 and section 5 (recalled from memory).
EARTH_J2: float = 1.08262982131e-3

# --- U.S. Standard Atmosphere, 1976 ----------------------------------------------------------
# Source for the whole block: U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government
# Printing Office, Washington D.C. (values recalled from memory). The standard states R* and M0
# per kmol; they are converted to per mol here.

# Effective Earth radius r0 used to convert geometric to geopotential altitude [m].
USSA76_EARTH_RADIUS: float = 6356766.0

# Sea-level pressure P0 [Pa].
USSA76_SEA_LEVEL_PRESSURE: float = 101325.0

# Sea-level temperature T0 [K].
USSA76_SEA_LEVEL_TEMPERATURE: float = 288.15

# Universal gas constant R* as adopted by the standard (8.31432e3 J/(kmol K)) [J/(mol K)].
# Note: this is the 1976 value, not the current CODATA value.
USSA76_GAS_CONSTANT: float = 8.31432

# Mean molar mass of sea-level air M0 (28.9644 kg/kmol) [kg/mol].
USSA76_MOLAR_MASS: float = 0.0289644

# Ratio of specific heats of air used by the standard for the speed of sound [-].
USSA76_GAMMA: float = 1.4
