"""The static-fire import (`propulsion firing`): from a load cell's log to a motor file.

What is checked, and against what:

* synthetic logs built here from shapes whose integral has a closed form (a trapezoid, a
  half-sine), with Gaussian noise, a tare offset and zero padding: the recovered total
  impulse lies within the reported error of the true area, and the burn time is the time
  between the threshold crossings of the noise-free shape;
* the impulse class letters against NFPA 1125;
* units in the header, the exact kgf and lbf, the separators, and the messages of bad logs
  (file, line, column; exit code 2, no traceback);
* the threshold and filter options; the mean and spread of several firings, and the
  ``[[dispersion]]`` tables they print, loaded into a mission;
* the motor file written with ``-o``: read back by the project's thrust-curve reader and
  flown; the output-file rules; ``--plot`` and ``--json``;
* the invented demo logs in data/firings/ against the truth their script prints;
* the screen: 80 columns, the caution, words without "(s)", the help text.

Every log here is invented for the tests.
"""

from __future__ import annotations

import importlib.util
import itertools
import json
import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from typer.testing import CliRunner, Result

from propulsion import thrust_curve
from propulsion.catalog import read_thrust_curve
from propulsion.cli import app
from propulsion.firing import (
    FiringImport,
    analyse_firing,
    import_firings,
    parse_unit,
    read_firing_log,
)
from propulsion.mission import load_mission

ROOT = Path(__file__).resolve().parent.parent
MISSIONS = ROOT / "missions"
HOBBY = MISSIONS / "hobby_single_stage.toml"
FIRINGS = ROOT / "data" / "firings"
DEMO_LOGS = [FIRINGS / "demo_fire_1.csv", FIRINGS / "demo_fire_2.tsv", FIRINGS / "demo_fire_3.txt"]
KGF = 9.80665  # N per kilogram-force, exact (standard gravity, 3rd CGPM 1901)
LBF = 4.4482216152605  # N per pound-force, exact (0.45359237 kg x 9.80665 m/s^2)
RATE = 1000.0  # samples per second of the synthetic logs
DT = 1.0 / RATE
THRESHOLD = 0.05  # the command's default burn threshold, 5 % of the peak thrust

runner = CliRunner()


# --- synthetic logs ------------------------------------------------------------------------


def trapezoid(peak: float, rise: float, flat: float, fall: float) -> Callable[[Any], Any]:
    """Noise-free thrust [N] of a linear rise, a flat top and a linear fall, from 0 s."""

    def shape(t: Any) -> Any:
        up = np.clip(t / rise, 0.0, 1.0)
        down = np.clip((rise + flat + fall - t) / fall, 0.0, 1.0)
        return peak * np.where(t >= 0.0, np.minimum(up, down), 0.0)

    return shape


def trapezoid_area(peak: float, rise: float, flat: float, fall: float) -> float:
    """Closed form: A (flat + (rise + fall) / 2) [N s]."""
    return peak * (flat + 0.5 * (rise + fall))


def trapezoid_window(rise: float, flat: float, fall: float, fraction: float) -> float:
    """Time between the crossings of fraction x peak on the rise and on the fall [s]."""
    return rise + flat + fall - fraction * (rise + fall)


def half_sine(peak: float, period: float) -> Callable[[Any], Any]:
    """Noise-free thrust [N]: A sin(pi t / T) for 0 <= t <= T, else 0."""

    def shape(t: Any) -> Any:
        inside = (t >= 0.0) & (t <= period)
        return np.where(inside, peak * np.sin(np.pi * np.clip(t, 0.0, period) / period), 0.0)

    return shape


def half_sine_window(period: float, fraction: float) -> float:
    """Time between the crossings of fraction x A: T (1 - 2 asin(fraction) / pi) [s]."""
    return period * (1.0 - 2.0 * math.asin(fraction) / math.pi)


def log_samples(
    shape: Callable[[Any], Any],
    duration: float,
    noise: float,
    tare: float,
    seed: int,
    before: float = 1.5,
    after: float = 1.2,
    offset: float = 0.3e-3,
) -> tuple[Any, Any, Any]:
    """Times from 0 s, the load cell's readings and the noise-free thrust [s], [N], [N].

    The shape starts ``before`` s into the log (plus ``offset``, so that its corners fall
    between samples), with ``after`` s of zero thrust after it.
    """
    count = round((before + duration + after) * RATE)
    time = np.arange(count) * DT
    truth = shape(time - before - offset)
    rng = np.random.default_rng(seed)
    return time, truth + tare + rng.normal(0.0, noise, count), truth


def write_log(
    path: Path,
    time: Any,
    thrust: Any,
    header: str = "time (s),thrust (N)",
    separator: str = ",",
    time_factor: float = 1.0,
    thrust_factor: float = 1.0,
) -> Path:
    """A log file: a comment line, the header, one sample per line (values divided by the
    factors, written in full)."""
    lines = ["# invented static-fire log for the tests", header]
    lines += [
        f"{float(t) / time_factor!r}{separator}{float(f) / thrust_factor!r}"
        for t, f in zip(time, thrust, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def standard_log(path: Path, seed: int = 1, noise: float = 2.0) -> Path:
    """A 400 N trapezoid (50 ms rise, 1 s flat, 100 ms fall), tare -12 N, in N and s."""
    time, reading, _ = log_samples(trapezoid(400.0, 0.05, 1.0, 0.1), 1.15, noise, -12.0, seed)
    return write_log(path, time, reading)


def firing(*args: object, env: dict[str, str] | None = None) -> Result:
    """`propulsion firing ARGS`, in this process."""
    return runner.invoke(app, ["firing", *(str(arg) for arg in args)], env=env)


def firing_json(*args: object) -> dict[str, Any]:
    result = firing(*args, "--json")
    assert result.exit_code == 0, result.output
    data: dict[str, Any] = json.loads(result.stdout)
    return data


def message_of(result: Result) -> str:
    """The error message, its whitespace joined."""
    return " ".join(result.stderr.split())


def assert_bad_input(result: Result, *expected: str) -> str:
    """Exit code 2, no traceback, and each expected piece in the message."""
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    message = message_of(result)
    for piece in expected:
        assert piece in message, (piece, message)
    return message


# --- 1. known integrals --------------------------------------------------------------------

SHAPES = {
    # 400 N trapezoid: 50 ms rise, 1.0 s flat, 100 ms fall
    "trapezoid": (
        trapezoid(400.0, 0.05, 1.0, 0.1),
        1.15,
        trapezoid_area(400.0, 0.05, 1.0, 0.1),
        trapezoid_window(0.05, 1.0, 0.1, THRESHOLD),
        THRESHOLD * 0.05,
    ),
    # half-sine of 250 N over 1.3 s: area 2 A T / pi
    "half-sine": (
        half_sine(250.0, 1.3),
        1.3,
        2.0 * 250.0 * 1.3 / math.pi,
        half_sine_window(1.3, THRESHOLD),
        1.3 * math.asin(THRESHOLD) / math.pi,
    ),
}


@pytest.mark.parametrize("name", list(SHAPES))
def test_total_impulse_of_a_known_shape_lies_within_the_reported_error(
    tmp_path: Path, name: str
) -> None:
    # The closed-form areas of a trapezoid and of a half-sine (A (flat + (rise + fall) / 2)
    # and 2 A T / pi) against the trapezoidal integral of a noisy, offset, padded log.
    shape, duration, area, _, _ = SHAPES[name]
    time, reading, _ = log_samples(shape, duration, noise=2.0, tare=-12.0, seed=7)
    assert np.min(reading) < 0.0  # the load cell reads below zero before ignition
    log = read_firing_log(write_log(tmp_path / f"{name}.csv", time, reading))
    result = analyse_firing(log)
    assert result.tare == pytest.approx(-12.0, abs=4 * 2.0 / math.sqrt(result.tare_samples))
    assert abs(result.total_impulse - area) <= result.impulse_error
    assert 0.0 < result.impulse_error < 0.01 * area


@pytest.mark.parametrize("name", list(SHAPES))
def test_burn_time_is_the_time_between_the_threshold_crossings(tmp_path: Path, name: str) -> None:
    # Closed form: the noise-free shape crosses 5 % of its peak at t1 and t2. The noise
    # moves each crossing by about sigma / slope (3 ms on the half-sine's flanks, a quarter
    # of a sample on the trapezoid's), which the reported burn-time error covers.
    shape, duration, _, window, first = SHAPES[name]
    time, reading, _ = log_samples(shape, duration, noise=2.0, tare=-12.0, seed=11)
    result = analyse_firing(read_firing_log(write_log(tmp_path / "log.csv", time, reading)))
    # the reported error is 2 sqrt(d1^2 + d2^2), d = sigma / |slope| at each crossing
    slopes = [
        (shape(np.array(t + DT)) - shape(np.array(t - DT))) / (2 * DT)
        for t in (first, first + window)
    ]
    shifts = [result.noise / abs(float(slope)) for slope in slopes]
    # (the tool reads the slope off noisy samples 11 ms apart: within a factor of two)
    assert result.burn_time_error == pytest.approx(2.0 * math.hypot(*shifts), rel=0.5)
    tolerance = max(result.burn_time_error, 3 * DT)
    assert result.burn_time == pytest.approx(window, abs=tolerance)
    # the shape starts 1.5 s + 0.3 ms into the log (log_samples)
    assert result.burn_start == pytest.approx(1.5 + 0.3e-3 + first, abs=tolerance)
    assert result.burn_time_error < 0.01 * window
    assert result.time[0] == 0.0 and result.thrust[0] == 0.0 and result.thrust[-1] == 0.0


def test_negative_readings_inside_the_burn_are_written_as_zero(tmp_path: Path) -> None:
    # A noise-free log whose burn holds one reading of -1 N (a load cell ringing through
    # zero): accepted, written as 0 N, counted, and the note says "1 sample" (not
    # "1 sample(s)": the plural follows the count).
    time = np.arange(3000) * DT
    thrust = trapezoid(100.0, 0.05, 1.0, 0.05)(time - 1.0)
    thrust[1500] = -1.0
    result = import_firings([read_firing_log(write_log(tmp_path / "ring.csv", time, thrust))])
    assert result.firings[0].clipped == 1
    assert np.min(result.thrust) == 0.0
    assert any(note.startswith("1 sample inside") for note in result.notes), result.notes
    thrust[1600] = -2.0
    again = import_firings([read_firing_log(write_log(tmp_path / "ring2.csv", time, thrust))])
    assert any(note.startswith("2 samples inside") for note in again.notes), again.notes


# --- 2. impulse classes ----------------------------------------------------------------------

# NFPA 1125, Code for the Manufacture of Model Rocket and High-Power Rocket Motors (recalled
# from memory): class A is 1.26 to 2.50 N s and each following letter doubles the range, up
# to O (20 480.01 to 40 960 N s); below A, 1/2A is 0.626 to 1.25 N s.
NFPA_UPPER = [("1/2A", 1.25)] + [
    (letter, 2.5 * 2.0**k) for k, letter in enumerate("ABCDEFGHIJKLMNO")
]


def _class_of_exact_impulse(impulse: float) -> str:
    """The class the firing import gives a curve of exactly this trapezoidal integral."""
    curve = FiringImport(
        firings=(),
        time=np.array([0.0, 0.5, 1.0]),
        thrust=np.array([0.0, 2.0 * impulse, 0.0]),
        curve="single firing",
    )
    assert curve.total_impulse == impulse
    return curve.impulse_class


@pytest.mark.parametrize(("letter", "upper"), NFPA_UPPER)
def test_impulse_class_boundaries_follow_nfpa_1125(letter: str, upper: float) -> None:
    # NFPA 1125 (recalled from memory): the upper bound of each class belongs to it; the
    # next hundredth of a newton-second belongs to the next letter.
    following = {a: b for (a, _), (b, _) in itertools.pairwise(NFPA_UPPER)}
    for classify in (thrust_curve.impulse_class, _class_of_exact_impulse):
        assert classify(upper) == letter
        assert classify(upper * 0.999) == letter
        if letter in following:
            assert classify(upper + 0.01) == following[letter]


@pytest.mark.parametrize(
    ("impulse", "letter"), [(2.4, "A"), (2.6, "B"), (620.0, "I"), (660.0, "J")]
)
def test_a_logged_firing_reports_its_nfpa_1125_class(
    tmp_path: Path, impulse: float, letter: str
) -> None:
    # NFPA 1125 (recalled from memory): 2.50 N s tops class A and 640 N s class I. Each log
    # is a trapezoid of the given area with 0.5 % noise; the recovered impulse is within its
    # error (< 1 %) of the area, so the class is decided on the right side of the bound.
    peak = impulse / (0.4 + 0.5 * (0.05 + 0.05))
    time, reading, _ = log_samples(
        trapezoid(peak, 0.05, 0.4, 0.05), 0.5, 0.005 * peak, 0.01 * peak, seed=3, before=1.0
    )
    data = firing_json(write_log(tmp_path / "class.csv", time, reading))
    one = data["firings"][0]
    assert abs(one["total_impulse_n_s"] - impulse) <= one["total_impulse_error_n_s"]
    assert one["total_impulse_error_n_s"] < 0.01 * impulse
    assert one["impulse_class"] == letter
    assert data["motor"]["impulse_class"] == letter


# --- 3. units, separators and bad logs -------------------------------------------------------


@pytest.fixture
def reference(tmp_path: Path) -> tuple[Any, Any, float]:
    """One noisy trapezoid's samples and its total impulse read from 'time (s),thrust (N)'."""
    time, reading, _ = log_samples(trapezoid(300.0, 0.04, 0.8, 0.08), 0.92, 1.5, 6.0, seed=5)
    impulse = firing_json(write_log(tmp_path / "reference.csv", time, reading))["motor"][
        "total_impulse_n_s"
    ]
    return time, reading, impulse


@pytest.mark.parametrize(
    ("header", "separator", "time_factor", "thrust_factor"),
    [
        # the bug: "time (ms)" in round brackets was once read as seconds (1000 x the impulse)
        ("time (ms),thrust (N)", ",", 1e-3, 1.0),
        ("time [ms],thrust [N]", ",", 1e-3, 1.0),
        ("time (s),thrust (kgf)", ",", 1.0, KGF),
        ("time [s],thrust [lbf]", ",", 1.0, LBF),
        ("time (ms)\tthrust (kgf)", "\t", 1e-3, KGF),
        ("time [s];thrust [N]", ";", 1.0, 1.0),
        ("t[ms]  thrust[lbf]", "  ", 1e-3, LBF),
        ("time [s]   thrust (N)", "   ", 1.0, 1.0),
    ],
)
def test_units_and_separators_give_the_same_impulse(
    tmp_path: Path,
    reference: tuple[Any, Any, float],
    header: str,
    separator: str,
    time_factor: float,
    thrust_factor: float,
) -> None:
    # The same samples written in other units and layouts: the same total impulse, to the
    # round-off of the unit factors (1 kgf = 9.80665 N and 1 lbf = 4.4482216152605 N
    # exactly, NIST SP 811, 2008, appendix B).
    time, reading, impulse = reference
    path = write_log(
        tmp_path / "log.txt", time, reading, header, separator, time_factor, thrust_factor
    )
    data = firing_json(path)
    assert data["motor"]["total_impulse_n_s"] == pytest.approx(impulse, rel=1e-8)


def test_unit_factors_are_exact() -> None:
    # NIST SP 811 (2008), appendix B: kgf and lbf by definition.
    assert parse_unit("kgf", "force", "test") == KGF
    assert parse_unit("lbf", "force", "test") == pytest.approx(LBF, rel=1e-15)
    assert parse_unit("ms", "time", "test") == 1e-3


def test_units_from_the_options_for_a_header_without_units(
    tmp_path: Path, reference: tuple[Any, Any, float]
) -> None:
    time, reading, impulse = reference
    path = write_log(tmp_path / "bare.csv", time, reading, "time,thrust", ",", 1e-3, KGF)
    data = firing_json(path, "--time-unit", "ms", "--thrust-unit", "kgf")
    assert data["motor"]["total_impulse_n_s"] == pytest.approx(impulse, rel=1e-8)


def test_a_header_without_units_is_an_error_naming_file_line_and_column(
    tmp_path: Path, reference: tuple[Any, Any, float]
) -> None:
    # Policy of the project: a bare number where a dimensioned quantity belongs is an error.
    time, reading, _ = reference
    path = write_log(tmp_path / "no_units.csv", time, reading, "time,thrust")
    assert_bad_input(firing(path), "no_units.csv", "line 2", "'time'", "states no unit")
    path = write_log(tmp_path / "no_force.csv", time, reading, "time (s),thrust")
    assert_bad_input(firing(path), "no_force.csv", "line 2", "'thrust'", "--thrust-unit")


@pytest.mark.parametrize(
    ("header", "column", "unit"),
    [
        ("time (s),thrust (furlongs)", "'thrust'", "furlongs"),  # a length, not a force
        ("time (bananas),thrust (N)", "'time'", "bananas"),  # no unit at all
        ("time (s),thrust (kg)", "'thrust'", "kgf"),  # a mass: the message suggests kgf
    ],
)
def test_an_unreadable_unit_is_an_error_naming_file_line_and_column(
    tmp_path: Path, reference: tuple[Any, Any, float], header: str, column: str, unit: str
) -> None:
    # Policy of the project: an unreadable unit is an error, never a guess.
    time, reading, _ = reference
    path = write_log(tmp_path / "odd_unit.csv", time, reading, header)
    assert_bad_input(firing(path), "odd_unit.csv", "line 2", column, unit)


def test_a_cell_that_is_not_a_number_names_its_line(
    tmp_path: Path, reference: tuple[Any, Any, float]
) -> None:
    time, reading, _ = reference
    path = write_log(tmp_path / "cell.csv", time, reading)
    lines = path.read_text(encoding="utf-8").splitlines()
    lines[500 - 1] = lines[500 - 1].split(",")[0] + ",12.5x"  # line 500 of the file
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert_bad_input(firing(path), "cell.csv", "line 500", "'thrust'", "'12.5x'", "not a number")


def test_a_missing_log_is_an_error_naming_it(tmp_path: Path) -> None:
    assert_bad_input(firing(tmp_path / "nowhere.csv"), "nowhere.csv")


# --- 4. threshold and filter -------------------------------------------------------------------


def test_a_larger_threshold_shortens_the_burn_as_the_closed_form_says(tmp_path: Path) -> None:
    # For the trapezoid the window at fraction p of the peak is rise + flat + fall -
    # p (rise + fall) (closed form); the level follows the noisy peak: a few samples.
    path = standard_log(tmp_path / "log.csv")
    burns = {}
    for text, fraction in (("5 %", 0.05), ("20 %", 0.20), ("0.4", 0.40)):
        data = firing_json(path, "--threshold", text)
        burns[fraction] = data["firings"][0]["burn_time_s"]
        assert data["firings"][0]["threshold_fraction"] == pytest.approx(fraction)
        assert burns[fraction] == pytest.approx(
            trapezoid_window(0.05, 1.0, 0.1, fraction), abs=3 * DT
        )
    assert burns[0.05] > burns[0.20] > burns[0.40]


@pytest.mark.parametrize("text", ["0", "0 %", "60 %", "0.6", "-5 %", "5 m"])
def test_a_threshold_out_of_range_exits_2(tmp_path: Path, text: str) -> None:
    # The threshold is a fraction of the peak above 0 and up to 50 % (rule of the tool).
    assert_bad_input(firing(standard_log(tmp_path / "log.csv"), "--threshold", text), "--threshold")


def test_a_low_pass_filter_keeps_the_impulse_and_lowers_the_noise(tmp_path: Path) -> None:
    # A 50 Hz zero-phase low-pass on a log sampled at 1 kHz with 3.5 N of white noise: the
    # area is kept (the filter's gain at 0 Hz is 1, and it shifts nothing), so the recovered
    # impulse stays within the reported error of the closed form; the noise left on the
    # flat top, against the noise-free shape, falls to well under half (the filter passes
    # about a tenth of the band up to the Nyquist frequency).
    shape = trapezoid(400.0, 0.05, 1.0, 0.1)
    time, reading, truth = log_samples(shape, 1.15, noise=3.5, tare=8.0, seed=13)
    log = read_firing_log(write_log(tmp_path / "noisy.csv", time, reading))
    area = trapezoid_area(400.0, 0.05, 1.0, 0.1)
    plain = analyse_firing(log)
    filtered = analyse_firing(log, cutoff=50.0)
    for result in (plain, filtered):
        assert abs(result.total_impulse - area) <= result.impulse_error < 0.01 * area
    top = (time > 1.5 + 0.15) & (time < 1.5 + 0.95)
    left = [float(np.std(r.signal[top] - truth[top])) for r in (plain, filtered)]
    assert left[1] < 0.5 * left[0]
    shown = firing(tmp_path / "noisy.csv", "--filter", "50 Hz", env={"COLUMNS": "80"})
    assert shown.exit_code == 0, shown.output
    text = " ".join(shown.stdout.split())
    assert "Filter: zero-phase Butterworth low-pass, order 4" in text
    assert "cutoff 50.00 Hz" in text
    data = firing_json(tmp_path / "noisy.csv", "--filter", "50 Hz")
    assert data["firings"][0]["filter_cutoff_hz"] == 50.0
    assert data["firings"][0]["total_impulse_n_s"] == pytest.approx(filtered.total_impulse)


@pytest.mark.parametrize("seed", [11, 13, 18])
def test_noise_that_reaches_the_threshold_is_refused_unless_filtered(
    tmp_path: Path, seed: int
) -> None:
    # 12 N of white noise under a 400 N trapezoid: the 5 % threshold (20 N) is 1.7 noise
    # standard deviations, which white Gaussian noise passes in about 5 % of the samples
    # before ignition, so the first crossing would be a spike of noise and the padding
    # would count as burn time. Without a filter that must be an error naming the way
    # out; with the 50 Hz filter the window, the burn time and the impulse are those of
    # the closed form (within the reported errors), whatever the noise does at the ends
    # of the log.
    shape = trapezoid(400.0, 0.05, 1.0, 0.1)
    time, reading, _ = log_samples(shape, 1.15, noise=12.0, tare=8.0, seed=seed)
    path = write_log(tmp_path / "very_noisy.csv", time, reading)
    assert_bad_input(firing(path), "very_noisy.csv", "noise", "--filter", "--threshold")
    data = firing_json(path, "--filter", "50 Hz")["firings"][0]
    area = trapezoid_area(400.0, 0.05, 1.0, 0.1)
    assert abs(data["total_impulse_n_s"] - area) <= data["total_impulse_error_n_s"]
    assert data["total_impulse_error_n_s"] < 0.02 * area
    window = trapezoid_window(0.05, 1.0, 0.1, THRESHOLD)
    assert abs(data["burn_time_s"] - window) <= max(data["burn_time_error_s"], 3 * DT)
    # the tare is the mean of the first half of the 1.5 s before ignition
    assert data["tare_samples"] == pytest.approx(750, abs=30)
    assert data["tare_n"] == pytest.approx(8.0, abs=4 * 12.0 / math.sqrt(700))


def test_a_spike_at_either_end_of_the_log_does_not_stop_the_filter(tmp_path: Path) -> None:
    # A zero-phase filter run forwards and backwards must not carry a glitch in the first
    # or last sample into the burn window (an end padded by reflecting the samples smooths
    # it like any other sample).
    shape = trapezoid(400.0, 0.05, 1.0, 0.1)
    time, reading, _ = log_samples(shape, 1.15, noise=2.0, tare=8.0, seed=3)
    reading[0] += 60.0
    reading[-1] += 60.0
    path = write_log(tmp_path / "glitch.csv", time, reading)
    data = firing_json(path, "--filter", "50 Hz")["firings"][0]
    window = trapezoid_window(0.05, 1.0, 0.1, THRESHOLD)
    assert abs(data["burn_time_s"] - window) <= max(data["burn_time_error_s"], 3 * DT)


@pytest.mark.parametrize("text", ["50", "50 m", "0 Hz", "600 Hz"])
def test_a_filter_that_cannot_be_used_exits_2(tmp_path: Path, text: str) -> None:
    # A bare number, a length, zero, and a cutoff above half the 1 kHz sampling rate.
    assert_bad_input(firing(standard_log(tmp_path / "log.csv"), "--filter", text), "filter")


# --- 5. several firings ----------------------------------------------------------------------


def three_logs(folder: Path) -> list[Path]:
    """Three firings of one invented motor: impulse and burn time spread by a few %."""
    logs = []
    for k, (scale, flat) in enumerate(((1.0, 1.0), (0.97, 1.04), (1.03, 0.95)), start=1):
        time, reading, _ = log_samples(
            trapezoid(400.0 * scale, 0.05, flat, 0.1), flat + 0.15, 2.0, 3.0 * k, seed=20 + k
        )
        logs.append(write_log(folder / f"fire_{k}.csv", time, reading))
    return logs


def test_mean_and_spread_of_several_firings_are_the_sample_statistics(tmp_path: Path) -> None:
    # Mean and sample standard deviation (n - 1 in the denominator) of the results of each
    # log imported alone, computed by numpy.
    logs = three_logs(tmp_path)
    alone = [firing_json(log)["firings"][0] for log in logs]
    impulses = np.array([one["total_impulse_n_s"] for one in alone])
    burns = np.array([one["burn_time_s"] for one in alone])
    data = firing_json(*logs)
    summary = data["summary"]
    assert summary["count"] == 3
    assert summary["total_impulse_mean_n_s"] == pytest.approx(np.mean(impulses), rel=1e-12)
    assert summary["total_impulse_std_n_s"] == pytest.approx(np.std(impulses, ddof=1), rel=1e-9)
    assert summary["burn_time_mean_s"] == pytest.approx(np.mean(burns), rel=1e-12)
    assert summary["burn_time_std_s"] == pytest.approx(np.std(burns, ddof=1), rel=1e-9)
    assert summary["total_impulse_relative_std"] == pytest.approx(
        np.std(impulses, ddof=1) / np.mean(impulses), rel=1e-9
    )
    # the mean curve is scaled to the mean impulse and stretched to the mean burn time
    assert data["motor"]["total_impulse_n_s"] == pytest.approx(np.mean(impulses), rel=1e-8)
    assert data["motor"]["burn_time_s"] == pytest.approx(np.mean(burns), rel=1e-8)
    low, high = summary["total_impulse_std_interval_n_s"]
    assert low < summary["total_impulse_std_n_s"] < high


def test_the_printed_dispersion_tables_load_into_a_mission(tmp_path: Path) -> None:
    # The [[dispersion]] block as the screen shows it, pasted into a copy of the hobby
    # mission with NAME replaced by its motor stage ("sustainer"): the loader gives sigmas
    # equal to the relative spreads (printed to three significant digits).
    logs = three_logs(tmp_path)
    summary = firing_json(*logs)["summary"]
    shown = firing(*logs, env={"COLUMNS": "80"})
    assert shown.exit_code == 0, shown.output
    lines = shown.stdout.splitlines()
    start = lines.index("[[dispersion]]")
    block = []
    for line in lines[start:]:
        if line.strip() and not line.startswith(
            ("[[dispersion]]", "field", "distribution", "sigma")
        ):
            break
        block.append(line)
    assert sum(line == "[[dispersion]]" for line in block) == 2
    text = HOBBY.read_text(encoding="utf-8") + "\n" + "\n".join(block).replace("NAME", "sustainer")
    mission_path = tmp_path / "dispersed.toml"
    mission_path.write_text(text, encoding="utf-8")
    sigmas = {d.field: d.sigma for d in load_mission(mission_path).dispersions}
    assert sigmas["stage.sustainer.motor.impulse_scale"] == pytest.approx(
        summary["total_impulse_relative_std"], rel=5e-3
    )
    assert sigmas["stage.sustainer.motor.burn_time_scale"] == pytest.approx(
        summary["burn_time_relative_std"], rel=5e-3
    )
    named = firing_json(*logs, "--stage", "sustainer")["dispersion_toml"]
    assert "stage.sustainer.motor.impulse_scale" in named and "NAME" not in named


def test_one_firing_gives_no_dispersion_tables(tmp_path: Path) -> None:
    data = firing_json(standard_log(tmp_path / "log.csv"))
    assert data["dispersion_toml"] is None
    assert data["summary"]["total_impulse_std_n_s"] is None  # NaN is written as null


# --- 6. the motor file ---------------------------------------------------------------------


def test_the_motor_file_reads_back_and_flies(tmp_path: Path) -> None:
    # The file written is read by the reader of `file = ...` motors with the same total
    # impulse (the curve is rounded to the file's digits before any figure is computed),
    # and a copy of the hobby mission flies it (exit code 0 or 1: judged, not refused).
    logs = three_logs(tmp_path)
    motor_path = tmp_path / "team_motor.csv"
    data = firing_json(
        *logs, "--propellant-mass", "0.4 kg", "--loaded-mass", "0.9 kg", "-o", motor_path
    )
    motor = read_thrust_curve(motor_path)
    assert motor.total_impulse == pytest.approx(data["motor"]["total_impulse_n_s"], rel=1e-6)
    assert motor.burn_time == pytest.approx(data["motor"]["burn_time_s"], rel=1e-6)
    assert motor.propellant_mass == pytest.approx(0.4, rel=1e-12)
    assert motor.case_mass == pytest.approx(0.5, rel=1e-9)
    assert motor.name == "team_motor"
    text = HOBBY.read_text(encoding="utf-8")
    assert 'name = "pd-H113"' in text
    mission = tmp_path / "own_motor.toml"
    mission.write_text(text.replace('name = "pd-H113"', 'file = "team_motor.csv"'), "utf-8")
    flown = runner.invoke(app, ["fly", str(mission)])
    assert flown.exit_code in (0, 1), flown.output
    assert "Traceback" not in flown.output
    note = next(line for line in motor_path.read_text("utf-8").splitlines() if "# note" in line)
    assert "from 3 static-fire logs" in note and "log(s)" not in note


def test_an_existing_motor_file_is_kept_without_force(tmp_path: Path) -> None:
    # Policy of the project: never overwrite a user's file without --force.
    log = standard_log(tmp_path / "log.csv")
    motor_path = tmp_path / "motor.csv"
    motor_path.write_text("the team's own notes\n", encoding="utf-8")
    mass = ("--propellant-mass", "0.2 kg")
    assert_bad_input(firing(log, *mass, "-o", motor_path), "motor.csv")
    assert motor_path.read_text(encoding="utf-8") == "the team's own notes\n"
    replaced = firing(log, *mass, "-o", motor_path, "--force")
    assert replaced.exit_code == 0, replaced.output
    assert motor_path.read_text(encoding="utf-8").startswith("# propulsion thrust curve\n")


def test_a_motor_file_needs_the_propellant_mass(tmp_path: Path) -> None:
    log = standard_log(tmp_path / "log.csv")
    assert_bad_input(firing(log, "-o", tmp_path / "motor.csv"), "--propellant-mass")
    assert not (tmp_path / "motor.csv").exists()
    bare = firing(log, "--propellant-mass", "0.2", "-o", tmp_path / "motor.csv")
    assert_bad_input(bare, "--propellant-mass")
    assert not (tmp_path / "motor.csv").exists()


def test_plot_writes_a_picture_of_every_firing(tmp_path: Path) -> None:
    # W3C SVG 1.1: an <svg> root; matplotlib writes each artist's gid as the id of its group.
    logs = three_logs(tmp_path)
    picture = tmp_path / "fire.svg"
    result = firing(*logs, "--plot", picture)
    assert result.exit_code == 0, result.output
    svg = picture.read_text(encoding="utf-8")
    assert "<svg" in svg
    for gid in ("raw:1", "curve:3", "normalised:2", "written"):
        assert f'id="{gid}"' in svg, gid
    again = firing(*logs, "--plot", picture)
    assert_bad_input(again, "fire.svg")


def test_the_plot_title_counts_firings_in_words(tmp_path: Path) -> None:
    from propulsion.report.firing_plots import firing_figure
    from propulsion.units import display_units

    logs = [read_firing_log(log) for log in three_logs(tmp_path)]
    for chosen, word in ((logs[:1], "1 firing,"), (logs, "3 firings,")):
        figure = firing_figure(import_firings(chosen), display_units("si"))
        title = figure.get_suptitle()
        assert word in title and "(s)" not in title, title


def test_json_output_holds_the_impulse_keys(tmp_path: Path) -> None:
    data = firing_json(standard_log(tmp_path / "log.csv"), "--propellant-mass", "0.2 kg")
    one = data["firings"][0]
    for key in ("total_impulse_n_s", "total_impulse_error_n_s", "burn_time_s", "impulse_class"):
        assert key in one, key
    for key in ("total_impulse_n_s", "burn_time_s", "specific_impulse_s", "impulse_class"):
        assert key in data["motor"], key
    # Isp = I / (m g0) (Sutton and Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2)
    assert data["motor"]["specific_impulse_s"] == pytest.approx(
        data["motor"]["total_impulse_n_s"] / (0.2 * KGF), rel=1e-12
    )


# --- 7. the demo logs --------------------------------------------------------------------------


def test_the_demo_logs_give_back_the_truth_of_their_script(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # data/firings/make_demo_logs.py prints the noise-free curve's total impulse of each
    # log; run here with its output folder moved to tmp_path (the shipped logs stay).
    spec = importlib.util.spec_from_file_location("make_demo_logs", FIRINGS / "make_demo_logs.py")
    assert spec is not None and spec.loader is not None
    script = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(script)
    monkeypatch.setattr(script, "HERE", tmp_path)
    script.main()
    printed = capsys.readouterr().out
    truth = {
        name: float(value)
        for name, value in re.findall(r"^(\S+): total impulse ([0-9.]+) N\*s", printed, re.M)
    }
    assert sorted(truth) == sorted(log.name for log in DEMO_LOGS)
    data = firing_json(*DEMO_LOGS)
    for log, one in zip(DEMO_LOGS, data["firings"], strict=True):
        # the printed truth is rounded to 0.01 N s
        assert (
            abs(one["total_impulse_n_s"] - truth[log.name])
            <= one["total_impulse_error_n_s"] + 0.005
        )
        assert one["total_impulse_error_n_s"] < 0.01 * truth[log.name]


# --- 8. the screen ---------------------------------------------------------------------------


def test_the_screen_fits_80_columns_and_carries_the_caution(tmp_path: Path) -> None:
    # Policy of the project: screens fit 80 columns, every performance output carries the
    # safety caution, and counts are written as words agree with them ("3 firings").
    folder = tmp_path / "a folder with a rather long name for the static fire logs of a team"
    folder.mkdir()
    logs = three_logs(folder)
    motor_path = folder / "motor.csv"
    for args in ([logs[0]], [*logs, "--propellant-mass", "0.4 kg", "-o", motor_path]):
        shown = firing(*args, env={"COLUMNS": "80"})
        assert shown.exit_code == 0, shown.output
        lines = shown.stdout.splitlines()
        assert max(len(line) for line in lines) <= 80
        assert "Safety caution" in shown.stdout
        assert re.search(r"[A-Za-z]\(s\)", shown.stdout) is None, shown.stdout
    assert "Static-fire import of 3 firings" in shown.stdout
    single = firing(logs[0], env={"COLUMNS": "80"})
    assert "Static-fire import of 1 firing\n" in single.stdout


def test_the_help_shows_the_dispersion_tables_by_name() -> None:
    # rich reads "[...]" as markup in typer's help: "[[dispersion]]" must be escaped.
    shown = runner.invoke(app, ["firing", "--help"], env={"COLUMNS": "80"})
    assert shown.exit_code == 0, shown.output
    assert "[[dispersion]]" in shown.stdout
    assert "[]" not in shown.stdout
