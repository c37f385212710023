"""Static-fire logs: from a load cell's record to a thrust curve, with what it is worth.

Two parts. The boundary reads a firing log (CSV, TSV, semicolon- or whitespace-separated
text with a header naming the columns and their units) into SI arrays
(:func:`read_firing_log`), and writes the project's own motor file (:func:`motor_csv`).
The runner (:func:`analyse_firing`, :func:`import_firings`) works on plain arrays in SI:

1. **Filter** (optional, off by default). A Butterworth low-pass filter of order
   :data:`FILTER_ORDER`, run forwards and backwards (``scipy.signal.sosfiltfilt``), so it
   shifts nothing in time.
2. **Tare.** The zero offset is the mean of the samples in the first half of the time
   before the thrust (filtered, with a filter) first reaches the threshold (at least two
   samples); their standard deviation, before any filter, is the load cell's noise. The
   threshold must be more than :data:`MIN_THRESHOLD_OVER_NOISE` standard deviations of the
   noise of the signal the burn window is read on (the filtered one, with a filter).
3. **Burn window.** The burn starts where the thrust first reaches the threshold, a fraction
   of the peak thrust (default :data:`DEFAULT_THRESHOLD`, 5 %: common practice, no source),
   and ends where it last falls below it; both crossings are interpolated linearly between
   samples. Samples outside the window are dropped, so zero padding never counts as burn
   time; the tails below the threshold are reported as impulse left outside.
4. **The curve.** The samples inside the window, with a point of 0 N at each crossing,
   negative values set to 0 N, time from the burn start, each value rounded to the ten
   significant digits the motor file holds. Every figure reported is computed from this
   rounded curve, so the file written gives back the same total impulse.
5. **Total impulse and its error.** The trapezoidal integral of the curve, with an
   estimate of its error: the trapezoid against Simpson's rule, the noise and the tare's
   uncertainty (two standard deviations each), and the two edges the 0 N points cut off.

Several firings of one motor give the mean and the sample standard deviation of total impulse
and burn time, and one curve: the mean of the firings' curves on a normalised time base
(:func:`mean_curve`), scaled to the mean total impulse and the mean burn time.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion import thrust_curve as tc
from propulsion.constants import STANDARD_GRAVITY
from propulsion.errors import DataFileError, MissionFileNotFoundError, RequestError
from propulsion.units import UnitParseError, parse_quantity

__all__ = [
    "DEFAULT_THRESHOLD",
    "FILTER_ORDER",
    "Firing",
    "FiringError",
    "FiringImport",
    "FiringLog",
    "FiringLogError",
    "analyse_firing",
    "import_firings",
    "mean_curve",
    "motor_csv",
    "parse_cutoff",
    "parse_threshold",
    "parse_unit",
    "read_firing_log",
    "spread_interval",
]

FloatArray = npt.NDArray[np.float64]

DEFAULT_THRESHOLD = 0.05
"""Burn start and end at this fraction of the peak thrust (common practice, no source)."""
MAX_THRESHOLD = 0.5
"""The highest threshold accepted: above half the peak thrust there is no burn window."""
FILTER_ORDER = 4
"""Order of the Butterworth low-pass filter; run forwards and backwards, its gain at the
cutoff is 1/2 (-6 dB) and it falls off at 48 dB per octave (common practice, no source)."""
EVEN_SPACING = 0.01
"""The filter needs evenly spaced samples: every interval within this fraction of the
median interval."""
NOISE_COVERAGE = 2.0
"""Standard deviations in the noise and tare parts of the impulse error (about 95 % for
Gaussian noise)."""
DIGITS = 10
"""Significant digits of every value of the written curve."""
MIN_BURN_SAMPLES = 3
"""The fewest samples inside the burn window (Simpson's rule needs three)."""
SLOPE_SAMPLES = 5
"""Samples each side of a threshold crossing across which its slope is measured."""
MIN_PEAK_OVER_NOISE = 10.0
"""A firing's peak thrust must be more than this many times the load cell's noise."""
MIN_THRESHOLD_OVER_NOISE = 5.0
"""The burn threshold must be more than this many standard deviations of the noise of the
signal the burn window is read on: white Gaussian noise passes 5 σ in about 3 samples in
10⁷ (one-sided normal tail), so a spike of noise before ignition or after burnout is not
taken for the burn's start or end (rule of this tool)."""
LOGGED_COLUMNS = ("time", "thrust")

# a number as a log writes it: ASCII digits only (float() also reads "1_000" and Arabic-
# Indic or full-width digits, which a reader of the file may not see as numbers)
_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]{1,3})?"
_NUMBER_RE = re.compile(rf"^{_NUMBER}$")
_QUANTITY_RE = re.compile(rf"^\s*(?P<number>{_NUMBER})\s*(?P<unit>.*?)\s*$")
# a column name and its unit in square or round brackets: "time (ms)", "thrust [lbf]"
_CELL_RE = re.compile(
    r"^\s*(?P<name>[^\[\]()]*?)\s*(?:\[(?P<square>[^\]]*)\]|\((?P<round>[^)]*)\))?\s*$"
)
# in a whitespace-separated header a name has no spaces: "t[s]  thrust (lbf)"
_WORD_RE = re.compile(
    r"\s*(?P<name>[^\s\[\]()]+)\s*(?:\[(?P<square>[^\]]*)\]|\((?P<round>[^)]*)\))?"
)
_SEPARATORS = {"\t": "tab", ";": "semicolon", ",": "comma"}
_EXCERPT = 20


def _excerpt(text: str) -> str:
    """A value from a file as a message may quote it: at most 20 characters, quoted."""
    return repr(text if len(text) <= _EXCERPT else text[:_EXCERPT] + "…")


# --- errors ------------------------------------------------------------------------------


class FiringLogError(DataFileError):
    """A firing log that cannot be read: the file, the line and the column, what is wrong
    and what was expected (the fields of :class:`~propulsion.errors.MissionError`, with
    ``field`` holding the column's name)."""

    field_word = "column"


class FiringError(RequestError):
    """A firing that cannot be analysed (no burn in the log, a filter the samples cannot
    take) or an option that cannot be used; the problem names the file or the option."""


# --- options -----------------------------------------------------------------------------


def parse_unit(text: str, dimension: str, origin: str) -> float:
    """The SI value of one unit (``"ms"``, ``"kgf"``) of a time or force.

    Parameters
    ----------
    text : str
        The unit, as written in a header or an option.
    dimension : str
        ``"time"`` or ``"force"``.
    origin : str
        Where the unit comes from, for the message (``"--time-unit"``).

    Returns
    -------
    float
        Seconds per unit [s] or newtons per unit [N].

    Raises
    ------
    FiringError
        The unit cannot be read or is not of that dimension.

    Notes
    -----
    pint reads ``kgf`` (kilogram-force, 9.80665 N, from standard gravity, 3rd CGPM 1901)
    and ``lbf`` (pound-force, 0.45359237 kg × 9.80665 m/s²). A load cell's ``kg`` is a mass
    and is refused: write ``kgf``.
    """
    return parse_quantity(f"1 {_unit_text(text, dimension, origin)}", dimension)


def _unit_text(text: str, dimension: str, origin: str) -> str:
    """The unit text checked, or a FiringError naming the origin."""
    try:
        parse_quantity(f"1 {text}", dimension)
    except UnitParseError as exc:
        raise FiringError(
            f"{origin} {_excerpt(text)}: {_reason(exc, text)}", _expected_unit(dimension)
        ) from None
    return text


def _expected_unit(dimension: str) -> str:
    if dimension == "time":
        return "a unit of time such as s or ms"
    return "a unit of force such as N, kgf or lbf (a load cell's 'kg' is written kgf)"


def _reason(exc: UnitParseError, text: str) -> str:
    """The parser's reason, without quoting more of the text than an excerpt."""
    if len(text) > _EXCERPT and text[: _EXCERPT + 1] in exc.reason:
        return "cannot be read"
    return exc.reason


def parse_threshold(text: str) -> float:
    """The burn threshold as a fraction of the peak thrust, from ``"5 %"`` or ``"0.05"``.

    Parameters
    ----------
    text : str
        A percentage or a plain fraction.

    Returns
    -------
    float
        The fraction, above 0 and at most :data:`MAX_THRESHOLD` [1].

    Raises
    ------
    FiringError
        Unreadable text or a fraction out of range.
    """
    expected = 'a fraction of the peak thrust above 0 and up to 50 %, such as "5 %"'
    try:
        value = parse_quantity(text, "dimensionless")
    except UnitParseError as exc:
        raise FiringError(f"--threshold {_excerpt(text)}: {_reason(exc, text)}", expected) from None
    if not 0.0 < value <= MAX_THRESHOLD:
        raise FiringError(f"--threshold {_excerpt(text)} is out of range", expected)
    return value


def parse_cutoff(text: str) -> float:
    """The filter's cutoff frequency from ``"50 Hz"`` [Hz].

    Parameters
    ----------
    text : str
        A number and a unit of frequency (``Hz``, ``kHz``, ``1/s``).

    Returns
    -------
    float
        The cutoff frequency [Hz], above 0.

    Raises
    ------
    FiringError
        A bare number, a unit that is not a frequency, or a value not above zero.

    Notes
    -----
    The text is read as a quantity times one second, which is a plain number exactly when
    the quantity is a frequency: ``"50 Hz"`` gives 50.
    """
    expected = 'a frequency with its unit, such as "50 Hz"'
    match = _QUANTITY_RE.match(text)
    if match is None or not match["unit"]:
        raise FiringError(f"--filter {_excerpt(text)} is not a number with a unit", expected)
    try:
        value = parse_quantity(f"{match['number']} ({match['unit']})*s", "dimensionless")
    except UnitParseError:
        raise FiringError(f"--filter {_excerpt(text)} is not a frequency", expected) from None
    if not value > 0.0:
        raise FiringError(f"--filter {_excerpt(text)} is not above zero", expected)
    return value


# --- reading a log -----------------------------------------------------------------------


@dataclass(frozen=True)
class FiringLog:
    """A static-fire log in SI, as read (no tare, no filter).

    Attributes
    ----------
    source : str
        The file, as given.
    time : ndarray
        Sample times [s], strictly increasing.
    thrust : ndarray
        The load cell's reading at each sample [N], offset and noise included.
    time_unit, thrust_unit : str
        The units the file (or the options) gave.
    time_column, thrust_column : str
        The columns' names in the header.
    separator : str
        ``"comma"``, ``"semicolon"``, ``"tab"`` or ``"whitespace"``.
    """

    source: str
    time: FloatArray
    thrust: FloatArray
    time_unit: str
    thrust_unit: str
    time_column: str = "time"
    thrust_column: str = "thrust"
    separator: str = "comma"


def read_firing_log(
    path: str | Path,
    time_unit: str | None = None,
    thrust_unit: str | None = None,
    thrust_column: str | None = None,
) -> FiringLog:
    """Read a static-fire log into SI arrays.

    Parameters
    ----------
    path : str or Path
        The log: UTF-8 text, lines starting with ``#`` and blank lines skipped, then a
        header naming the columns, then one sample per line. Columns are separated by tabs,
        semicolons, commas or (when the header has none of these) whitespace.
    time_unit, thrust_unit : str or None
        Units for a header that gives none (``"ms"``, ``"kgf"``). A header that gives a
        unit must agree with the option.
    thrust_column : str or None
        The column holding the thrust when the log has more than two; by default the
        second column. The first column is always the time.

    Returns
    -------
    FiringLog

    Raises
    ------
    MissionFileNotFoundError
        The file does not exist.
    FiringLogError
        With the file, the line and the column: an unreadable header, a column without
        a unit (and no option), a unit that cannot be read or disagrees with the option,
        a cell that is not a number in ASCII digits, a row of the wrong length, a time
        that does not increase, fewer than two samples.
    """
    from propulsion.catalog import _read_bytes  # the regular-file and size checks

    source = str(path)
    try:
        content = _read_bytes(Path(path))
    except MissionFileNotFoundError as exc:
        raise MissionFileNotFoundError(path, "firing log") from exc
    try:
        text = content.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise FiringLogError(
            source, "", "the file is not UTF-8 text", "a UTF-8 text file"
        ) from None
    lines = [
        (number, line.strip())
        for number, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.strip().startswith("#")
    ]
    if not lines:
        raise FiringLogError(
            source, "", "no header line", "a header such as 'time (ms),force (kgf)'"
        )
    header_line, header = lines[0]
    separator = next((sep for sep in _SEPARATORS if sep in header), None)
    names, units = _header(source, header_line, header, separator)
    if len(names) < 2:
        raise FiringLogError(
            source,
            "",
            f"the header names {len(names)} column",
            "two columns or more, the time first: 'time (ms),force (kgf)'",
            header_line,
        )
    if thrust_column is None:
        thrust_index = 1
        if len(names) > 2:
            raise FiringLogError(
                source,
                "",
                f"the header names {len(names)} columns",
                "two columns (time, thrust), or --thrust-column naming the thrust column",
                header_line,
            )
    elif thrust_column in names[1:]:
        thrust_index = names.index(thrust_column, 1)
    else:
        shown = ", ".join(repr(name) for name in names[1:])
        raise FiringLogError(
            source,
            "",
            f"no column named {_excerpt(thrust_column)} (--thrust-column)",
            f"one of {shown}",
            header_line,
        )
    factors = []
    shown_units = []
    for index, dimension, option, flag in (
        (0, "time", time_unit, "--time-unit"),
        (thrust_index, "force", thrust_unit, "--thrust-unit"),
    ):
        factor, unit = _column_unit(
            source, header_line, names[index], units[index], dimension, option, flag
        )
        factors.append(factor)
        shown_units.append(unit)
    time, thrust = _samples(source, lines[1:], separator, names, (0, thrust_index), factors)
    return FiringLog(
        source=source,
        time=time,
        thrust=thrust,
        time_unit=shown_units[0],
        thrust_unit=shown_units[1],
        time_column=names[0],
        thrust_column=names[thrust_index],
        separator=_SEPARATORS.get(separator or "", "whitespace"),
    )


def _header(
    source: str, line: int, header: str, separator: str | None
) -> tuple[list[str], list[str | None]]:
    """Column names and their units (None where the header gives none)."""
    names: list[str] = []
    units: list[str | None] = []
    if separator is None:
        position = 0
        cells = []
        while position < len(header):
            match = _WORD_RE.match(header, position)
            if match is None or match.end() == position:
                raise FiringLogError(
                    source,
                    "",
                    f"the header {_excerpt(header[position:])} cannot be read",
                    "names separated by commas, tabs, semicolons or spaces, each with its "
                    "unit in brackets: 'time [s]  thrust [N]'",
                    line,
                )
            cells.append(match)
            position = match.end()
            while position < len(header) and header[position].isspace():
                position += 1
    else:
        cells = []
        for cell in header.split(separator):
            match = _CELL_RE.match(cell)
            if match is None or not match["name"]:
                raise FiringLogError(
                    source,
                    "",
                    f"the header cell {_excerpt(cell.strip())} cannot be read",
                    "a column name with its unit in brackets: 'time (ms)' or 'thrust [N]'",
                    line,
                )
            cells.append(match)
    for match in cells:
        name = match["name"].strip()
        if name in names:
            raise FiringLogError(
                source, _clip(name), "the column appears twice", "distinct column names", line
            )
        names.append(name)
        unit = match["square"] if match["square"] is not None else match["round"]
        units.append(unit.strip() if unit is not None and unit.strip() else None)
    return names, units


def _clip(name: str) -> str:
    return name if len(name) <= _EXCERPT else name[:_EXCERPT] + "…"


def _column_unit(
    source: str,
    line: int,
    name: str,
    unit: str | None,
    dimension: str,
    option: str | None,
    flag: str,
) -> tuple[float, str]:
    """The SI factor of a column and the unit shown for it (header or option)."""
    what = "time" if dimension == "time" else "thrust"
    if unit is None and option is None:
        raise FiringLogError(
            source,
            _clip(name),
            f"the {what} column states no unit (a column without one is a plain number, "
            f"not {'seconds' if what == 'time' else 'newtons'})",
            f"a unit in the header, 'name (unit)' or 'name [unit]', or {flag}",
            line,
        )
    factor = None
    if unit is not None:
        try:
            factor = parse_quantity(f"1 {unit}", dimension)
        except UnitParseError as exc:
            raise FiringLogError(
                source,
                _clip(name),
                f"the unit {_excerpt(unit)}: {_reason(exc, unit)}",
                _expected_unit(dimension),
                line,
            ) from None
    if option is not None:
        given = parse_unit(option, dimension, flag)
        if factor is not None and not math.isclose(given, factor, rel_tol=1e-12):
            raise FiringLogError(
                source,
                _clip(name),
                f"the header gives the unit {_excerpt(unit or '')} and {flag} gives "
                f"{_excerpt(option)}",
                f"one unit: leave out {flag}, or make it agree with the header",
                line,
            )
        return given, option if unit is None else unit
    assert factor is not None and unit is not None
    return factor, unit


def _samples(
    source: str,
    rows: Sequence[tuple[int, str]],
    separator: str | None,
    names: Sequence[str],
    wanted: tuple[int, int],
    factors: Sequence[float],
) -> tuple[FloatArray, FloatArray]:
    """The time and thrust columns in SI, every cell checked."""
    columns: tuple[list[float], list[float]] = ([], [])
    count = len(names)
    for number, row in rows:
        cells = row.split(separator) if separator is not None else row.split()
        if len(cells) != count:
            raise FiringLogError(
                source,
                "",
                f"the row has {_count(len(cells), 'value')}",
                f"{_count(count, 'value')}, one per column of the header",
                number,
            )
        for out, index, factor in zip(columns, wanted, factors, strict=True):
            cell = cells[index].strip()
            if not _NUMBER_RE.match(cell):
                raise FiringLogError(
                    source,
                    _clip(names[index]),
                    f"{_excerpt(cell)} is not a number",
                    "a number in ASCII digits, with a point for the decimals",
                    number,
                )
            value = float(cell) * factor
            if not math.isfinite(value):
                raise FiringLogError(
                    source, _clip(names[index]), "the value is not finite", "a number", number
                )
            out.append(value)
    time = np.asarray(columns[0], dtype=np.float64)
    thrust = np.asarray(columns[1], dtype=np.float64)
    if time.size < 2:
        raise FiringLogError(
            source, "", _count(time.size, "sample"), "a log of many samples, one per line"
        )
    steps = np.flatnonzero(np.diff(time) <= 0.0)
    if steps.size:
        later = int(steps[0]) + 1
        raise FiringLogError(
            source,
            _clip(names[0]),
            "the time does not increase from the line before",
            "times that increase from line to line",
            rows[later][0],
        )
    return time, thrust


# --- one firing ----------------------------------------------------------------------------


class _Curve:
    """What a thrust curve (time [s] from the burn start, thrust [N]) gives by itself."""

    time: FloatArray
    thrust: FloatArray

    @property
    def total_impulse(self) -> float:
        """Trapezoidal integral of the curve [N s]."""
        return tc.total_impulse(self.time, self.thrust)

    @property
    def burn_time(self) -> float:
        """Span of the curve, from the burn start to its end [s]."""
        return float(self.time[-1])

    @property
    def average_thrust(self) -> float:
        """Average thrust over the burn, total impulse / burn time [N]."""
        return self.total_impulse / self.burn_time

    @property
    def peak_thrust(self) -> float:
        """Highest thrust of the curve [N]."""
        return float(np.max(self.thrust))


@dataclass(frozen=True)
class Firing(_Curve):
    """One firing analysed: the tare, the burn window, the curve and its integrals, in SI.

    Attributes
    ----------
    source : str
        The log's file.
    log_time, log_thrust : ndarray
        The log as read [s], [N].
    signal : ndarray
        The tared (and filtered) thrust at every sample of the log [N].
    sample_interval : float
        Median interval between samples [s].
    tare : float
        Zero offset taken off every sample [N].
    tare_samples : int
        Samples the tare is the mean of.
    tare_end : float
        Log time of the last tare sample [s] (the first is the log's first sample).
    noise : float
        Standard deviation of the tare samples: the load cell's noise [N].
    cutoff : float or None
        Cutoff frequency of the low-pass filter [Hz]; None without a filter.
    threshold_fraction : float
        The burn threshold as a fraction of the peak thrust [1].
    threshold : float
        The burn threshold [N].
    burn_start, burn_end : float
        Log times at which the thrust crosses the threshold [s].
    time, thrust : ndarray
        The curve: time from the burn start [s] and thrust [N], 0 N at both ends.
    simpson_impulse : float
        Simpson's rule over the samples inside the window [N s].
    quadrature_error, noise_error, tare_error, crossing_error, edge_error : float
        The parts of the impulse error [N s] (see :attr:`impulse_error`).
    burn_time_error : float
        Error estimate of the burn time [s]: the two crossings moved by the noise.
    outside_impulse : float
        Impulse of the tails below the threshold, left out of the curve [N s].
    clipped : int
        Samples inside the window that were below 0 N and written as 0 N.
    """

    source: str
    log_time: FloatArray = field(repr=False)
    log_thrust: FloatArray = field(repr=False)
    signal: FloatArray = field(repr=False)
    sample_interval: float
    tare: float
    tare_samples: int
    tare_end: float
    noise: float
    cutoff: float | None
    threshold_fraction: float
    threshold: float
    burn_start: float
    burn_end: float
    time: FloatArray = field(repr=False)
    thrust: FloatArray = field(repr=False)
    simpson_impulse: float
    quadrature_error: float
    noise_error: float
    tare_error: float
    crossing_error: float
    edge_error: float
    burn_time_error: float
    outside_impulse: float
    clipped: int

    @property
    def impulse_error(self) -> float:
        """Error estimate of the total impulse [N s]: quadrature + edges +
        sqrt(noise² + tare² + crossings²)."""
        spread = math.sqrt(self.noise_error**2 + self.tare_error**2 + self.crossing_error**2)
        return self.quadrature_error + self.edge_error + spread

    @property
    def impulse_class(self) -> str:
        """Impulse class letter of the total impulse."""
        return tc.impulse_class(self.total_impulse)

    def specific_impulse(self, propellant_mass: float | None) -> float | None:
        """Total impulse over the propellant's weight [s], None without a mass [kg]."""
        if propellant_mass is None:
            return None
        return float(tc.specific_impulse_from_curve(self.total_impulse, propellant_mass))

    def to_dict(self, propellant_mass: float | None = None) -> dict[str, Any]:
        """JSON-ready figures (SI, unit in each key)."""
        return {
            "file": self.source,
            "samples": int(self.log_time.size),
            "sample_interval_s": self.sample_interval,
            "tare_n": self.tare,
            "tare_samples": self.tare_samples,
            "tare_end_s": self.tare_end,
            "noise_n": self.noise,
            "filter_cutoff_hz": self.cutoff,
            "threshold_fraction": self.threshold_fraction,
            "threshold_n": self.threshold,
            "burn_start_s": self.burn_start,
            "burn_end_s": self.burn_end,
            "burn_time_s": self.burn_time,
            "peak_thrust_n": self.peak_thrust,
            "average_thrust_n": self.average_thrust,
            "total_impulse_n_s": self.total_impulse,
            "total_impulse_error_n_s": self.impulse_error,
            "impulse_error_parts_n_s": {
                "quadrature": self.quadrature_error,
                "noise": self.noise_error,
                "tare": self.tare_error,
                "crossings": self.crossing_error,
                "edges": self.edge_error,
            },
            "burn_time_error_s": self.burn_time_error,
            "simpson_impulse_n_s": self.simpson_impulse,
            "outside_impulse_n_s": self.outside_impulse,
            "clipped_samples": self.clipped,
            "specific_impulse_s": self.specific_impulse(propellant_mass),
            "impulse_class": self.impulse_class,
        }


def find_tare(time: FloatArray, thrust: FloatArray, threshold: float) -> tuple[float, float, int]:
    """The zero offset of a log, from the samples before ignition.

    Parameters
    ----------
    time : ndarray
        Sample times [s], increasing.
    thrust : ndarray
        The load cell's reading [N].
    threshold : float
        The burn threshold as a fraction of the peak thrust [1].

    Returns
    -------
    tare : float
        The mean of the tare samples [N].
    noise : float
        Their sample standard deviation [N].
    count : int
        How many samples: the first half of those before the reading first reaches the
        threshold (the rise of the thrust, which begins before the threshold, stays out).

    Raises
    ------
    FiringError
        Fewer than four samples before the thrust reaches the threshold.

    Notes
    -----
    The first pass takes its baseline from the median of the first five samples and its
    peak from the highest reading; the threshold is measured from that baseline. This is
    a rule of this tool (common practice, no source).
    """
    baseline = float(np.median(thrust[:5]))
    level = baseline + threshold * (float(np.max(thrust)) - baseline)
    first = int(np.argmax(thrust >= level))
    if first < 4:
        raise FiringError(
            "the log starts with the thrust at or above the threshold: fewer than four samples "
            "before ignition, so there is nothing to take the tare from",
            "a log that starts before ignition, with at least a few samples of the load "
            "cell at rest",
        )
    count = first // 2
    samples = thrust[:count]
    return float(np.mean(samples)), float(np.std(samples, ddof=1)), count


def low_pass(time: FloatArray, thrust: FloatArray, cutoff: float) -> FloatArray:
    """Zero-phase Butterworth low-pass filter of a log.

    Parameters
    ----------
    time : ndarray
        Sample times [s], evenly spaced (within :data:`EVEN_SPACING`).
    thrust : ndarray
        Thrust [N].
    cutoff : float
        Cutoff frequency [Hz], below half the sampling rate.

    Returns
    -------
    ndarray
        The filtered thrust [N].

    Raises
    ------
    FiringError
        Unevenly spaced samples, a cutoff at or above half the sampling rate, or a log
        too short for the filter.

    Notes
    -----
    ``scipy.signal.butter(FILTER_ORDER, cutoff, fs=1/dt, output="sos")`` run forwards and
    backwards by ``scipy.signal.sosfiltfilt``: no phase shift, gain |H(f)|² of the filter,
    1/2 at the cutoff. The ends are padded by reflecting the samples next to them
    (``padtype="even"``), so a glitch in the first or last sample is smoothed like any
    other.

    References
    ----------
    .. [1] S. Butterworth, "On the theory of filter amplifiers", Experimental Wireless and
       the Wireless Engineer, vol. 7, 1930, pp. 536-541.
    .. [2] F. Gustafsson, "Determining the initial states in forward-backward filtering",
       IEEE Transactions on Signal Processing, vol. 44, no. 4, 1996, pp. 988-992 (the
       initial conditions of ``sosfiltfilt``).
    """
    from scipy import signal

    steps = np.diff(time)
    interval = float(np.median(steps))
    if float(np.max(np.abs(steps - interval))) > EVEN_SPACING * interval:
        raise FiringError(
            f"the filter needs evenly spaced samples; the intervals run from "
            f"{float(np.min(steps)) * 1e3:.4g} ms to {float(np.max(steps)) * 1e3:.4g} ms",
            "a log sampled at a steady rate, or no --filter",
        )
    rate = 1.0 / interval
    if not cutoff < 0.5 * rate:
        raise FiringError(
            f"the filter's cutoff, {cutoff:g} Hz, is not below half the sampling rate "
            f"({0.5 * rate:g} Hz)",
            f"a cutoff below {0.5 * rate:g} Hz",
        )
    sections = signal.butter(FILTER_ORDER, cutoff, btype="lowpass", fs=rate, output="sos")
    try:
        # ends padded by reflection ("even"): the odd padding of the default would hold the
        # first and last output at the first and last sample, noise and all
        filtered = signal.sosfiltfilt(sections, thrust, padtype="even")
    except ValueError as exc:
        raise FiringError(
            f"the log is too short for the filter ({thrust.size} samples)", "a longer log"
        ) from exc
    return np.asarray(filtered, dtype=np.float64)


def _crossing(t0: float, f0: float, t1: float, f1: float, level: float) -> float:
    """Time at which the line through (t0, f0) and (t1, f1) reaches ``level`` [s]."""
    if f1 == f0:
        return t1
    return t0 + (level - f0) / (f1 - f0) * (t1 - t0)


def _text_values(values: FloatArray) -> FloatArray:
    """The values as the motor file writes them (:data:`DIGITS` significant digits)."""
    return np.array([float(f"{value:.{DIGITS}g}") for value in values], dtype=np.float64)


def _written_curve(time: FloatArray, thrust: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Round a curve to the file's digits and keep its times strictly increasing (an
    inner point rounded onto its neighbour is dropped; the end points stay)."""
    t = _text_values(time)
    f = _text_values(thrust)
    inner = np.arange(1, t.size - 1)
    inner = inner[(t[inner] > t[0]) & (t[inner] < t[-1])]
    _, first = np.unique(t[inner], return_index=True)
    keep = np.concatenate(([0], inner[np.sort(first)], [t.size - 1]))
    return t[keep], f[keep]


def analyse_firing(
    log: FiringLog, threshold: float = DEFAULT_THRESHOLD, cutoff: float | None = None
) -> Firing:
    """Tare, filter, burn window, curve and impulse of one firing log.

    Parameters
    ----------
    log : FiringLog
        The log in SI.
    threshold : float
        Burn threshold as a fraction of the peak thrust [1], above 0 and at most 0.5.
    cutoff : float or None
        Cutoff frequency of the low-pass filter [Hz]; None for no filter.

    Returns
    -------
    Firing

    Raises
    ------
    FiringError
        No samples before ignition, a burn that has not ended when the log ends, a peak
        within ten times the noise, a threshold within five standard deviations of the
        noise (of the filtered signal, with a filter), fewer than three samples in the
        burn, or a filter the log cannot take; the message names the file.

    Notes
    -----
    Total impulse is the trapezoidal integral of the written curve (Sutton and Biblarz
    [1]_). Its error estimate adds

    * the quadrature part, |trapezoid − Simpson| over the samples inside the window
      (``scipy.integrate.simpson``, Press et al. [2]_);
    * the edges: the written curve starts and ends at 0 N at the threshold crossings,
      where the samples have the threshold's thrust L; it leaves out L (t₁ − t₀) / 2 at
      each end;
    * the noise, the tare and the crossings, in quadrature: 2 σ √(Σ wᵢ²) for white noise of
      standard deviation σ on samples of trapezoidal weights wᵢ; 2 σ t_b / √n for a tare
      that is the mean of n samples; and 2 L √(δ₁² + δ₂²) for the two threshold crossings,
      each moved by δ = σ / |dF/dt| (the window gains or loses L δ). σ is measured on the
      tare samples before any filter. The burn time's error is 2 √(δ₁² + δ₂²).

    Drift of the load cell during the burn and a tare that changes with the motor's weight
    are not in it.

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (total impulse).
    .. [2] W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery, Numerical
       Recipes, 3rd ed., Cambridge University Press, 2007, section 4.1 (trapezoidal and
       Simpson's rules and their error terms).
    """
    try:
        return _analyse(log, threshold, cutoff)
    except FiringError as exc:
        raise FiringError(f"{log.source}: {exc.problem}", exc.expected) from None


def _analyse(log: FiringLog, threshold: float, cutoff: float | None) -> Firing:
    from scipy.integrate import simpson

    time, raw = log.time, log.thrust
    # with a filter, the samples before ignition are found on the filtered reading (a spike
    # of noise does not end them early); the tare and the noise come from the raw samples
    reading = raw if cutoff is None else low_pass(time, raw, cutoff)
    count = find_tare(time, reading, threshold)[2]
    tare = float(np.mean(raw[:count]))
    noise = float(np.std(raw[:count], ddof=1))
    signal = reading - tare
    peak = float(np.max(signal))
    if not peak > MIN_PEAK_OVER_NOISE * noise or not peak > 0.0:
        raise FiringError(
            f"no firing found: the highest thrust after the tare, {peak:.4g} N, is within "
            f"{MIN_PEAK_OVER_NOISE:g} times the load cell's noise ({noise:.4g} N)",
            "a log of a firing",
        )
    level = threshold * peak
    spread = noise if cutoff is None else float(np.std(signal[:count], ddof=1))
    if not level > MIN_THRESHOLD_OVER_NOISE * spread:
        raise FiringError(
            f"the noise{' after the filter' if cutoff is not None else ''} "
            f"({spread:.4g} N, standard deviation) is more than "
            f"1/{MIN_THRESHOLD_OVER_NOISE:g} of the burn threshold ({level:.4g} N): a spike "
            "of noise could be taken for the start or the end of the burn",
            "a higher --threshold, or --filter with a cutoff such as '50 Hz'",
        )
    above = np.flatnonzero(signal >= level)
    first, last = int(above[0]), int(above[-1])
    if first == 0:  # (the tare found samples before ignition, so this is a spike)
        raise FiringError(
            "the first sample is at or above the threshold", "a log that starts before ignition"
        )
    if last == signal.size - 1:
        raise FiringError(
            "the thrust is still above the threshold at the end of the log: the burn has not ended",
            "a log that goes on until the thrust has fallen to zero",
        )
    start = _crossing(time[first - 1], signal[first - 1], time[first], signal[first], level)
    end = _crossing(time[last], signal[last], time[last + 1], signal[last + 1], level)
    inside = np.flatnonzero((time > start) & (time < end))
    if inside.size < MIN_BURN_SAMPLES:
        raise FiringError(
            f"the burn window holds {_count(inside.size, 'sample')}",
            f"at least {MIN_BURN_SAMPLES} samples between the threshold crossings",
        )
    values = signal[inside]
    curve_t, curve_f = _written_curve(
        np.concatenate(([start], time[inside], [end])) - start,
        np.concatenate(([0.0], np.maximum(values, 0.0), [0.0])),
    )
    if curve_t.size - 2 < MIN_BURN_SAMPLES:
        raise FiringError(
            f"the burn window holds {_count(curve_t.size - 2, 'distinct sample time')}",
            f"at least {MIN_BURN_SAMPLES} samples between the threshold crossings",
        )
    inner_t, inner_f = curve_t[1:-1], curve_f[1:-1]
    simpson_impulse = float(simpson(inner_f, x=inner_t))
    quadrature = abs(tc.total_impulse(inner_t, inner_f) - simpson_impulse)
    weights = 0.5 * (curve_t[2:] - curve_t[:-2])
    noise_error = NOISE_COVERAGE * noise * float(np.sqrt(np.sum(weights**2)))
    tare_error = NOISE_COVERAGE * noise * float(curve_t[-1]) / math.sqrt(count)
    edges = 0.5 * level * (float(curve_t[1] - curve_t[0]) + float(curve_t[-1] - curve_t[-2]))
    shifts = np.array(
        [_crossing_shift(time, signal, first, noise), _crossing_shift(time, signal, last, noise)]
    )
    crossings = NOISE_COVERAGE * level * float(np.sqrt(np.sum(shifts**2)))
    return Firing(
        source=log.source,
        log_time=time,
        log_thrust=raw,
        signal=signal,
        sample_interval=float(np.median(np.diff(time))),
        tare=tare,
        tare_samples=count,
        tare_end=float(time[count - 1]),
        noise=noise,
        cutoff=cutoff,
        threshold_fraction=threshold,
        threshold=level,
        burn_start=float(start),
        burn_end=float(end),
        time=curve_t,
        thrust=curve_f,
        simpson_impulse=simpson_impulse,
        quadrature_error=quadrature,
        noise_error=noise_error,
        tare_error=tare_error,
        crossing_error=crossings,
        edge_error=edges,
        burn_time_error=NOISE_COVERAGE * float(np.sqrt(np.sum(shifts**2))),
        outside_impulse=_tails(time, signal, first, last, start, end, level),
        clipped=int(np.count_nonzero(values < 0.0)),
    )


def _crossing_shift(time: FloatArray, signal: FloatArray, index: int, noise: float) -> float:
    """Standard deviation of a threshold crossing's time [s]: the noise over the slope
    there, σ / |dF/dt|, the slope taken across :data:`SLOPE_SAMPLES` samples each side of
    the crossing (and at most the time those samples span)."""
    low = max(index - 1 - SLOPE_SAMPLES, 0)
    high = min(index + SLOPE_SAMPLES, signal.size - 1)
    span = float(time[high] - time[low])
    slope = abs(float(signal[high] - signal[low])) / span
    if noise == 0.0:
        return 0.0
    return span if slope * span <= noise else noise / slope


def _tails(
    time: FloatArray,
    signal: FloatArray,
    first: int,
    last: int,
    start: float,
    end: float,
    level: float,
) -> float:
    """Impulse below the threshold next to the window [N s]: from where the signal last
    was at or below 0 N before the start to the start, and from the end to where it
    first is again (trapezoidal rule, the crossings interpolated)."""
    low = np.flatnonzero(signal[:first] <= 0.0)
    begin = int(low[-1]) if low.size else 0
    before = tc.total_impulse(
        np.append(time[begin:first], start), np.append(signal[begin:first], level)
    )
    low = np.flatnonzero(signal[last + 1 :] <= 0.0)
    stop = last + 1 + (int(low[0]) if low.size else signal.size - last - 2)
    after = tc.total_impulse(
        np.insert(time[last + 1 : stop + 1], 0, end),
        np.insert(signal[last + 1 : stop + 1], 0, level),
    )
    return before + after


# --- several firings ----------------------------------------------------------------------


def mean_curve(
    curves: Sequence[tuple[FloatArray, FloatArray]], points: int | None = None
) -> tuple[FloatArray, FloatArray]:
    """The mean of several thrust curves on a normalised time base.

    Parameters
    ----------
    curves : sequence of (time, thrust)
        Each curve from 0 s to its burn time [s], thrust [N].
    points : int or None
        Points of the mean curve; by default as many as the longest curve has.

    Returns
    -------
    time : ndarray
        From 0 to the mean burn time [s].
    thrust : ndarray
        The mean curve [N], scaled so that its trapezoidal integral is the mean total
        impulse of the curves.

    Notes
    -----
    Each curve is read at the same fractions τ of its own burn time (linear
    interpolation), the thrusts at each τ are averaged, and the result is stretched to the
    mean burn time t̄ and scaled to the mean total impulse Ī:

    .. math:: F(\\tau \\bar t) = k \\frac{1}{n} \\sum_i F_i(\\tau t_i)

    with k chosen so that the integral is Ī. The two figures a dispersion study scales
    (``impulse_scale``, ``burn_time_scale``) are then the means of the firings. Features
    that do not line up in τ (an ignition spike) come out lower and wider than in any one
    firing. This is a rule of this tool (common practice, no source).
    """
    if not curves:
        raise ValueError("mean_curve needs at least one curve")
    count = points or max(time.size for time, _ in curves)
    fractions = np.linspace(0.0, 1.0, count)
    burn_times = np.array([float(time[-1]) for time, _ in curves])
    impulses = np.array([tc.total_impulse(time, thrust) for time, thrust in curves])
    thrust = np.mean(
        [np.interp(fractions * time[-1], time, force) for time, force in curves], axis=0
    )
    time = fractions * float(np.mean(burn_times))
    thrust = thrust * (float(np.mean(impulses)) / tc.total_impulse(time, thrust))
    thrust[0] = thrust[-1] = 0.0
    return time, thrust


def spread_interval(std: float, count: int, confidence: float = 0.95) -> tuple[float, float]:
    """Confidence interval of a normal population's standard deviation.

    Parameters
    ----------
    std : float
        Sample standard deviation (n − 1 in the denominator) of ``count`` values.
    count : int
        Number of values, at least 2.
    confidence : float
        Two-sided confidence level [1].

    Returns
    -------
    (low, high) : tuple of float
        The interval, in the unit of ``std``.

    Notes
    -----
    .. math:: s \\sqrt{\\frac{n-1}{\\chi^2_{1-\\alpha/2,\\,n-1}}} \\le \\sigma \\le
              s \\sqrt{\\frac{n-1}{\\chi^2_{\\alpha/2,\\,n-1}}}

    With three firings the interval runs from about half to about six times ``std``.

    References
    ----------
    .. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.5.8, "Chi-Square
       Test for the Variance" (the confidence interval for σ), recalled from memory.
    """
    from scipy.stats import chi2

    if count < 2:
        raise ValueError(f"a spread needs at least two values, got {count}")
    alpha = 1.0 - confidence
    dof = count - 1
    low = std * math.sqrt(dof / float(chi2.ppf(1.0 - alpha / 2.0, dof)))
    high = std * math.sqrt(dof / float(chi2.ppf(alpha / 2.0, dof)))
    return low, high


@dataclass(frozen=True)
class FiringImport(_Curve):
    """The firings of one motor and the curve that represents them, in SI.

    Attributes
    ----------
    firings : tuple of Firing
        Each log analysed.
    time, thrust : ndarray
        The curve to write [s], [N]: the one firing's, or :func:`mean_curve` of several,
        rounded to the file's digits.
    curve : str
        ``"single firing"`` or ``"mean curve"``.
    propellant_mass : float or None
        Propellant of one motor [kg], as given.
    notes : tuple of str
        What the import did that the user should know.
    """

    firings: tuple[Firing, ...]
    time: FloatArray = field(repr=False)
    thrust: FloatArray = field(repr=False)
    curve: str
    propellant_mass: float | None = None
    notes: tuple[str, ...] = ()

    @property
    def count(self) -> int:
        """Number of firings."""
        return len(self.firings)

    @property
    def specific_impulse(self) -> float | None:
        """Total impulse of the curve over the propellant weight [s]; None without mass."""
        if self.propellant_mass is None:
            return None
        return self.total_impulse / (self.propellant_mass * STANDARD_GRAVITY)

    @property
    def impulse_class(self) -> str:
        """Impulse class letter of the curve written."""
        return tc.impulse_class(self.total_impulse)

    def _values(self, name: str) -> FloatArray:
        return np.array([getattr(firing, name) for firing in self.firings], dtype=np.float64)

    @property
    def impulse_mean(self) -> float:
        """Mean total impulse of the firings [N s]."""
        return float(np.mean(self._values("total_impulse")))

    @property
    def impulse_std(self) -> float:
        """Sample standard deviation of the firings' total impulse [N s]; NaN for one."""
        return _std(self._values("total_impulse"))

    @property
    def burn_time_mean(self) -> float:
        """Mean burn time of the firings [s]."""
        return float(np.mean(self._values("burn_time")))

    @property
    def burn_time_std(self) -> float:
        """Sample standard deviation of the firings' burn time [s]; NaN for one."""
        return _std(self._values("burn_time"))

    @property
    def impulse_relative_std(self) -> float:
        """Standard deviation of total impulse over its mean [1]; NaN for one firing."""
        return self.impulse_std / self.impulse_mean

    @property
    def burn_time_relative_std(self) -> float:
        """Standard deviation of burn time over its mean [1]; NaN for one firing."""
        return self.burn_time_std / self.burn_time_mean

    def dispersion_toml(self, stage: str | None = None) -> str | None:
        """Two ``[[dispersion]]`` tables for a mission file, or None for one firing.

        Parameters
        ----------
        stage : str or None
            The stage's name in the mission; None writes ``NAME``, to be replaced.

        Returns
        -------
        str or None
            TOML text: ``stage.NAME.motor.impulse_scale`` and ``burn_time_scale``, each
            ``normal`` with ``sigma`` the relative sample standard deviation in percent.
        """
        if self.count < 2:
            return None
        name = stage if stage is not None else "NAME"
        parts = []
        for scale, relative, what in (
            ("impulse_scale", self.impulse_relative_std, "total impulse"),
            ("burn_time_scale", self.burn_time_relative_std, "burn time"),
        ):
            parts.append(
                "[[dispersion]]\n"
                f'field = "stage.{_toml_key(name)}.motor.{scale}"\n'
                'distribution = "normal"\n'
                f'sigma = "{_percent(relative)}"'
                f"  # spread of {what} over {self.count} firings\n"
            )
        return "\n".join(parts)

    def to_dict(self, stage: str | None = None) -> dict[str, Any]:
        """JSON-ready results (SI, unit in each key)."""
        summary: dict[str, Any] = {
            "count": self.count,
            "total_impulse_mean_n_s": self.impulse_mean,
            "total_impulse_std_n_s": self.impulse_std,
            "total_impulse_relative_std": self.impulse_relative_std,
            "burn_time_mean_s": self.burn_time_mean,
            "burn_time_std_s": self.burn_time_std,
            "burn_time_relative_std": self.burn_time_relative_std,
            "total_impulse_std_interval_n_s": None,
            "burn_time_std_interval_s": None,
        }
        if self.count >= 2:
            summary["total_impulse_std_interval_n_s"] = list(
                spread_interval(self.impulse_std, self.count)
            )
            summary["burn_time_std_interval_s"] = list(
                spread_interval(self.burn_time_std, self.count)
            )
        return {
            "firings": [firing.to_dict(self.propellant_mass) for firing in self.firings],
            "summary": summary,
            "motor": {
                "curve": self.curve,
                "points": int(self.time.size),
                "total_impulse_n_s": self.total_impulse,
                "burn_time_s": self.burn_time,
                "average_thrust_n": self.average_thrust,
                "peak_thrust_n": self.peak_thrust,
                "propellant_mass_kg": self.propellant_mass,
                "specific_impulse_s": self.specific_impulse,
                "impulse_class": self.impulse_class,
            },
            "dispersion_toml": self.dispersion_toml(stage),
            "notes": list(self.notes),
        }


def _count(number: int, noun: str) -> str:
    """``"1 sample"``, ``"3 samples"``: a count with its noun."""
    return f"{number:,} {noun}{'s' if number != 1 else ''}"


def _std(values: FloatArray) -> float:
    return float(np.std(values, ddof=1)) if values.size >= 2 else math.nan


def _percent(fraction: float) -> str:
    """A fraction as TOML-ready percent text with three significant digits."""
    number = f"{100.0 * fraction:.3g}"
    if "e" in number:
        number = f"{100.0 * fraction:.6f}".rstrip("0").rstrip(".")
    return f"{number} %"


def _toml_key(name: str) -> str:
    """A stage name as a field path takes it (names are written as they are)."""
    return name.replace("\\", "\\\\").replace('"', '\\"')


def import_firings(
    logs: Sequence[FiringLog],
    threshold: float = DEFAULT_THRESHOLD,
    cutoff: float | None = None,
    propellant_mass: float | None = None,
) -> FiringImport:
    """Analyse the firing logs of one motor and make the curve that represents them.

    Parameters
    ----------
    logs : sequence of FiringLog
        One or more logs of the same motor.
    threshold : float
        Burn threshold as a fraction of the peak thrust [1].
    cutoff : float or None
        Cutoff frequency of the low-pass filter [Hz]; None for no filter.
    propellant_mass : float or None
        Propellant of one motor [kg], for the specific impulse; None leaves it out.

    Returns
    -------
    FiringImport

    Raises
    ------
    FiringError
        No logs, a mass that is not positive, or a log that cannot be analysed.

    Notes
    -----
    One firing: its curve. Several: :func:`mean_curve` of their curves, rounded to the
    file's digits; its total impulse is the mean total impulse and its burn time the mean
    burn time (to the rounding).
    """
    if not logs:
        raise FiringError("no firing logs", "one or more log files")
    if propellant_mass is not None and not propellant_mass > 0.0:
        raise FiringError(
            f"--propellant-mass {propellant_mass:g} kg is not above zero", "a mass above zero"
        )
    firings = tuple(analyse_firing(log, threshold, cutoff) for log in logs)
    notes = []
    clipped = sum(firing.clipped for firing in firings)
    if clipped:
        notes.append(
            f"{_count(clipped, 'sample')} inside the burn window read below 0 N and were "
            "written as 0 N"
        )
    if len(firings) == 1:
        time, thrust = firings[0].time, firings[0].thrust
        curve = "single firing"
    else:
        time, thrust = _written_curve(*mean_curve([(f.time, f.thrust) for f in firings]))
        curve = "mean curve"
        impulses = np.array([firing.total_impulse for firing in firings])
        if float(np.max(impulses) / np.min(impulses)) > 1.2:
            notes.append(
                "the firings' total impulses differ by more than 20 %: are they firings of "
                "one motor?"
            )
    return FiringImport(
        firings=firings,
        time=time,
        thrust=thrust,
        curve=curve,
        propellant_mass=propellant_mass,
        notes=tuple(notes),
    )


# --- writing the motor file --------------------------------------------------------------


def motor_csv(
    result: FiringImport,
    name: str,
    propellant_mass: float,
    diameter: float | None = None,
    length: float | None = None,
    loaded_mass: float | None = None,
    propellant_family: str | None = None,
    note: str = "",
) -> str:
    """The project's motor file (data/README.md) for the curve of an import.

    Parameters
    ----------
    result : FiringImport
        The import.
    name : str
        The motor's name (one line of text).
    propellant_mass : float
        Propellant of one motor [kg].
    diameter, length : float or None
        Motor diameter and length [m]; left out when None.
    loaded_mass : float or None
        Whole motor as loaded [kg]; left out when None.
    propellant_family : str or None
        A key of data/propellants.csv; left out when None.
    note : str
        The ``# note`` line's text.

    Returns
    -------
    str
        ``# propulsion thrust curve``, the ``# key = value`` lines, ``time [s],thrust [N]``
        and one line per point, each value written as Python's shortest form of the
        curve's float (so reading it gives back the same numbers).
    """
    lines = ["# propulsion thrust curve", f"# name = {_one_line(name)}"]
    if diameter is not None:
        lines.append(f"# diameter = {_quantity(diameter * 1e3)} mm")
    if length is not None:
        lines.append(f"# length = {_quantity(length * 1e3)} mm")
    lines.append(f"# propellant_mass = {_quantity(propellant_mass)} kg")
    if loaded_mass is not None:
        lines.append(f"# loaded_mass = {_quantity(loaded_mass)} kg")
    if propellant_family is not None:
        lines.append(f"# propellant_family = {_one_line(propellant_family)}")
    if note:
        lines.append(f"# note = {_one_line(note)}")
    lines.append("time [s],thrust [N]")
    lines.extend(
        f"{float(t)!r},{float(f)!r}" for t, f in zip(result.time, result.thrust, strict=True)
    )
    return "\n".join(lines) + "\n"


def _quantity(value: float) -> str:
    return repr(float(f"{value:.{DIGITS}g}"))


def _one_line(text: str) -> str:
    """Text for a metadata line: control codes, tabs and line breaks removed."""
    from propulsion.text import printable

    return " ".join(printable(text).split())
