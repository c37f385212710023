"""10,000 dispersed flights of the two-stage example: batched against a plain loop.

Run with `make bench`. The batched path and the plain per-sample scipy loop (RK45, rtol
1e-6, an apogee event: scipy's default rtol of 1e-3 is too loose to compare against) run
in the same session on the same samples, so their throughputs are compared side by side.
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest

from propulsion import ascent, flight
from propulsion.mission import load_mission
from propulsion.reference import reference_flight
from propulsion.studies.dispersion import Sampler, draw
from propulsion.studies.scatter import scatter

MISSIONS = Path(__file__).resolve().parents[2] / "missions"
SAMPLES = 10_000
LOOP_SAMPLES = 40


@pytest.fixture(scope="module")
def sampled() -> tuple[Sampler, flight.FlightCore]:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    sampler = Sampler(mission)
    values, _ = draw(sampler.dispersions, sampler.nominal, seed=1, start=0, stop=SAMPLES)
    core, valid, _ = sampler.batch(values)
    assert valid.all()
    return sampler, core


@pytest.mark.benchmark(group="10,000 dispersed flights")
def test_batched_core_one_process(
    benchmark: pytest.FixtureDef, sampled: tuple[Sampler, flight.FlightCore]
) -> None:
    _, core = sampled
    outcome = benchmark.pedantic(flight.simulate, args=(core,), rounds=1, iterations=1)
    seconds = benchmark.stats.stats.mean
    benchmark.extra_info["samples_per_second"] = SAMPLES / seconds
    assert (outcome.status == "apogee").all()


@pytest.mark.benchmark(group="10,000 dispersed flights")
def test_scatter_command_path_two_processes(benchmark: pytest.FixtureDef) -> None:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    result = benchmark.pedantic(
        scatter, args=(mission, SAMPLES), kwargs={"seed": 1, "workers": 2}, rounds=1, iterations=1
    )
    benchmark.extra_info["samples_per_second"] = SAMPLES / benchmark.stats.stats.mean
    assert result.valid == SAMPLES


@pytest.mark.benchmark(group="plain loop, per sample")
def test_plain_solve_ivp_loop_against_batched(
    benchmark: pytest.FixtureDef, sampled: tuple[Sampler, flight.FlightCore]
) -> None:
    sampler, core = sampled

    def loop() -> list[float]:
        return [
            reference_flight(core, sample=i, method="RK45", rtol=1e-6, atol=1e-8).apogee_altitude
            for i in range(LOOP_SAMPLES)
        ]

    apogees = benchmark.pedantic(loop, rounds=1, iterations=1)
    loop_rate = LOOP_SAMPLES / benchmark.stats.stats.mean
    started = time.perf_counter()
    outcome = flight.simulate(core)
    batched_rate = SAMPLES / (time.perf_counter() - started)
    batched = ascent._altitude(core, outcome.events["apogee"][1])
    median_loop = float(np.median(apogees))
    median_batched = float(np.median(batched[:LOOP_SAMPLES]))
    benchmark.extra_info.update(
        loop_samples_per_second=loop_rate,
        batched_samples_per_second=batched_rate,
        speed_ratio=batched_rate / loop_rate,
        median_apogee_loop_m=median_loop,
        median_apogee_batched_m=median_batched,
    )
    print(
        f"\nplain loop {loop_rate:.1f}/s, batched {batched_rate:.0f}/s, ratio "
        f"{batched_rate / loop_rate:.0f}; median apogee {median_loop:.2f} m (loop) against "
        f"{median_batched:.2f} m (batched)"
    )
    assert median_batched == pytest.approx(median_loop, rel=5e-4)
    # the nominal flight against a tight DOP853 reference of the same model
    nominal = flight.build_core(sampler.mission, sampler.stages)
    tight = reference_flight(nominal, method="DOP853", rtol=1e-10, atol=1e-10)
    flown = flight.simulate(nominal)
    nominal_apogee = float(ascent._altitude(nominal, flown.events["apogee"][1])[0])
    assert nominal_apogee == pytest.approx(tight.apogee_altitude, rel=5e-4)
