"""Dispersion studies: reproducibility, statistics against scipy, propagation of
uncertainty, bad input, and the same numbers on a real Dask cluster, even when a worker
dies in the middle."""

from __future__ import annotations

import math
import os
import signal
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy import stats
from typer.testing import CliRunner

from propulsion import fields
from propulsion.ascent import fly
from propulsion.cli import app
from propulsion.errors import MissionError
from propulsion.ledger import budget
from propulsion.mission import load_mission, parse_mission
from propulsion.studies.dispersion import draw
from propulsion.studies.scatter import (
    METRICS,
    Aggregate,
    ChunkResult,
    scatter,
    spearman,
    summarise,
    wilson_interval,
)

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
G0 = 9.80665  # standard gravity, exact (3rd CGPM, 1901)
runner = CliRunner()


def competition() -> Any:
    return load_mission(MISSIONS / "two_stage_competition.toml")


def per_sample(mission: Any, **options: Any) -> tuple[Any, dict[int, np.ndarray]]:
    """Run a study and keep every sample's outputs by index."""
    seen: dict[int, np.ndarray] = {}
    starts: list[int] = []

    def keep(chunk: ChunkResult) -> None:
        starts.append(chunk.start)
        for j in range(chunk.stop - chunk.start):
            seen[chunk.start + j] = chunk.outputs[:, j].copy()

    result = scatter(mission, on_chunk=keep, **options)
    assert len(starts) == len(set(starts)), "a chunk was counted twice"
    return result, seen


def assert_same(a: Any, b: Any) -> None:
    assert a.samples == b.samples and a.valid == b.valid and a.meets == b.meets
    assert a.percentiles == b.percentiles
    assert a.drivers == b.drivers
    assert a.interval == b.interval


def test_same_seed_same_numbers_whatever_the_chunks() -> None:
    mission = competition()
    one, samples_one = per_sample(mission, samples=300, seed=7, workers=1, chunk_size=300)
    many, samples_many = per_sample(mission, samples=300, seed=7, workers=1, chunk_size=41)
    assert_same(one, many)
    assert samples_one.keys() == samples_many.keys() == set(range(300))
    for index, values in samples_one.items():
        np.testing.assert_array_equal(values, samples_many[index])
    other = scatter(mission, 300, seed=8, workers=1)
    assert other.percentiles != one.percentiles


def test_threads_give_the_same_numbers() -> None:
    mission = competition()
    local = scatter(mission, 240, seed=11, workers=1, chunk_size=240)
    threaded = scatter(mission, 240, seed=11, workers=2, chunk_size=60)
    assert "2 threads" in threaded.workers
    assert_same(local, threaded)


def test_reservoir_keeps_memory_flat_and_counts_exact() -> None:
    mission = competition()
    full = scatter(mission, 400, seed=2, workers=1, chunk_size=400)
    # a small reservoir: statistics from a subset, counts exact, order independent
    results = []
    for chunk_size in (400, 97):
        aggregate = Aggregate(len(mission.dispersions), reservoir=150)
        from propulsion.studies.executors import run_chunks
        from propulsion.studies.scatter import StudySpec

        spec = StudySpec(mission.document, mission.source, str(MISSIONS), 2)
        run_chunks(spec, 400, chunk_size, aggregate.add, workers=1)
        assert aggregate.keys.size == 150
        results.append(summarise(mission, aggregate, 2, 1, "here", 0.0))
    assert_same(results[0], results[1])
    assert results[0].meets == full.meets and not results[0].exact
    assert results[0].percentiles != full.percentiles  # really a subset


def test_statistics_against_scipy() -> None:
    # Wilson score interval (E. B. Wilson, JASA 1927) against scipy.stats.binomtest;
    # Spearman's rho against scipy.stats.spearmanr; percentiles against
    # scipy.stats.scoreatpercentile, on known distributions.
    for successes, trials in ((37, 50), (0, 20), (20, 20), (9400, 10000)):
        expected = stats.binomtest(successes, trials).proportion_ci(method="wilson")
        low, high = wilson_interval(successes, trials)
        assert low == pytest.approx(expected.low, abs=1e-12)
        assert high == pytest.approx(expected.high, abs=1e-12)
    rng = np.random.default_rng(0)
    x = rng.normal(size=1000)
    y = x**3 + rng.normal(size=1000)
    x[:20] = x[0]  # ties
    assert spearman(x, y) == pytest.approx(stats.spearmanr(x, y).statistic, abs=1e-12)
    mission = competition()
    aggregate = Aggregate(len(mission.dispersions))
    values = stats.norm(loc=100.0, scale=5.0).rvs(size=2000, random_state=3)
    outputs = np.tile(values, (len(METRICS), 1))
    aggregate.add(
        ChunkResult(
            0,
            2000,
            np.tile(values, (len(mission.dispersions), 1)),
            outputs,
            np.ones(2000, dtype=bool),
            np.ones(2000, dtype=bool),
            rng.random(2000),
            [""] * 2000,
        )
    )
    result = summarise(mission, aggregate, 0, 1, "here", 0.0)
    for p in (1.0, 5.0, 50.0, 95.0, 99.0):
        assert result.percentiles["apogee_m"][p] == pytest.approx(
            stats.scoreatpercentile(values, p), rel=1e-12
        )


def test_isp_spread_matches_first_order_propagation() -> None:
    # Propagation of uncertainty to first order (JCGM 100:2008, Guide to the Expression
    # of Uncertainty in Measurement, eq. 10): dv = Isp g0 ln(m0/mf), so
    # sigma_dv = g0 ln(m0/mf) sigma_Isp.
    doc: dict[str, Any] = {
        "vehicle": {"payload": "50 kg"},
        "stage": [
            {
                "name": "only",
                "inert_mass": "100 kg",
                "propellant_mass": "900 kg",
                "engine": {"thrust_vacuum": "30 kN", "isp_vacuum": "300 s", "exit_area": "0 m^2"},
            }
        ],
        "dispersion": [
            {"field": "stage.only.engine.isp_vacuum", "distribution": "normal", "sigma": "1.5 s"}
        ],
    }
    mission = parse_mission(doc)
    ref = fields.resolve(doc, "stage.only.engine.isp_vacuum")
    values, _ = draw(mission.dispersions, [300.0], seed=4, start=0, stop=1500)
    deltas = []
    for isp in values[0]:
        sample = parse_mission(fields.set_value(doc, ref, float(isp)))
        deltas.append(budget(sample).total_ideal_delta_v)
    expected = G0 * math.log(1050.0 / 150.0) * 1.5
    # the sample standard deviation of 1500 draws is within ~3.7 % (2 sigma) of the truth
    assert np.std(deltas, ddof=1) == pytest.approx(expected, rel=0.06)
    assert np.mean(deltas) == pytest.approx(300.0 * G0 * math.log(1050.0 / 150.0), rel=2e-3)


def test_impossible_samples_are_counted_not_dropped_silently() -> None:
    mission = competition()
    doc = mission.document
    doc["dispersion"] = [
        {"field": "stage.sustainer.inert_mass", "distribution": "normal", "sigma": "1 kg"}
    ]
    wide = parse_mission(doc, source=mission.source, base_dir=MISSIONS)
    result = scatter(wide, 200, seed=1, workers=1)
    assert 0 < result.samples - result.valid < 200
    assert result.invalid_reasons == {"stage.sustainer.inert_mass": 200 - result.valid}


@pytest.mark.parametrize(
    ("entry", "field", "fragment"),
    [
        ({"field": "vehicle.payload", "sigma": "-1 g"}, "sigma", "cannot be negative"),
        (
            {"field": "vehicle.payload", "distribution": "uniform", "low": "2 kg", "high": "1 kg"},
            "low",
            "not below the upper",
        ),
        ({"field": "vehicle.paylod", "sigma": "1 g"}, "field", "did you mean 'vehicle.payload'"),
        (
            {"field": "vehicle.payload", "distribution": "normle", "sigma": "1 g"},
            "distribution",
            "did you mean 'normal'",
        ),
    ],
)
def test_bad_distributions_name_the_field(entry: dict[str, str], field: str, fragment: str) -> None:
    doc = competition().document
    doc["dispersion"] = [entry]
    with pytest.raises(MissionError) as info:
        parse_mission(doc, base_dir=MISSIONS)
    assert info.value.field == f"dispersion[1].{field}"
    assert fragment in str(info.value)


def test_scatter_command_streams_samples(tmp_path: Path) -> None:
    path = str(MISSIONS / "two_stage_competition.toml")
    csv = tmp_path / "samples.csv"
    args = ["scatter", path, "-n", "120", "--workers", "1", "--samples", str(csv)]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())
    assert "Probability of meeting the apogee target" in text and "Safety caution" in text
    lines = csv.read_text().splitlines()
    assert len(lines) == 121 and lines[1].startswith("0,1,")
    assert [int(line.split(",")[0]) for line in lines[1:]] == list(range(120))
    before = csv.read_bytes()
    again = runner.invoke(app, args)
    assert again.exit_code == 2 and csv.read_bytes() == before
    data = runner.invoke(app, [*args[:-2], "--json"])
    assert '"probability_of_meeting_target"' in data.stdout


def test_scatter_without_dispersions_is_bad_input() -> None:
    result = runner.invoke(app, ["scatter", str(MISSIONS / "hobby_single_stage.toml")])
    assert result.exit_code == 2
    assert "no dispersions" in result.stderr


@pytest.fixture(scope="module")
def dask_client() -> Any:
    distributed = (
        pytest.importorskip("dask.distributed") if os.environ.get("CI") != "true" else None
    )
    from dask.distributed import Client, LocalCluster

    del distributed
    cluster = LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    )
    client = Client(cluster)
    yield client
    client.close()
    cluster.close()


def test_cluster_equals_in_process_bit_for_bit(dask_client: Any) -> None:
    mission = competition()
    local, local_samples = per_sample(mission, samples=400, seed=21, workers=1)
    remote, remote_samples = per_sample(
        mission, samples=400, seed=21, chunk_size=50, cluster=dask_client
    )
    assert "Dask cluster" in remote.workers
    assert_same(local, remote)
    for index, values in local_samples.items():
        np.testing.assert_array_equal(values, remote_samples[index])


def test_cluster_survives_a_worker_killed_mid_study(dask_client: Any) -> None:
    mission = competition()
    pids = dask_client.run(os.getpid)
    killed: list[int] = []

    def kill_one(chunk: ChunkResult) -> None:
        if not killed:
            victim = next(iter(pids.values()))
            os.kill(victim, signal.SIGKILL)
            killed.append(victim)

    local = scatter(mission, 600, seed=33, workers=1)
    seen: dict[int, int] = {}

    def both(chunk: ChunkResult) -> None:
        kill_one(chunk)
        seen[chunk.start] = seen.get(chunk.start, 0) + 1

    remote = scatter(mission, 600, seed=33, chunk_size=25, cluster=dask_client, on_chunk=both)
    assert killed, "no worker was killed"
    assert sorted(seen) == list(range(0, 600, 25)) and set(seen.values()) == {1}
    assert_same(local, remote)


def test_fields_the_file_leaves_out_disperse_around_what_the_mission_takes() -> None:
    # the booster's case mass comes from the motor file, and this field is applied by
    # rebuilding the mission per sample (the slow path)
    mission = competition()
    doc = mission.document
    doc["dispersion"] = [
        {"field": "stage.booster.motor.case_mass", "distribution": "normal", "sigma": "0.4 kg"}
    ]
    case = parse_mission(doc, source=mission.source, base_dir=MISSIONS)
    result = scatter(case, 60, seed=5, workers=1)
    # negative case masses are impossible: counted under the field's own name
    assert set(result.invalid_reasons) <= {"stage.booster.motor.case_mass"}
    assert 0 < result.valid < 60
    nominal = fly(mission, margin=False).apogee
    assert result.percentiles["apogee_m"][50.0] == pytest.approx(nominal, rel=0.02)


def test_a_field_without_any_nominal_is_bad_input() -> None:
    doc = competition().document
    doc["dispersion"] = [
        {"field": "flight.pitch_kick_time", "distribution": "normal", "sigma": "1 s"}
    ]
    mission = parse_mission(doc, base_dir=MISSIONS)
    with pytest.raises(MissionError, match="needs a nominal value"):
        scatter(mission, 10, seed=1, workers=1)


def test_bad_upper_stage_ignitions_are_counted_and_match_fly() -> None:
    # The sustainer's coast before ignition is dispersed from 1 s to 40 s: late ignitions
    # happen after the top of the coast, descending. The study counts those flights, and
    # `fly` of the same sample warns about the same ignition.
    doc = competition().document
    doc["dispersion"] = [
        {
            "field": "stage.sustainer.ignition_delay",
            "distribution": "uniform",
            "low": "1 s",
            "high": "40 s",
        }
    ]
    mission = parse_mission(doc, source=str(MISSIONS / "x.toml"), base_dir=MISSIONS)
    chunks: list[ChunkResult] = []
    result = scatter(mission, 60, seed=3, workers=1, on_chunk=chunks.append)
    assert 0 < result.bad_ignitions < result.valid
    assert result.to_dict()["bad_upper_stage_ignitions"] == result.bad_ignitions
    chunk = chunks[0]
    flagged = np.flatnonzero(chunk.flagged)
    clean = np.flatnonzero(~chunk.flagged & chunk.valid)
    for j in (*flagged[:2], *clean[:2]):
        sample = fields.set_value(
            mission.document, fields.resolve(mission.document, "stage.sustainer.ignition_delay"),
            float(chunk.inputs[0, j]),
        )  # fmt: skip
        flown = fly(parse_mission(sample, base_dir=MISSIONS), margin=False)
        warned = any(finding.subject == "ignition" for finding in flown.findings)
        assert warned == bool(chunk.flagged[j]), (j, chunk.inputs[0, j])


def test_dispersed_wind_scale_and_turn_fly_as_the_rebuilt_mission_does() -> None:
    # launch.wind_scale and launch.wind_turn are written straight into the batch; flying
    # those samples must give what rebuilding each sample's mission from its file gives
    # (the slow path, independent of the mapping), to round-off
    from propulsion import flight
    from propulsion.studies.dispersion import Sampler

    mission = load_mission(MISSIONS / "launch_day_team_motor.toml")
    fast = Sampler(mission)
    assert fast.all_fast
    values, _ = draw(fast.dispersions, fast.nominal, 11, 0, 12)
    slow = Sampler(mission)
    slow.mappings = [
        None if d.field.startswith("launch.wind") else m
        for d, m in zip(slow.dispersions, slow.mappings, strict=True)
    ]
    apogees = []
    for sampler in (fast, slow):
        core, valid, _ = sampler.batch(values)
        assert valid.all()
        outcome = flight.simulate(core, rtol=1e-9)
        apogees.append(outcome.value("apogee", "altitude"))
    np.testing.assert_allclose(apogees[0], apogees[1], rtol=1e-9)
    assert np.ptp(apogees[0]) > 10.0  # the samples differ: the check is not vacuous
