"""Checks of the constants against their defining documents and against values derived from them
that the same documents print."""

import math

import pytest

from propulsion import constants as c


def test_exact_definitions() -> None:
    # 3rd CGPM (1901): standard acceleration of gravity 980.665 cm/s^2, exact.
    assert c.STANDARD_GRAVITY == 9.80665
    # International yard and pound agreement (1959): 1 lb = 0.45359237 kg, exact.
    assert c.POUND_MASS == 0.45359237


def test_pound_force() -> None:
    # NIST Special Publication 811 (2008), Appendix B: 1 lbf = 4.4482216152605 N, exact
    # (recalled from memory).
    pound_force = c.POUND_FORCE
    assert pound_force == pytest.approx(4.4482216152605, rel=1e-15)


def test_wgs84_defining_parameters() -> None:
    # NIMA TR8350.2, 3rd ed. (2000), Table 3.1: a = 6378137.0 m, GM = 3986004.418e8 m^3/s^2,
    # omega = 7292115e-11 rad/s (recalled from memory).
    assert c.EARTH_EQUATORIAL_RADIUS == 6378137.0
    assert c.EARTH_MU == 3986004.418e8
    assert c.EARTH_ROTATION_RATE == 7292115e-11


def test_wgs84_flattening_and_j2() -> None:
    # NIMA TR8350.2, 3rd ed., Table 3.1: 1/f = 298.257223563 (defining parameter); the
    # polar radius b = a (1 - f) = 6356752.3142 m is the table's derived value (from memory).
    assert pytest.approx(298.257223563, rel=1e-15) == 1.0 / c.EARTH_FLATTENING
    polar = c.EARTH_EQUATORIAL_RADIUS * (1.0 - c.EARTH_FLATTENING)
    assert polar == pytest.approx(6356752.3142, abs=1e-4)
    # J2 = -sqrt(5) * C20 with the normalised C20 = -4.84166774985e-4 (the same table,
    # from memory): the unnormalised zonal coefficient of the gravity model.
    assert pytest.approx(-math.sqrt(5.0) * -4.84166774985e-4, rel=1e-9) == c.EARTH_J2


def test_geostationary_radius_from_wgs84() -> None:
    # A circular orbit whose angular rate equals the Earth's rotation rate has radius
    # (mu / omega^2)^(1/3). H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
    # chapter 2 (geostationary orbit) gives 42 164 km (recalled from memory); printed to 1 km.
    radius = (c.EARTH_MU / c.EARTH_ROTATION_RATE**2) ** (1.0 / 3.0)
    assert radius == pytest.approx(42_164e3, abs=0.5e3)


def test_ussa76_sea_level_density() -> None:
    # U.S. Standard Atmosphere, 1976 (NOAA-S/T 76-1562), Table I: sea-level density
    # 1.2250 kg/m^3 (recalled from memory), from the ideal-gas law rho = P M / (R* T).
    density = (
        c.USSA76_SEA_LEVEL_PRESSURE
        * c.USSA76_MOLAR_MASS
        / (c.USSA76_GAS_CONSTANT * c.USSA76_SEA_LEVEL_TEMPERATURE)
    )
    assert density == pytest.approx(1.2250, abs=0.00005)


def test_ussa76_sea_level_speed_of_sound() -> None:
    # U.S. Standard Atmosphere, 1976 (NOAA-S/T 76-1562), Table I: sea-level speed of sound
    # 340.29 m/s (recalled from memory), a = sqrt(gamma R* T / M).
    speed = math.sqrt(
        c.USSA76_GAMMA
        * c.USSA76_GAS_CONSTANT
        * c.USSA76_SEA_LEVEL_TEMPERATURE
        / c.USSA76_MOLAR_MASS
    )
    assert speed == pytest.approx(340.29, abs=0.005)


def test_ussa76_radius_lies_between_polar_and_equatorial_radius() -> None:
    # The standard's r0 is an effective mid-latitude Earth radius (recalled from memory), so it
    # must lie between the WGS 84 polar radius b = a (1 - f) and the equatorial radius a;
    # 1/f = 298.257223563 from NIMA TR8350.2, 3rd ed. (2000), Table 3.1 (recalled from memory).
    polar = c.EARTH_EQUATORIAL_RADIUS * (1.0 - 1.0 / 298.257223563)
    assert polar < c.USSA76_EARTH_RADIUS < c.EARTH_EQUATORIAL_RADIUS


def test_all_constants_are_floats() -> None:
    names = [name for name in dir(c) if name.isupper()]
    assert len(names) == 14
    for name in names:
        assert isinstance(getattr(c, name), float), name
