"""Tests of the two-body formulas against closed forms and textbook worked examples."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from propulsion.orbits import (
    HohmannTransfer,
    circular_speed,
    circularisation_burn,
    earth_rotation_speed,
    escape_speed,
    hohmann_transfer,
    plane_change_delta_v,
    transfer_burn,
    vertical_speed_for_apogee,
    vertical_speed_for_apogee_uniform,
    vis_viva_speed,
)

MU = 3.986004418e14  # WGS 84, NIMA TR8350.2, 3rd ed. (2000), Table 3.1 (recalled from memory).
RE = 6378137.0  # WGS 84 equatorial radius, same source.
OMEGA = 7.292115e-5  # WGS 84 rotation rate, same source.
CURTIS_MU = 398600e9  # H. D. Curtis, Orbital Mechanics for Engineering Students: 398 600 km^3/s^2.
CURTIS_RE = 6378e3  # Curtis: Earth radius 6378 km.

radii = st.floats(min_value=6.0e6, max_value=5.0e8)


# --- closed forms ----------------------------------------------------------------------------


def test_circular_speed_at_200_km() -> None:
    # Closed form v = sqrt(mu / r) at 200 km altitude; about 7.78 km/s (common practice,
    # no source).
    r = RE + 200e3
    assert circular_speed(r) == pytest.approx(math.sqrt(MU / r), rel=1e-15)
    assert circular_speed(r) == pytest.approx(7780.0, abs=5.0)


def test_curtis_problem_6_1_circular_speed_and_lowering_burn() -> None:
    # H. D. Curtis, Solutions Manual to Orbital Mechanics for Engineering Students, 3rd ed.
    # (Elsevier, 2013), Problem 6.1: 400 km circular orbit (r = 6778 km) lowered to a
    # 300 km by 400 km ellipse (opposite apsis r = 6678 km), mu = 398 600 km^3/s^2.
    # Printed: v1 = 7.6686 km/s, va2 = 7.6401 km/s, delta-v = 0.028548 km/s.
    r1 = CURTIS_RE + 400e3
    r2 = CURTIS_RE + 300e3
    assert circular_speed(r1, CURTIS_MU) == pytest.approx(7668.6, abs=0.05)
    assert vis_viva_speed(r1, 0.5 * (r1 + r2), CURTIS_MU) == pytest.approx(7640.1, abs=0.05)
    assert transfer_burn(r1, r2, CURTIS_MU) == pytest.approx(28.548, abs=0.0005)


def test_escape_speed_is_root_two_times_circular() -> None:
    r = np.array([RE, 2.0 * RE, 10.0 * RE])
    np.testing.assert_allclose(escape_speed(r), math.sqrt(2.0) * circular_speed(r), rtol=1e-15)


def test_escape_speed_at_earth_surface() -> None:
    # Escape speed from the Earth's surface, 11.2 km/s (Curtis, 3rd ed., chapter 2;
    # recalled from memory).
    assert escape_speed(RE) == pytest.approx(11_200.0, abs=50.0)


def test_vis_viva_on_circle_and_at_perigee() -> None:
    r1, r2 = 7.0e6, 20.0e6
    assert vis_viva_speed(r1, r1) == pytest.approx(math.sqrt(MU / r1), rel=1e-15)
    # Perigee speed of an ellipse from angular momentum h = sqrt(2 mu r1 r2 / (r1 + r2)):
    # v_p = h / r1 (Curtis, 3rd ed., chapter 2, orbit equation).
    h = math.sqrt(2.0 * MU * r1 * r2 / (r1 + r2))
    assert vis_viva_speed(r1, 0.5 * (r1 + r2)) == pytest.approx(h / r1, rel=1e-14)


def test_vis_viva_hyperbola() -> None:
    # a < 0 on a hyperbola: v^2 = mu (2/r + 1/|a|) = v_esc^2 + v_inf^2 with v_inf^2 = mu/|a|.
    r, a = 7.0e6, -3.0e7
    expected = math.sqrt(2.0 * MU / r + MU / 3.0e7)
    assert vis_viva_speed(r, a) == pytest.approx(expected, rel=1e-15)


# --- Hohmann transfers -----------------------------------------------------------------------


def test_vallado_example_6_1_leo_to_geo() -> None:
    # D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed. (2013),
    # Example 6-1: r_initial = 191.34411 km altitude, r_final = 35 781.34857 km altitude
    # (1.03 and 6.61 Earth radii), mu = 398 600.4418 km^3/s^2. Printed: delta-v_a = 2.457 km/s,
    # delta-v_b = 1.478 km/s, total 3.935 km/s (recalled from memory).
    r1 = 6378.137e3 + 191.34411e3
    r2 = 6378.137e3 + 35_781.34857e3
    result = hohmann_transfer(r1, r2)
    assert result.first_burn == pytest.approx(2457.0, abs=0.5)
    assert result.second_burn == pytest.approx(1478.0, abs=0.5)
    assert result.total == pytest.approx(3935.0, abs=0.5)


def test_leo_to_geo_total_is_about_3_9_km_s() -> None:
    # LEO (200 km) to GEO (42 164 km radius) costs about 3.9 km/s (common practice, no source).
    result = hohmann_transfer(RE + 200e3, 42_164e3)
    assert 3.85e3 < result.total < 3.95e3


def test_hohmann_transfer_time_is_half_the_ellipse_period() -> None:
    # Kepler's third law: T = 2 pi sqrt(a^3 / mu); the transfer takes T / 2.
    r1, r2 = 6.7e6, 4.2e7
    a = 0.5 * (r1 + r2)
    result = hohmann_transfer(r1, r2)
    assert result.transfer_time == pytest.approx(math.pi * math.sqrt(a**3 / MU), rel=1e-14)


def test_hohmann_burns_match_single_burn_functions() -> None:
    r1, r2 = 6.7e6, 2.6e7
    result = hohmann_transfer(r1, r2)
    assert isinstance(result, HohmannTransfer)
    assert result.first_burn == pytest.approx(transfer_burn(r1, r2), rel=1e-15)
    assert result.second_burn == pytest.approx(circularisation_burn(r2, r1), rel=1e-15)
    assert result.total == pytest.approx(result.first_burn + result.second_burn, rel=1e-15)


def test_hohmann_closed_form() -> None:
    # Closed form of the two burns, written with the radius ratio R = r2 / r1:
    # dv1 = v1 (sqrt(2R / (1 + R)) - 1), dv2 = v1 (1 / sqrt(R)) (1 - sqrt(2 / (1 + R))).
    r1, r2 = 7.0e6, 2.1e7
    ratio = r2 / r1
    v1 = math.sqrt(MU / r1)
    result = hohmann_transfer(r1, r2)
    assert result.first_burn == pytest.approx(
        v1 * (math.sqrt(2 * ratio / (1 + ratio)) - 1), rel=1e-12
    )
    assert result.second_burn == pytest.approx(
        v1 / math.sqrt(ratio) * (1 - math.sqrt(2 / (1 + ratio))), rel=1e-12
    )


def test_hohmann_to_same_orbit_costs_nothing() -> None:
    result = hohmann_transfer(7.0e6, 7.0e6)
    assert result.total == pytest.approx(0.0, abs=1e-9)


@given(r1=radii, r2=radii)
def test_hohmann_is_symmetric(r1: float, r2: float) -> None:
    up = hohmann_transfer(r1, r2)
    down = hohmann_transfer(r2, r1)
    assert up.total == pytest.approx(down.total, rel=1e-12, abs=1e-9)
    assert up.first_burn == pytest.approx(down.second_burn, rel=1e-12, abs=1e-9)
    assert up.transfer_time == pytest.approx(down.transfer_time, rel=1e-14)
    assert up.first_burn >= 0.0
    assert up.second_burn >= 0.0


def test_hohmann_works_on_arrays() -> None:
    r2 = np.array([1.0e7, 2.0e7, 4.0e7])
    result = hohmann_transfer(7.0e6, r2)
    assert isinstance(result.total, np.ndarray)
    assert result.total.shape == (3,)
    for i, radius in enumerate(r2):
        single = hohmann_transfer(7.0e6, float(radius)).total
        assert result.total[i] == pytest.approx(single, rel=1e-15)


# --- plane change ----------------------------------------------------------------------------


def test_plane_change_closed_forms() -> None:
    # Isosceles velocity triangle: dv = 2 v sin(theta / 2) (Curtis, 3rd ed., chapter 6).
    v = 7500.0
    assert plane_change_delta_v(v, math.pi / 2) == pytest.approx(math.sqrt(2.0) * v, rel=1e-15)
    assert plane_change_delta_v(v, math.pi / 3) == pytest.approx(v, rel=1e-15)
    assert plane_change_delta_v(v, math.pi) == pytest.approx(2.0 * v, rel=1e-15)
    assert plane_change_delta_v(v, 0.0) == 0.0
    assert plane_change_delta_v(v, -0.3) == plane_change_delta_v(v, 0.3)


# --- vertical climbs -------------------------------------------------------------------------


def test_vertical_speed_inverse_square_closed_form() -> None:
    # Energy conservation: v^2 = 2 g_r h r0 / (r0 + h) with g_r = mu / r0^2, i.e. the
    # uniform-gravity answer scaled by sqrt(r0 / (r0 + h)).
    r0, h = RE, 100e3
    g_r = MU / r0**2
    expected = vertical_speed_for_apogee_uniform(h, g_r) * math.sqrt(r0 / (r0 + h))
    assert vertical_speed_for_apogee(r0, r0 + h) == pytest.approx(expected, rel=1e-12)


def test_vertical_speed_uniform_closed_form() -> None:
    # v^2 = 2 g h: a 100 m climb under standard gravity.
    assert vertical_speed_for_apogee_uniform(100.0) == pytest.approx(
        math.sqrt(2 * 9.80665 * 100.0), rel=1e-15
    )
    assert vertical_speed_for_apogee_uniform(0.0) == 0.0


@given(r0=radii, factor=st.floats(min_value=1.0, max_value=1.0e6))
def test_vertical_speed_stays_below_escape_speed(r0: float, factor: float) -> None:
    speed = vertical_speed_for_apogee(r0, r0 * factor)
    assert 0.0 <= speed <= escape_speed(r0)


def test_vertical_speed_tends_to_escape_speed() -> None:
    assert vertical_speed_for_apogee(RE, RE * 1e12) == pytest.approx(escape_speed(RE), rel=1e-9)


# --- Earth rotation --------------------------------------------------------------------------


def test_earth_rotation_speed_at_equator_due_east() -> None:
    # Closed form omega R at the equator with the WGS 84 values: 465.10 m/s; often quoted as
    # about 465 m/s (common practice, no source).
    speed = earth_rotation_speed(0.0, math.pi / 2)
    assert speed == pytest.approx(OMEGA * RE, rel=1e-15)
    assert speed == pytest.approx(465.1, abs=0.05)


def test_earth_rotation_speed_components() -> None:
    lat = math.radians(28.5)  # an invented launch site latitude
    east = earth_rotation_speed(lat, math.pi / 2)
    assert east == pytest.approx(OMEGA * RE * math.cos(lat), rel=1e-15)
    assert earth_rotation_speed(lat, 0.0) == pytest.approx(0.0, abs=1e-12)  # due north
    assert earth_rotation_speed(lat, 3 * math.pi / 2) == pytest.approx(-east, rel=1e-15)
    az = np.radians(np.array([30.0, 90.0, 150.0]))
    np.testing.assert_allclose(
        earth_rotation_speed(lat, az), east * np.sin(az), rtol=1e-15, atol=1e-12
    )
    assert earth_rotation_speed(math.pi / 2, math.pi / 2) == pytest.approx(0.0, abs=1e-10)


# --- guards ----------------------------------------------------------------------------------


def test_guards() -> None:
    with pytest.raises(ValueError, match="radius must be greater than zero"):
        circular_speed(0.0)
    with pytest.raises(ValueError, match="mu must be greater than zero"):
        escape_speed(7.0e6, -1.0)
    with pytest.raises(ValueError, match="beyond the apoapsis"):
        vis_viva_speed(3.0e7, 1.0e7)
    with pytest.raises(ValueError, match="semi_major_axis must not be zero"):
        vis_viva_speed(7.0e6, 0.0)
    with pytest.raises(ValueError, match="must not be below radius_start"):
        vertical_speed_for_apogee(7.0e6, 6.9e6)
    with pytest.raises(ValueError, match="height must not be negative"):
        vertical_speed_for_apogee_uniform(-1.0)
    with pytest.raises(ValueError, match="speed must not be negative"):
        plane_change_delta_v(-1.0, 0.1)
    with pytest.raises(ValueError, match="radius_final must be finite"):
        hohmann_transfer(7.0e6, float("inf"))
