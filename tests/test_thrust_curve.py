"""Tests of thrust-curve arithmetic against closed-form areas and the published motor classes.

All curves here are invented shapes, not data of any real motor.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from propulsion.thrust_curve import (
    average_thrust,
    burn_time,
    impulse_class,
    propellant_mass_flow,
    specific_impulse_from_curve,
    total_impulse,
    validate_thrust_curve,
)

G0 = 9.80665  # 3rd CGPM (1901), exact.

# Invented triangular curve: 0 N at 0 s, 100 N peak at 1 s, 0 N at 3 s.
TRI_T = np.array([0.0, 1.0, 3.0])
TRI_F = np.array([0.0, 100.0, 0.0])
# Invented trapezoidal curve: 0.1 s rise to 50 N, flat to 1.9 s, 0.1 s tail-off.
TRAP_T = np.array([0.0, 0.1, 1.9, 2.0])
TRAP_F = np.array([0.0, 50.0, 50.0, 0.0])


# --- integrals -------------------------------------------------------------------------------


def test_triangle_impulse() -> None:
    # Area of a triangle: base * height / 2 = 3 s * 100 N / 2.
    assert total_impulse(TRI_T, TRI_F) == pytest.approx(150.0, rel=1e-15)


def test_trapezoid_impulse_burn_time_and_average() -> None:
    # Area of a trapezoid: (long base + short base) / 2 * height = (2.0 + 1.8) / 2 * 50 N.
    assert total_impulse(TRAP_T, TRAP_F) == pytest.approx(95.0, rel=1e-15)
    assert burn_time(TRAP_T, TRAP_F) == pytest.approx(2.0, rel=1e-15)
    assert average_thrust(TRAP_T, TRAP_F) == pytest.approx(47.5, rel=1e-15)


def test_burn_time_uses_first_and_last_sample() -> None:
    assert burn_time([0.5, 1.0, 4.5], [10.0, 20.0, 0.0]) == pytest.approx(4.0, rel=1e-15)


def test_lists_are_accepted() -> None:
    assert total_impulse([0.0, 2.0], [10.0, 10.0]) == pytest.approx(20.0, rel=1e-15)


@given(
    thrust=st.floats(min_value=0.0, max_value=1.0e6),
    duration=st.floats(min_value=1.0e-3, max_value=1.0e3),
    n=st.integers(min_value=2, max_value=50),
)
def test_constant_thrust_impulse_is_thrust_times_time(
    thrust: float, duration: float, n: int
) -> None:
    t = np.linspace(0.0, duration, n)
    f = np.full(n, thrust)
    assert total_impulse(t, f) == pytest.approx(thrust * duration, rel=1e-12, abs=1e-12)


@given(
    peak=st.floats(min_value=1.0, max_value=1.0e5),
    rise=st.floats(min_value=1.0e-3, max_value=10.0),
    fall=st.floats(min_value=1.0e-3, max_value=10.0),
)
def test_linear_pieces_are_integrated_exactly(peak: float, rise: float, fall: float) -> None:
    # Any triangle: area = (rise + fall) * peak / 2; a midpoint sample on each side changes
    # nothing for a piecewise-linear curve.
    t = np.array([0.0, rise / 2, rise, rise + fall / 2, rise + fall])
    f = np.array([0.0, peak / 2, peak, peak / 2, 0.0])
    assert total_impulse(t, f) == pytest.approx((rise + fall) * peak / 2, rel=1e-12)


# --- specific impulse and mass flow ----------------------------------------------------------


def test_specific_impulse_from_curve() -> None:
    # Isp = I_t / (m_p g0) (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., chapter 2).
    assert specific_impulse_from_curve(150.0, 0.06) == pytest.approx(150.0 / (0.06 * G0), rel=1e-15)
    isp = specific_impulse_from_curve(np.array([100.0, 200.0]), 0.05)
    np.testing.assert_allclose(isp, np.array([100.0, 200.0]) / (0.05 * G0), rtol=1e-15)


def test_mass_flow_uses_up_the_propellant_at_burnout() -> None:
    propellant = 0.06
    impulse = total_impulse(TRI_T, TRI_F)
    flow = propellant_mass_flow(TRI_F, impulse, propellant)
    assert isinstance(flow, np.ndarray)
    # The flow is piecewise linear like the thrust, so its trapezoidal integral is exact.
    assert total_impulse(TRI_T, flow) == pytest.approx(propellant, rel=1e-14)
    assert flow[1] == pytest.approx(100.0 * propellant / 150.0, rel=1e-15)
    assert propellant_mass_flow(0.0, impulse, propellant) == 0.0


# --- impulse classes -------------------------------------------------------------------------

# Upper bounds of the classes as tabulated in NFPA 1122, Code for Model Rocketry, and
# NFPA 1127, Code for High Power Rocketry (recalled from memory), in N s.
PUBLISHED_CLASSES = [
    ("1/8A", 0.3125),
    ("1/4A", 0.625),
    ("1/2A", 1.25),
    ("A", 2.5),
    ("B", 5.0),
    ("C", 10.0),
    ("D", 20.0),
    ("E", 40.0),
    ("F", 80.0),
    ("G", 160.0),
    ("H", 320.0),
    ("I", 640.0),
    ("J", 1280.0),
    ("K", 2560.0),
    ("L", 5120.0),
    ("M", 10240.0),
    ("N", 20480.0),
    ("O", 40960.0),
]


@pytest.mark.parametrize(
    ("impulse", "expected"),
    [
        (0.3, "1/8A"),
        (2.50, "A"),
        (2.51, "B"),
        (40.0, "E"),
        (40.01, "F"),
        (5120.0, "L"),
        (5120.01, "M"),
    ],
)
def test_impulse_class_boundaries(impulse: float, expected: str) -> None:
    # Boundary values from the NFPA 1122 / NFPA 1127 classification (recalled from memory).
    assert impulse_class(impulse) == expected


@pytest.mark.parametrize(("index", "row"), list(enumerate(PUBLISHED_CLASSES)))
def test_impulse_class_table(index: int, row: tuple[str, float]) -> None:
    letter, upper = row
    assert impulse_class(upper) == letter
    assert impulse_class(upper * 0.999) == letter
    if index + 1 < len(PUBLISHED_CLASSES):
        assert impulse_class(upper * 1.001) == PUBLISHED_CLASSES[index + 1][0]


def test_classes_beyond_o_keep_doubling() -> None:
    # P to Z continue the doubling (common practice, no source).
    assert impulse_class(40960.01) == "P"
    assert impulse_class(81920.0) == "P"
    assert impulse_class(2.5 * 2.0**25) == "Z"
    # beyond Z there is no letter: shown as ">Z", not refused (a large booster is valid input)
    assert impulse_class(2.5 * 2.0**25 * 1.001) == ">Z"


@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf])
def test_impulse_class_rejects_non_positive(bad: float) -> None:
    with pytest.raises(ValueError, match="finite and greater than zero"):
        impulse_class(bad)


# --- validation ------------------------------------------------------------------------------


def test_valid_curves_pass() -> None:
    # Must return without raising.
    validate_thrust_curve(TRI_T, TRI_F)
    validate_thrust_curve(TRAP_T, TRAP_F)


@pytest.mark.parametrize(
    ("time", "thrust", "match"),
    [
        ([0.0], [10.0], "at least 2 points"),
        ([0.0, 1.0], [10.0], "same length"),
        ([0.0, 1.0, math.nan], [1.0, 2.0, 0.0], r"^row 3: .*finite"),
        ([0.0, 1.0, 2.0], [1.0, math.inf, 0.0], r"^row 2: .*finite"),
        ([0.0, 1.0, 2.0, 2.0, 1.5], [1.0, 2.0, 2.0, 1.0, 0.0], r"^row 4: time must increase"),
        ([0.0, 1.0, 0.5], [1.0, 2.0, 0.0], r"^row 3: time must increase"),
        ([0.0, 1.0, 2.0], [1.0, -0.1, -0.2], r"^row 2: thrust must not be negative"),
        ([0.0, 1.0, 2.0], [0.0, 0.0, 0.0], "total impulse is zero"),
    ],
)
def test_validation_errors(time: list[float], thrust: list[float], match: str) -> None:
    with pytest.raises(ValueError, match=match):
        validate_thrust_curve(time, thrust)


def test_validation_reports_first_problem_in_check_order() -> None:
    # A non-finite value (row 4) is reported before a negative thrust that comes earlier
    # (row 2), because finiteness is checked first.
    with pytest.raises(ValueError, match=r"^row 4: "):
        validate_thrust_curve([0.0, 1.0, 2.0, 3.0], [1.0, -1.0, 1.0, math.nan])


def test_guards_on_derived_quantities() -> None:
    with pytest.raises(ValueError, match="greater than zero"):
        specific_impulse_from_curve(150.0, 0.0)
    with pytest.raises(ValueError, match="total_impulse must be greater than zero"):
        propellant_mass_flow(10.0, 0.0, 0.05)
    with pytest.raises(ValueError, match="burn time must be greater than zero"):
        average_thrust([1.0, 1.0], [5.0, 5.0])
