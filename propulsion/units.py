"""The package's one pint registry, and the helpers that cross the unit boundary.

Quantities enter the program here (mission files, command-line values, API inputs) and
leave it here (tables, JSON, exports). Everything between works on plain SI floats.

Parsing is deliberately stricter than ``pint.UnitRegistry.Quantity(text)``: the
magnitude must be a plain decimal number and the unit expression may only carry small
integer exponents. pint evaluates ``9**9**9 kg`` with Python's arbitrary-precision
integers, which never finishes, so such text is refused before pint sees it.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import cache, lru_cache
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from collections.abc import Iterable, Sequence

    import pint

__all__ = [
    "DIMENSIONS",
    "DisplayUnits",
    "UnitParseError",
    "column_decimals",
    "display_units",
    "format_column",
    "format_fixed",
    "format_plain",
    "format_quantity",
    "orbit_units",
    "parse_quantity",
    "registry",
    "to_display",
]

MAX_TEXT_LENGTH = 80
"""Longest quantity text accepted [characters]."""

MAX_MAGNITUDE = 1e15
"""Largest absolute SI value accepted for any field; larger is refused as absurd."""

# ASCII digits only: "\d" in a str pattern also matches Arabic-Indic, full-width and other
# digits, which float() reads as numbers a reader of the file may not see as such
_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]{1,3})?"
_QUANTITY_RE = re.compile(rf"^\s*(?P<number>{_NUMBER})\s*(?P<unit>.*?)\s*$")
_UNIT_CHARS_RE = re.compile(r"^[A-Za-z_µμ°%Ω\s*/^().\-0-9]*$")
_EXPONENT_RE = re.compile(r"(\*\*|\^)\s*\(?\s*(-?[0-9]+(?:\.[0-9]+)?)\s*\)?")
_POWER_RE = re.compile(r"\*\*|\^")
# after a power operator: one plain number, optionally in parentheses, and no further power
_OPERAND_RE = re.compile(
    r"\s*(\(\s*-?[0-9]{1,2}(\.[0-9]+)?\s*\)|-?[0-9]{1,2}(\.[0-9]+)?)(?!\s*(\*\*|\^|[0-9]|\.))"
)

# Dimension names used throughout the package, with the SI unit that the core works in.
DIMENSIONS: dict[str, str] = {
    "mass": "kg",
    "length": "m",
    "area": "m**2",
    "time": "s",
    "speed": "m/s",
    "acceleration": "m/s**2",
    "force": "N",
    "impulse": "N*s",
    "pressure": "Pa",
    "density": "kg/m**3",
    "angle": "rad",
    "dimensionless": "dimensionless",
    # a temperature ("35 degC" is 308.15 K: offset units convert affinely), and a
    # temperature difference ("+15 K", "-20 delta_degC"; pint refuses "15 degC" here, a
    # point on a scale and not a difference)
    "temperature": "K",
    "temperature_difference": "delta_degC",
}


class UnitParseError(ValueError):
    """A quantity text that could not be read; ``reason`` says why in plain words."""

    def __init__(self, text: str, reason: str) -> None:
        self.text = text
        self.reason = reason
        super().__init__(text, reason)

    def __str__(self) -> str:
        return f"cannot read {self.text!r} as a quantity: {self.reason}"


@cache
def registry() -> pint.UnitRegistry:
    """Return the package's single pint registry (built on first use, then shared)."""
    import pint

    try:
        # pint caches its parsed definitions on disk: the registry then builds in ~30 ms.
        ureg: pint.UnitRegistry = pint.UnitRegistry(
            autoconvert_offset_to_baseunit=True, cache_folder=":auto:"
        )
    except OSError:  # no writable cache folder: build from the definitions every time
        ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.formatter.default_format = "~P"
    return ureg


@cache
def _si_unit(dimension: str) -> Any:
    return registry().parse_units(DIMENSIONS[dimension])


def parse_quantity(text: str, dimension: str) -> float:
    """Read a quantity text such as ``"2.4 kg"`` and return its SI magnitude.

    Parameters
    ----------
    text : str
        A decimal number followed by a unit expression pint understands.
    dimension : str
        One of the keys of :data:`DIMENSIONS`; the text must have this dimension.
        Angles must name their unit (``"85 deg"``): a bare number is refused.
        Dimensionless values may be bare numbers or percentages (``"5 %"``).

    Returns
    -------
    float
        The value in the SI unit of ``dimension`` (``DIMENSIONS[dimension]``).

    Raises
    ------
    UnitParseError
        Unreadable text, a wrong dimension, a bare number where a unit belongs, or a
        non-finite or absurdly large value.
    """
    if dimension not in DIMENSIONS:
        raise KeyError(f"unknown dimension {dimension!r}")
    if not isinstance(text, str):
        raise UnitParseError(repr(text), "expected text with a unit")
    if len(text) > MAX_TEXT_LENGTH:
        raise UnitParseError(text[:MAX_TEXT_LENGTH] + "…", "text is too long")
    match = _QUANTITY_RE.match(text)
    if match is None:
        raise UnitParseError(text, "expected a number followed by a unit, like '2.4 kg'")
    magnitude = float(match["number"])
    unit_text = match["unit"]
    if not math.isfinite(magnitude):
        raise UnitParseError(text, "the number is not finite")
    if not unit_text:
        if dimension == "dimensionless":
            return _bounded(text, magnitude)
        raise UnitParseError(text, f"a bare number has no unit; {dimension} needs one")
    try:
        scale, offset = _conversion(unit_text, dimension)
    except _UnitError as problem:
        raise UnitParseError(text, problem.reason) from None
    return _bounded(text, scale * magnitude + offset)


class _UnitError(Exception):
    """Why a unit expression cannot be used (the caller adds the quantity's text)."""

    def __init__(self, reason: str) -> None:
        super().__init__(reason)
        self.reason = reason


@lru_cache(maxsize=4096)
def _conversion(unit_text: str, dimension: str) -> tuple[float, float]:
    """(scale, offset) that take a magnitude in ``unit_text`` to the SI unit of
    ``dimension``: value = scale × magnitude + offset (every pint conversion is affine).

    Cached: a table of a hundred thousand rows in the same unit asks pint once, not a
    hundred thousand times.
    """
    if not _UNIT_CHARS_RE.match(unit_text):
        raise _UnitError(f"{unit_text!r} is not a unit expression")
    for _, exponent in _EXPONENT_RE.findall(unit_text):
        if abs(float(exponent)) > 4:
            raise _UnitError(f"exponent {exponent} is out of range (at most 4)")
    for power in _POWER_RE.finditer(unit_text):
        if not _OPERAND_RE.match(unit_text, power.end()):
            raise _UnitError("an exponent must be one small number, like m^2")
    import pint

    try:
        units = registry().parse_units(unit_text)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError) as exc:
        raise _UnitError(f"unknown unit {unit_text!r}") from exc
    except Exception as exc:  # pint raises assorted errors on odd syntax
        raise _UnitError(f"{unit_text!r} is not a unit expression") from exc
    target = _si_unit(dimension)
    try:
        zero = float(registry().Quantity(0.0, units).to(target).magnitude)
        one = float(registry().Quantity(1.0, units).to(target).magnitude)
    except pint.errors.DimensionalityError as exc:
        got = _dimension_name(registry().Quantity(1.0, units))
        raise _UnitError(f"expected {dimension}, got {got}") from exc
    if dimension == "angle" and registry().Quantity(1.0, units).unitless:
        raise _UnitError("an angle needs its unit, like '85 deg'")
    return one - zero, zero


def _bounded(text: str, value: float) -> float:
    if math.isnan(value):
        raise UnitParseError(text, "the value is not finite")
    if abs(value) > MAX_MAGNITUDE:  # an infinity from converting a finite number too
        raise UnitParseError(
            text, f"the value is too large (more than {MAX_MAGNITUDE:g} in SI units)"
        )
    return value


def _dimension_name(quantity: Any) -> str:
    for name, unit in DIMENSIONS.items():
        if name != "angle" and quantity.is_compatible_with(unit):
            return name
    return str(quantity.dimensionality)


@dataclass(frozen=True)
class DisplayUnits:
    """The units in which results are shown, one per dimension name."""

    system: str
    units: dict[str, str]

    def unit(self, dimension: str) -> str:
        """Return the display unit for a dimension name."""
        return self.units.get(dimension, DIMENSIONS[dimension])

    def label(self, dimension: str) -> str:
        """Return a short label for the display unit, for column headers."""
        return _UNIT_LABELS.get(self.unit(dimension), self.unit(dimension))


_SI_DISPLAY = {
    "mass": "kg",
    "length": "m",
    "area": "m**2",
    "time": "s",
    "speed": "m/s",
    "acceleration": "m/s**2",
    "force": "N",
    "impulse": "N*s",
    "pressure": "kPa",
    "density": "kg/m**3",
    "angle": "deg",
    "dimensionless": "dimensionless",
}
_US_DISPLAY = {
    **_SI_DISPLAY,
    "mass": "lb",
    "length": "ft",
    "area": "ft**2",
    "speed": "ft/s",
    "acceleration": "ft/s**2",
    "force": "lbf",
    "impulse": "lbf*s",
    "pressure": "psi",
    "density": "lb/ft**3",
}
_UNIT_LABELS = {
    "m**2": "m²",
    "ft**2": "ft²",
    "m/s**2": "m/s²",
    "ft/s**2": "ft/s²",
    "N*s": "N·s",
    "lbf*s": "lbf·s",
    "kg/m**3": "kg/m³",
    "lb/ft**3": "lb/ft³",
    "dimensionless": "",
}


def orbit_units(units: DisplayUnits) -> DisplayUnits:
    """The same display units with lengths in km (nautical miles in US units): the unit
    orbit altitudes are read in."""
    length = "nmi" if units.system == "us" else "km"
    return DisplayUnits(units.system, {**units.units, "length": length})


def display_units(system: str) -> DisplayUnits:
    """Return the display units for ``"si"`` or ``"us"`` (US customary)."""
    key = system.lower()
    if key == "si":
        return DisplayUnits("si", dict(_SI_DISPLAY))
    if key == "us":
        return DisplayUnits("us", dict(_US_DISPLAY))
    raise ValueError(f"unknown unit system {system!r}; expected 'si' or 'us'")


@cache
def _factor(si_unit: str, unit: str) -> float:
    ureg = registry()
    return float(ureg.Quantity(1.0, si_unit).to(unit).magnitude)


def to_display(value: float, dimension: str, units: DisplayUnits) -> float:
    """Convert an SI value of a dimension to the chosen display unit."""
    target = units.unit(dimension)
    if target == DIMENSIONS[dimension]:
        return value
    return value * _factor(DIMENSIONS[dimension], target)


def format_quantity(value: float, dimension: str, units: DisplayUnits, digits: int = 4) -> str:
    """Format an SI value as text in the display unit, with ``digits`` significant figures."""
    shown = to_display(value, dimension, units)
    label = units.label(dimension)
    number = format_number(shown, digits)
    return f"{number} {label}".strip()


def format_number(value: float, digits: int = 4) -> str:
    """Format a number with a fixed count of significant figures and thousands separators."""
    if not math.isfinite(value):
        return str(value)
    if value == 0:
        return "0"
    if abs(value) < 10.0 ** -(digits + 4):
        return f"{value:.{digits - 1}e}"  # tiny values (round-off) in scientific notation
    # the decimals follow from the rounded value: 9.9996 shows as 10.00, not 10.000
    magnitude = math.floor(math.log10(abs(float(f"{value:.{digits}g}"))))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:,.{decimals}f}"


def column_decimals(values: Iterable[float], digits: int = 4) -> int:
    """The decimals that give the largest finite magnitude of ``values`` ``digits``
    significant figures [count]; 0 when there is no finite value other than zero."""
    largest = max((abs(v) for v in values if math.isfinite(v)), default=0.0)
    if largest == 0.0:
        return 0
    # the decimals follow from the rounded value: 9.9996 shows as 10.00, not 10.000
    magnitude = math.floor(math.log10(float(f"{largest:.{digits}g}")))
    return max(0, digits - 1 - magnitude)


def format_fixed(value: float, decimals: int, zero: float = 0.0) -> str:
    """A number with ``decimals`` decimals and thousands separators; within ``zero`` of
    zero (round-off, in the value's own unit) it shows as ``0``, and a value that rounds
    to zero never keeps its minus sign. Non-finite values show as ``—`` (or ``∞``)."""
    if math.isnan(value):
        return "—"
    if math.isinf(value):
        return "∞" if value > 0 else "-∞"
    if value == 0.0 or abs(value) <= zero:
        return "0"
    text = f"{value:,.{decimals}f}"
    if text.startswith("-") and not text.strip("-0.,"):
        text = text[1:]  # -0.00 is 0.00
    return text


def format_column(values: Sequence[float], digits: int = 4, zero: float = 0.0) -> list[str]:
    """The numbers of one table column, all with the same count of decimals.

    Parameters
    ----------
    values : sequence of float
        The column's values, in the unit they are shown in.
    digits : int
        Significant figures of the column's largest magnitude [count]; the others get
        as many decimals as it has, so the decimal points line up.
    zero : float
        Values within this of zero are round-off and show as ``0`` [the values' unit].

    Returns
    -------
    list of str
        One text per value: thousands separators, never scientific notation; an exact
        zero (or round-off) as ``0``, a value too small for the column's decimals as
        ``0.0`` (so small, not nothing); NaN as ``—``. Decimals that are zero in every
        value, exactly, are left out: ``10`` read from "10 m/s", not ``10.00`` (a
        computed 1.0004 keeps its ``1.000``).
    """
    finite = [float(v) for v in values if math.isfinite(v) and abs(v) > zero]
    decimals = column_decimals(finite, digits)
    while decimals > 0 and all(_exact(v, decimals - 1) for v in finite):
        decimals -= 1
    return [format_fixed(float(v), decimals, zero) for v in values]


def _exact(value: float, decimals: int) -> bool:
    """Whether ``value`` is a number of ``decimals`` decimals, to the float's precision."""
    return abs(value - round(value, decimals)) <= 1e-12 * max(1.0, abs(value))


def format_plain(value: float, digits: int = 4, zero: float = 0.0) -> str:
    """A number in running text: ``digits`` significant figures without the trailing
    zeros they would add (``30 m/s`` read from "30 m/s", not ``30.00``; ``0.03 kg`` from
    "30 g", not ``0.03000``), thousands separators, never scientific notation; within
    ``zero`` of zero it shows as ``0``."""
    if not math.isfinite(value) or value == 0.0 or abs(value) <= zero:
        return format_fixed(value, 0, zero)
    text = format_fixed(value, column_decimals([value], digits))
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text
