"""Speed of one flight: the batched integrator against scipy's solve_ivp on the same model.

Run with `make bench` (outside the default test run). Both paths run in the same session,
so their ratio is measured side by side on the same machine.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from propulsion import ascent, flight
from propulsion.mission import load_mission
from propulsion.reference import reference_flight

MISSIONS = Path(__file__).resolve().parents[2] / "missions"


@pytest.fixture(scope="module")
def two_stage_core() -> flight.FlightCore:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    return flight.build_core(mission, ascent._flown_stages(mission))


@pytest.mark.benchmark(group="one flight, two-stage example")
def test_batched_integrator_one_flight(
    benchmark: pytest.FixtureDef, two_stage_core: flight.FlightCore
) -> None:
    outcome = benchmark(flight.simulate, two_stage_core)
    assert outcome.status[0] == "apogee"


@pytest.mark.benchmark(group="one flight, two-stage example")
def test_solve_ivp_rk45_one_flight(
    benchmark: pytest.FixtureDef, two_stage_core: flight.FlightCore
) -> None:
    result = benchmark(reference_flight, two_stage_core, method="RK45", rtol=1e-6, atol=1e-8)
    assert result.status == "apogee"


@pytest.mark.benchmark(group="one flight, two-stage example")
def test_fly_with_margin(benchmark: pytest.FixtureDef) -> None:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    result = benchmark.pedantic(ascent.fly, args=(mission,), rounds=5, iterations=1)
    assert result.verdict.meets_targets
