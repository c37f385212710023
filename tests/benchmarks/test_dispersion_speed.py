"""10,000 dispersed flights through `propulsion scatter`, end to end, as a user runs it.

Run with `make bench`. Each round starts a new process (``python -m propulsion scatter``),
so the figure includes the interpreter's start, the imports, loading the compiled kernel
from numba's cache, drawing the samples, flying them on every core and printing the table.
The memory test runs the same study at 10,000 and 40,000 samples and compares the peak
resident memory of the two processes: the chunks keep it flat in the number of samples.
"""

from __future__ import annotations

import resource
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
MISSION = ROOT / "missions" / "two_stage_competition.toml"


def run_scatter(samples: int) -> tuple[float, int]:
    """Wall time [s] and peak resident memory [kB] of one scatter process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    started = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "propulsion", "scatter", str(MISSION), "-n", str(samples)],
        capture_output=True,
        text=True,
        check=False,
        cwd=ROOT,
    )
    wall = time.perf_counter() - started
    assert done.returncode == 0, done.stderr
    assert f"{samples:,} flown samples" in done.stdout
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return wall, max(peak, before)


@pytest.mark.benchmark(group="scatter, 10,000 samples, new process")
def test_scatter_command_end_to_end(benchmark: pytest.FixtureDef) -> None:
    run_scatter(100)  # compile on a machine where the cache is cold, outside the timing
    wall, _ = benchmark.pedantic(run_scatter, args=(10_000,), rounds=3, iterations=1)
    benchmark.extra_info["wall_s"] = wall
    print(f"\nscatter -n 10000, whole process: {wall:.2f} s (last round)")


def test_scatter_memory_is_flat_in_the_sample_count() -> None:
    # ru_maxrss of children is the largest of them so far: run the small study first
    _, small = run_scatter(10_000)
    _, large = run_scatter(40_000)
    print(
        f"\npeak memory: {small / 1024:.0f} MB at 10,000 samples, {large / 1024:.0f} MB at 40,000"
    )
    assert large < 1.15 * small
