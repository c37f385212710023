"""Speed of the compiled kernel against a plain per-sample loop, side by side in one run.

Run with `make bench` (outside the default test run); add ``-s`` to see the table. The case
is the two-stage example with six dispersed quantities (both motors' impulse, the drag
factor, both stages' inert masses, the rail elevation; ``plain_loop.draw_samples``):

(a) the plain loop a user would write (``plain_loop.fly_plain``: scalar floats and
    ``math``, scipy ``solve_ivp`` RK45 at rtol 1e-6, an apogee event) over 200 samples;
(a') the same loop at rtol 1e-7, where its apogee error (about 4e-5 of the converged
    value) matches the kernel's at rtol 1e-6: the ratio at equal accuracy;
(b) ``flight.simulate`` at rtol 1e-6 over 10,000 samples on one thread;
(c) the same on every thread this process may use.

The ratio (a)/(b) of the times per flight is the speed-up per core. Each path's results are
checked too: the loop and the kernel agree on the apogee of the same samples (see
tests/test_flight_reference.py for what limits that agreement).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
import pytest
from plain_loop import draw_samples, fly_plain, kernel_core, plain_tables, sample

from propulsion import ascent, flight
from propulsion.mission import Mission, load_mission

MISSIONS = Path(__file__).resolve().parents[2] / "missions"
KERNEL_SAMPLES = 10_000
LOOP_SAMPLES = 200
SEED = 2024
GROUP = "two-stage example, 6 dispersed quantities"

# seconds per flight (fastest round) and threads, filled in by the tests below
MEASURED: dict[str, tuple[float, int]] = {}

Case = tuple[Mission, dict[str, npt.NDArray[np.float64]], flight.FlightCore]


@pytest.fixture(scope="module")
def case() -> Case:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    samples = draw_samples(mission, KERNEL_SAMPLES, SEED)
    core = kernel_core(mission, samples)
    # load the compiled kernel from numba's cache before anything is timed
    flight.simulate(core.take(np.arange(8)), rtol=1e-6, threads=1)
    return mission, samples, core


@pytest.fixture(scope="module", autouse=True)
def ratio_table() -> Iterator[None]:
    """Print the side-by-side table once every path has been measured."""
    yield
    if len(MEASURED) < 4:
        return
    loop = MEASURED["plain loop"][0]
    matched = MEASURED.get("plain loop, rtol 1e-7", (float("nan"), 1))[0]
    one = MEASURED["kernel, 1 thread"][0]
    every, threads = MEASURED["kernel, all threads"]
    print(f"\n{GROUP}: time per flight (fastest round)")
    print(f"{'path':<42}{'flights':>9}{'us/flight':>12}{'flights/s':>12}")
    rows = (
        ("(a) plain loop, RK45 rtol 1e-6", LOOP_SAMPLES, loop),
        ("(a') plain loop, RK45 rtol 1e-7", LOOP_SAMPLES, matched),
        ("(b) kernel, rtol 1e-6, 1 thread", KERNEL_SAMPLES, one),
        (f"(c) kernel, rtol 1e-6, {threads} threads", KERNEL_SAMPLES, every),
    )
    for name, count, seconds in rows:
        print(f"{name:<42}{count:>9}{seconds * 1e6:>12.1f}{1.0 / seconds:>12.0f}")
    print(f"(a)/(b), speed-up per core: {loop / one:.0f}")
    print(f"(a')/(b), speed-up per core at equal accuracy: {matched / one:.0f}")
    print(f"(a)/(c), speed-up on {threads} threads: {loop / every:.0f}")


def record(benchmark: Any, name: str, flights: int, threads: int) -> None:
    seconds = benchmark.stats.stats.min / flights
    MEASURED[name] = (seconds, threads)
    benchmark.extra_info["flights"] = flights
    benchmark.extra_info["threads"] = threads
    benchmark.extra_info["flights_per_second"] = round(1.0 / seconds, 1)


@pytest.mark.benchmark(group=GROUP)
def test_plain_loop(benchmark: Any, case: Case) -> None:
    mission, samples, core = case
    tables = plain_tables(mission)

    def fly_all() -> npt.NDArray[np.float64]:
        return np.array([fly_plain(sample(samples, i), tables) for i in range(LOOP_SAMPLES)])

    apogee = benchmark.pedantic(fly_all, rounds=2, iterations=1)
    record(benchmark, "plain loop", LOOP_SAMPLES, 1)
    # the same samples through the kernel: the loop's own RK45 error is up to ~1.4e-4
    kernel = flight.simulate(core.take(np.arange(LOOP_SAMPLES)), rtol=1e-6, threads=1)
    np.testing.assert_allclose(apogee, kernel.value("apogee", "altitude"), rtol=3e-4)


@pytest.mark.benchmark(group=GROUP)
def test_plain_loop_matched_accuracy(benchmark: Any, case: Case) -> None:
    mission, samples, core = case
    tables = plain_tables(mission)

    def fly_all() -> npt.NDArray[np.float64]:
        return np.array(
            [
                fly_plain(sample(samples, i), tables, rtol=1e-7, atol=1e-7)
                for i in range(LOOP_SAMPLES)
            ]
        )

    apogee = benchmark.pedantic(fly_all, rounds=2, iterations=1)
    record(benchmark, "plain loop, rtol 1e-7", LOOP_SAMPLES, 1)
    # against a converged kernel flight, both paths are within about 5e-5
    truth = flight.simulate(core.take(np.arange(LOOP_SAMPLES)), rtol=1e-11, threads=1)
    kernel = flight.simulate(core.take(np.arange(LOOP_SAMPLES)), rtol=1e-6, threads=1)
    converged = truth.value("apogee", "altitude")
    loop_error = np.max(np.abs(apogee / converged - 1.0))
    kernel_error = np.max(np.abs(kernel.value("apogee", "altitude") / converged - 1.0))
    print(f"\napogee error: loop at 1e-7 {loop_error:.1e}, kernel at 1e-6 {kernel_error:.1e}")
    assert loop_error < 1e-4
    assert kernel_error < 1e-4


@pytest.mark.benchmark(group=GROUP)
def test_kernel_one_thread(benchmark: Any, case: Case) -> None:
    core = case[2]
    outcome = benchmark.pedantic(
        flight.simulate, args=(core,), kwargs={"rtol": 1e-6, "threads": 1}, rounds=3
    )
    record(benchmark, "kernel, 1 thread", KERNEL_SAMPLES, outcome.threads)
    assert outcome.threads == 1
    assert np.all(outcome.status == "apogee")


@pytest.mark.benchmark(group=GROUP)
def test_kernel_all_threads(benchmark: Any, case: Case) -> None:
    core = case[2]
    outcome = benchmark.pedantic(flight.simulate, args=(core,), kwargs={"rtol": 1e-6}, rounds=3)
    record(benchmark, "kernel, all threads", KERNEL_SAMPLES, outcome.threads)
    assert np.all(outcome.status == "apogee")
    # a sample's numbers do not depend on the thread it flew on
    single = flight.simulate(core.take(np.arange(256)), rtol=1e-6, threads=1)
    np.testing.assert_array_equal(
        single.value("apogee", "altitude"), outcome.value("apogee", "altitude")[:256]
    )


@pytest.mark.benchmark(group="one mission, the runner")
def test_fly_with_margin(benchmark: Any) -> None:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    result = benchmark.pedantic(ascent.fly, args=(mission,), rounds=5, iterations=1)
    assert result.verdict.meets_targets
