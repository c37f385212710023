"""Tests of the strict quantity parser and of display conversion against exact unit definitions.

Conversion factors used as check values, all exact by definition:

* 1 lb = 0.45359237 kg, 1 in = 0.0254 m, 1 ft = 0.3048 m: International yard and pound
  agreement (1959); also NIST Special Publication 811 (2008), Appendix B.
* 1 lbf = 4.4482216152605 N (= 0.45359237 kg x 9.80665 m/s^2): NIST SP 811 (2008), Appendix B.
* 1 deg = pi/180 rad: SI Brochure, 9th ed. (2019), Table 4 (non-SI units accepted for use
  with the SI).
* 1 % = 0.01 and the SI prefixes (milli = 1e-3, kilo = 1e3): SI Brochure, 9th ed. (2019),
  section 5.4.7 and Table 7 (section numbers recalled from memory).
"""

from __future__ import annotations

import math
import multiprocessing
import os

import pytest

from propulsion.units import (
    MAX_TEXT_LENGTH,
    UnitParseError,
    display_units,
    format_number,
    format_quantity,
    parse_quantity,
    to_display,
)

POUND = 0.45359237  # kg, 1959 international yard and pound agreement, exact
POUND_FORCE = 4.4482216152605  # N, NIST SP 811 (2008), Appendix B, exact
INCH = 0.0254  # m, 1959 international yard and pound agreement, exact
FOOT = 0.3048  # m, 1959 international yard and pound agreement, exact
DEGREE = math.pi / 180.0  # rad, SI Brochure 9th ed. (2019), Table 4

# Relative tolerance: a few units in the last place of a double; the factors are exact, so
# only floating-point rounding of one or two multiplications separates the results.
REL = 1e-15


# --- good inputs ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "dimension", "si"),
    [
        ("2.4 kg", "mass", 2.4),
        ("5.3 lb", "mass", 5.3 * POUND),
        ("1200 lbf", "force", 1200 * POUND_FORCE),
        ("98 mm", "length", 98e-3),
        ("3 km", "length", 3e3),
        ("85 deg", "angle", 85 * DEGREE),
        ("5 %", "dimensionless", 0.05),
        ("230 s", "time", 230.0),
        ("0.5 m^2", "area", 0.5),
        ("12 in**2", "area", 12 * INCH**2),
        ("150 m/s", "speed", 150.0),
        ("10 ft/s", "speed", 10 * FOOT),
        ("  2.4   kg  ", "mass", 2.4),
        ("-1 m", "length", -1.0),
        ("2.5e3 g", "mass", 2.5),
    ],
)
def test_parse_good_quantities(text: str, dimension: str, si: float) -> None:
    assert parse_quantity(text, dimension) == pytest.approx(si, rel=REL, abs=0.0)


def test_pound_is_exact() -> None:
    # 1959 agreement: 1 lb = 0.45359237 kg exactly, so 5.3 lb is 2.404039561 kg.
    assert parse_quantity("5.3 lb", "mass") == pytest.approx(2.404039561, rel=REL, abs=0.0)


def test_dimensionless_bare_number_is_accepted() -> None:
    # The parser's documented rule: dimensionless values may be bare numbers.
    assert parse_quantity("0.8", "dimensionless") == 0.8


def test_text_at_the_length_limit_is_accepted() -> None:
    text = "1" + " " * (MAX_TEXT_LENGTH - 4) + " kg"
    assert len(text) == MAX_TEXT_LENGTH
    assert parse_quantity(text, "mass") == 1.0


# --- refusals -------------------------------------------------------------------------------


def _reason(text: object, dimension: str) -> str:
    with pytest.raises(UnitParseError) as info:
        parse_quantity(text, dimension)  # type: ignore[arg-type]
    assert info.value.reason
    assert info.value.reason in str(info.value)
    return info.value.reason


def test_bare_number_for_a_dimensioned_quantity() -> None:
    reason = _reason("2.4", "mass")
    assert "bare number" in reason and "mass" in reason


def test_wrong_dimension_names_both() -> None:
    reason = _reason("3 kg", "length")
    assert "length" in reason and "mass" in reason


def test_unknown_unit() -> None:
    reason = _reason("3 flurbs", "mass")
    assert "unknown unit" in reason and "flurbs" in reason


@pytest.mark.parametrize("text", ["9**9**9 kg", "9**99 kg", "1 kg**99", "1 m**(99)", "1 m^-5"])
def test_huge_exponents_are_refused_before_evaluation(text: str) -> None:
    # pint would evaluate 9**9**9 with arbitrary-precision integers and never return; the
    # parser must refuse on the text alone. If this test hangs, the guard is gone.
    assert "exponent" in _reason(text, "mass")


def test_non_finite_number() -> None:
    assert "not finite" in _reason("1e999 kg", "mass")


def test_absurd_magnitude() -> None:
    assert "too large (more than 1e+15 in SI units)" in _reason("1e20 kg", "mass")


def test_overflow_after_conversion_is_refused() -> None:
    # 1e300 Ym^4/m^2 is 1e396 m^2 in SI: finite as text, infinite as a double.
    assert "too large" in _reason("1e300 Ym^4/m^2", "area")


def test_overlong_text() -> None:
    text = "1" + " " * MAX_TEXT_LENGTH + "kg"
    assert "too long" in _reason(text, "mass")


@pytest.mark.parametrize("value", [2.4, None, b"2.4 kg", ["2.4 kg"]])
def test_non_string_input(value: object) -> None:
    assert "text" in _reason(value, "mass")


def test_angle_needs_its_unit() -> None:
    reason = _reason("85", "angle")
    assert "angle" in reason and "unit" in reason


def test_dimensionless_ratio_is_not_an_angle() -> None:
    assert "angle" in _reason("1 kg/kg", "angle")


@pytest.mark.parametrize("text", ["nan", "inf kg", "kg", "", "   ", "one kg", "1 (kg", "1 kg)"])
def test_unreadable_text(text: str) -> None:
    _reason(text, "mass")


def test_unknown_dimension_is_a_programming_error() -> None:
    with pytest.raises(KeyError):
        parse_quantity("1 kg", "weight")


# --- refusing in bounded time ---------------------------------------------------------------


def _parse_in_child(text: str, dimension: str) -> None:
    try:
        parse_quantity(text, dimension)
    except UnitParseError:
        os._exit(0)
    except BaseException:
        os._exit(2)
    os._exit(1)


def _refused_within(text: str, dimension: str, seconds: float) -> bool:
    """True if parse_quantity raises UnitParseError in a forked child within ``seconds``."""
    parse_quantity("1 m", "length")  # build the registry here, so the child starts warm
    child = multiprocessing.get_context("fork").Process(
        target=_parse_in_child, args=(text, dimension)
    )
    child.start()
    child.join(seconds)
    if child.is_alive():
        child.kill()
        child.join()
        return False
    return child.exitcode == 0


needs_fork = pytest.mark.skipif(
    "fork" not in multiprocessing.get_all_start_methods(), reason="needs the fork start method"
)


@needs_fork
def test_huge_exponent_is_refused_quickly_in_a_child() -> None:
    # Control for the helper: this text is refused on the first exponent it finds.
    assert _refused_within("9**9**9 kg", "mass", 5.0)


@needs_fork
def test_chained_small_exponents_are_refused_quickly() -> None:
    assert _refused_within("1 m^4^4^4^4", "length", 5.0)


# --- display --------------------------------------------------------------------------------


US = display_units("us")
SI = display_units("si")


@pytest.mark.parametrize(
    ("dimension", "factor"),
    [
        ("length", 1 / FOOT),
        ("mass", 1 / POUND),
        ("force", 1 / POUND_FORCE),
        ("speed", 1 / FOOT),
        ("acceleration", 1 / FOOT),
        ("area", 1 / FOOT**2),
        ("impulse", 1 / POUND_FORCE),
        ("pressure", INCH**2 / POUND_FORCE),  # psi = lbf/in^2
        ("density", FOOT**3 / POUND),  # lb/ft^3
        ("time", 1.0),
    ],
)
def test_us_display_factors_are_exact(dimension: str, factor: float) -> None:
    assert to_display(1.0, dimension, US) == pytest.approx(factor, rel=REL, abs=0.0)


def test_si_display_of_pressure_is_kilopascal_and_of_angle_degree() -> None:
    assert to_display(101325.0, "pressure", SI) == pytest.approx(101.325, rel=REL)
    assert to_display(math.pi, "angle", SI) == pytest.approx(180.0, rel=REL)
    assert to_display(2.5, "mass", SI) == 2.5


def test_display_units_names() -> None:
    assert display_units("US").system == "us"
    assert US.label("area") == "ft²"
    assert SI.label("impulse") == "N·s"
    with pytest.raises(ValueError, match="unknown unit system"):
        display_units("imperial")


def test_format_quantity_in_us_units() -> None:
    # 1000 ft = 304.8 m exactly (1959 agreement).
    assert format_quantity(304.8, "length", US) == "1,000 ft"
    assert format_quantity(POUND, "mass", US) == "1.000 lb"
    assert format_quantity(0.05, "dimensionless", SI, digits=2) == "0.050"


@pytest.mark.parametrize(
    ("value", "digits", "text"),
    [
        (1234.5678, 4, "1,235"),
        (0.012345, 3, "0.0123"),
        (-9.8765, 2, "-9.9"),
        (123456789.0, 4, "123,456,789"),
        (2.0, 4, "2.000"),
        (0.0, 4, "0"),
        (1e-5, 2, "0.000010"),
    ],
)
def test_format_number_significant_figures(value: float, digits: int, text: str) -> None:
    assert format_number(value, digits) == text


@pytest.mark.parametrize("value", [math.inf, -math.inf, math.nan])
def test_format_number_non_finite(value: float) -> None:
    assert format_number(value) == str(value)


@pytest.mark.parametrize(("value", "text"), [(9.9996, "10.00"), (999.96, "1,000")])
def test_format_number_rounding_across_a_power_of_ten(value: float, text: str) -> None:
    assert format_number(value, 4) == text
