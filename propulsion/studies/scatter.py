"""Dispersion (Monte Carlo) studies: fly N sampled vehicles and summarise the spread.

Samples are flown in chunks (in this process, in a pool of processes, or on a Dask
cluster: :mod:`propulsion.studies.executors`). Each chunk returns a few numbers per
sample; the aggregate keeps exact counts and a reservoir of at most ``RESERVOIR``
samples chosen by keys drawn from each sample's own stream, so memory stays flat as N
grows and the result does not depend on how the samples were chunked or distributed.
For N up to the reservoir size every statistic is exact.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from propulsion import ascent, flight, margins
from propulsion.flight import layout
from propulsion.impacts import Footprint
from propulsion.impacts import dropped_stage_impacts as impacts_of_dropped
from propulsion.impacts import footprint as footprint_of
from propulsion.mission import Mission, parse_mission
from propulsion.studies.dispersion import Sampler, draw
from propulsion.studies.statistics import quantile_interval, spearman, wilson_interval
from propulsion.text import plural

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "METRICS",
    "PERCENTILES",
    "ChunkResult",
    "Reserve",
    "ScatterResult",
    "StudySpec",
    "run_chunk",
    "scatter",
    "spearman",
    "wilson_interval",
]

FloatArray = npt.NDArray[np.float64]
RESERVOIR = 100_000
MAX_SAMPLES = 100_000_000
"""The largest study: 10^8 samples, about three hours on two cores (the memory stays flat
whatever N, but a larger request is taken for a typing slip)."""
WORKERS_PER_CORE = 4
"""At most this many threads per core: more only adds memory and switching."""
MAX_SEED = 2**63 - 1
"""Seeds run from 0 to 2^63 - 1 (numpy's SeedSequence takes non-negative integers)."""
STUDY_RTOL = 1e-7
"""Relative tolerance of the flights of a study: agreement with a tight reference of
about 1e-7 (tests/test_flight_reference.py), far below any dispersion's spread."""
CHUNK = 2_000
"""Samples per chunk in this process: the progress bar moves every chunk, and memory
stays bounded whatever the number of samples."""
PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)
CONFIDENCE = 0.95
"""Two-sided confidence level of the percentile intervals and the success probability."""
METRICS = (
    "apogee_m",
    "max_mach",
    "max_dynamic_pressure_pa",
    "rail_exit_speed_m_s",
    "margin",
    "downrange_m",
    "propulsion_margin",
    "perigee_error_m",
    "apogee_error_m",
    "inclination_error_deg",
    "propellant_left_kg",
)
"""The study's outputs per sample. ``margin`` is the target margin in the target's unit
(NaN where it is not defined: an orbit never reached); ``propulsion_margin`` the fraction
of impulse each sample may lose (NaN unless a reserve is asked for). Under guidance to an
orbit: the insertion errors (perigee and apogee against the target's, the inclination
against the target's when it names one) and the propellant left in the last stage at
cutoff (NaN otherwise, and where the orbit was not reached)."""
GUIDED_METRICS = (
    "perigee_error_m",
    "apogee_error_m",
    "inclination_error_deg",
    "propellant_left_kg",
)
"""The outputs of guidance to an orbit: left out of the statistics when no sample has them."""


@dataclass(frozen=True)
class StudySpec:
    """Everything a worker needs to fly a chunk: plain data, so it pickles anywhere.

    ``threads`` is how many threads fly a chunk (None: one per core); ``rtol`` the
    integrator's relative tolerance.
    """

    document: dict[str, Any]
    source: str
    base_dir: str | None
    seed: int
    threads: int | None = None
    rtol: float = STUDY_RTOL
    reserve: bool = False
    """Find every sample's propulsion margin too (about 15 more flights per sample)."""
    footprint: bool = False
    """Fly every sample on to the ground and every dropped stage down too (the footprint)."""


@dataclass
class ChunkResult:
    """The samples ``start..stop-1``: inputs, outputs and validity per sample."""

    start: int
    stop: int
    inputs: FloatArray
    outputs: FloatArray
    meets: npt.NDArray[np.bool_]
    valid: npt.NDArray[np.bool_]
    keys: FloatArray
    reasons: list[str]
    flagged: npt.NDArray[np.bool_] = field(default_factory=lambda: np.zeros(0, dtype=bool))
    """Samples whose unguided upper stage lit descending, too slow to steer, or tilted
    beyond the limit of the flight warnings."""
    misses: npt.NDArray[np.str_] = field(default_factory=lambda: np.zeros(0, dtype=str))
    """Why each flown sample missed its target ("energy", "shape", "no result"; "" when
    it met it)."""
    bodies: tuple[str, ...] = ()
    """With a footprint: the bodies that come down (dropped stages, then the vehicle)."""
    impacts: FloatArray = field(default_factory=lambda: np.zeros((0, 0)))
    """With a footprint: east and north [m] of each body per sample, rows (east, north) of
    the first body, then of the next (NaN where it did not come down)."""


_CACHE: dict[int, Sampler] = {}


def _sampler(spec: StudySpec) -> Sampler:
    key = hash((spec.source, spec.seed, repr(sorted(spec.document.items()))))
    if key not in _CACHE:
        base = Path(spec.base_dir) if spec.base_dir else None
        mission = parse_mission(spec.document, source=spec.source, base_dir=base)
        _CACHE.clear()
        _CACHE[key] = Sampler(mission)
    return _CACHE[key]


def run_chunk(spec: StudySpec, start: int, stop: int) -> ChunkResult:
    """Draw and fly samples ``start..stop-1`` of a study (a pure function of its inputs)."""
    sampler = _sampler(spec)
    values, keys = draw(sampler.dispersions, sampler.nominal, spec.seed, start, stop)
    core, valid, reasons = sampler.batch(values)
    outputs = np.full((len(METRICS), stop - start), np.nan)
    meets = np.zeros(stop - start, dtype=bool)
    flagged = np.zeros(stop - start, dtype=bool)
    misses = np.full(stop - start, "", dtype=object)
    bodies: tuple[str, ...] = ()
    impacts = np.zeros((0, stop - start))
    if spec.footprint:
        core.stop_at_ground = True
        # named as `fly` names them: the dropped stages, then the rest of the vehicle
        names = sampler.core.stage_names
        bodies = (*names[:-1], names[-1] if len(names) > 1 else "vehicle")
        impacts = np.full((2 * len(bodies), stop - start), np.nan)
    if core.n:
        outcome = flight.simulate(core, rtol=spec.rtol, threads=spec.threads)
        rows = np.flatnonzero(valid)
        measured, met, miss = _measure(sampler.mission, core, outcome, spec)
        outputs[:, rows] = measured
        meets[rows] = met
        misses[rows] = miss
        flagged[rows] = ascent.bad_ignitions(core, outcome)
        if spec.footprint:
            dropped = impacts_of_dropped(core, outcome, spec.rtol, spec.threads)
            for b, name in enumerate(bodies[:-1]):
                impacts[2 * b, rows], impacts[2 * b + 1, rows] = dropped[name][:2]
            impacts[-2, rows] = outcome.value("ground", "east")
            impacts[-1, rows] = outcome.value("ground", "north")
    return ChunkResult(
        start,
        stop,
        values,
        outputs,
        meets,
        valid,
        keys,
        reasons,
        flagged,
        misses.astype(str),
        bodies,
        impacts,
    )


def _measure(
    mission: Mission, core: flight.FlightCore, outcome: flight.Outcome, spec: StudySpec
) -> tuple[FloatArray, npt.NDArray[np.bool_], npt.NDArray[np.str_]]:
    """The study's outputs per sample (rows of METRICS), whether it meets the target, and
    why not."""
    target = margins.Target(mission, core)
    propulsion = np.full(core.n, np.nan)
    if target.judged:
        judgement = target.judge(core, outcome)
        margin, meets, miss = judgement.target_margin, judgement.meets, judgement.miss
        if spec.reserve:
            # the margins need the flights to the target only, not on to the ground
            to_target = replace(core, stop_at_ground=False)
            propulsion = margins.propulsion_margins(
                to_target, target, target.metric(core, outcome), spec.rtol, spec.threads
            )
    else:
        margin = np.full(core.n, np.nan)
        meets = np.zeros(core.n, dtype=bool)
        miss = np.full(core.n, "", dtype=str)
    out = np.vstack(
        [
            outcome.value("apogee", "altitude"),
            outcome.value("max_mach", "mach"),
            outcome.value("max_dynamic_pressure", "dynamic_pressure"),
            outcome.value("rail_exit", "ground_speed"),
            margin,
            outcome.value("apogee", "downrange"),
            propulsion,
            *_insertion(core, outcome),
        ]
    )
    return out, meets, miss


def _insertion(core: flight.FlightCore, outcome: flight.Outcome) -> list[FloatArray]:
    """Insertion errors [m, m, deg] and propellant left [kg] per sample under guidance to
    an orbit; NaN rows otherwise, and NaN where the flight did not reach its cutoff."""
    nothing = np.full(core.n, np.nan)
    target = core.orbit_target
    if target is None or "guide_a" not in outcome.extra:
        return [nothing] * 4
    from propulsion.constants import EARTH_EQUATORIAL_RADIUS
    from propulsion.flight.steering import insertion

    final = outcome.state("final")
    reached = outcome.status == "orbit"
    perigee, apogee = margins.apsis_altitudes(final)
    _, _, inclination = insertion(final)
    plane = (
        np.degrees(inclination - target.inclination) if target.inclination is not None else nothing
    )
    last = core.stages - 1
    ignition = outcome.state(f"ignition:{last}")[:, layout.Y_M]
    left = core.usable[last] - (ignition - final[:, layout.Y_M])
    return [
        np.where(reached, perigee - (target.perigee_radius - EARTH_EQUATORIAL_RADIUS), np.nan),
        np.where(reached, apogee - (target.apogee_radius - EARTH_EQUATORIAL_RADIUS), np.nan),
        np.where(reached, plane, np.nan),
        np.where(reached, left, np.nan),
    ]


class Aggregate:
    """Merges chunk results in any order into the same statistics."""

    def __init__(self, inputs: int, reservoir: int = RESERVOIR) -> None:
        self.capacity = reservoir
        self.total = 0
        self.valid = 0
        self.meets = 0
        self.flagged = 0
        self.misses: dict[str, int] = {}
        self.invalid_reasons: dict[str, int] = {}
        self.keys = np.zeros(0)
        self.index = np.zeros(0, dtype=np.int64)
        self.inputs = np.zeros((inputs, 0))
        self.outputs = np.zeros((len(METRICS), 0))
        self.met = np.zeros(0, dtype=bool)
        self.bodies: tuple[str, ...] = ()
        self.impacts = np.zeros((0, 0))

    def add(self, chunk: ChunkResult) -> None:
        """Take a chunk's samples into the counts and the reservoir."""
        self.total += chunk.stop - chunk.start
        self.valid += int(chunk.valid.sum())
        self.meets += int((chunk.meets & chunk.valid).sum())
        if chunk.flagged.size:
            self.flagged += int((chunk.flagged & chunk.valid).sum())
        for reason in chunk.misses[chunk.valid & ~chunk.meets] if chunk.misses.size else ():
            if reason:
                self.misses[str(reason)] = self.misses.get(str(reason), 0) + 1
        for reason in (r for r, ok in zip(chunk.reasons, chunk.valid, strict=True) if not ok):
            label = reason.split(":")[0] if reason else "flight"
            self.invalid_reasons[label] = self.invalid_reasons.get(label, 0) + 1
        rows = np.flatnonzero(chunk.valid)
        self.keys = np.concatenate([self.keys, chunk.keys[rows]])
        self.index = np.concatenate([self.index, chunk.start + rows])
        self.inputs = np.concatenate([self.inputs, chunk.inputs[:, rows]], axis=1)
        self.outputs = np.concatenate([self.outputs, chunk.outputs[:, rows]], axis=1)
        self.met = np.concatenate([self.met, chunk.meets[rows]])
        if chunk.bodies:
            if not self.bodies:
                self.bodies = chunk.bodies
                self.impacts = np.zeros((chunk.impacts.shape[0], 0))
            self.impacts = np.concatenate([self.impacts, chunk.impacts[:, rows]], axis=1)
        if self.keys.size > self.capacity:
            keep = np.argpartition(self.keys, self.capacity - 1)[: self.capacity]
            self._keep(keep)

    def _keep(self, keep: npt.NDArray[np.int64]) -> None:
        self.keys, self.index = self.keys[keep], self.index[keep]
        self.inputs, self.outputs = self.inputs[:, keep], self.outputs[:, keep]
        self.met = self.met[keep]
        if self.bodies:
            self.impacts = self.impacts[:, keep]

    def ordered(self) -> None:
        """Sort the reservoir by sample index (statistics then never depend on order)."""
        self._keep(np.argsort(self.index, kind="stable"))


@dataclass(frozen=True)
class Reserve:
    """The flight-performance reserve: the propulsion margin that a chosen share of the
    dispersed flights still has.

    ``probability`` is that share; ``fraction`` the margin (the fraction of total impulse
    those flights may still lose: the 1 - probability quantile of the samples' propulsion
    margins), ``interval`` its distribution-free confidence interval (order statistics;
    NaN when the study has too few samples for it), ``delta_v`` [m/s] the ideal delta-v of
    the nominal vehicle that ``fraction`` of impulse is worth.

    The method, a quantile of the Monte Carlo dispersion of the performance margin, is
    that of NASA's launch-vehicle practice (J. M. Hanson and B. B. Beard, "Applying Monte
    Carlo Simulation to Launch Vehicle Design and Requirements Analysis", NASA/TP-2010-
    216447, 2010; from memory), where the 99.7 % (three-sigma) level is common.
    """

    probability: float
    fraction: float
    interval: tuple[float, float]
    delta_v: float
    samples: int
    bounded: int
    """Samples whose margin lay beyond the searched bracket (counted at its bound)."""


@dataclass
class ScatterResult:
    """Percentiles, probability of meeting the target, and what drives the spread.

    ``misses`` counts the flown samples that missed the target by reason ("energy",
    "shape", "no result"); a miss never enters a margin statistic as a number.
    ``intervals`` holds each percentile's 95 % confidence interval (order statistics,
    :func:`propulsion.studies.statistics.quantile_interval`).
    """

    mission: Mission
    samples: int
    valid: int
    meets: int
    invalid_reasons: dict[str, int]
    bad_ignitions: int
    probability: float
    interval: tuple[float, float]
    percentiles: dict[str, dict[float, float]]
    drivers: list[tuple[str, str, float]]
    reservoir: int
    exact: bool
    seed: int
    chunks: int
    workers: str
    elapsed: float
    target: str
    required: float
    values: dict[str, FloatArray] = field(repr=False, default_factory=dict)
    misses: dict[str, int] = field(default_factory=dict)
    intervals: dict[str, dict[float, tuple[float, float]]] = field(default_factory=dict)
    reserve: Reserve | None = None
    target_unit: str = ""
    footprints: tuple[Footprint, ...] = ()
    """With a footprint: where each body came down (dropped stages, then the vehicle)."""

    def to_frame(self) -> pd.DataFrame:
        """Percentiles of each output as a DataFrame (rows: outputs, columns: p1 ... p99)."""
        import pandas as pd

        metrics = [m for m in METRICS if m in self.percentiles]
        return pd.DataFrame(
            {f"p{p:g}": [self.percentiles[m][p] for m in metrics] for p in PERCENTILES},
            index=metrics,
        )

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready results (SI, unit in the metric names)."""
        return {
            "mission": self.mission.name,
            "samples": self.samples,
            "valid_samples": self.valid,
            "invalid_samples": self.samples - self.valid,
            "invalid_reasons": self.invalid_reasons,
            "meets_target": self.meets,
            "bad_upper_stage_ignitions": self.bad_ignitions,
            "probability_of_meeting_target": self.probability,
            "probability_interval_95": list(self.interval),
            "misses": self.misses,
            "percentiles": {
                metric: {f"p{p:g}": value for p, value in table.items()}
                for metric, table in self.percentiles.items()
            },
            "percentile_intervals_95": {
                metric: {f"p{p:g}": list(bounds) for p, bounds in table.items()}
                for metric, table in self.intervals.items()
            },
            "percentile_interval_method": "order statistics (binomial), distribution-free",
            "margin_unit": self.target_unit,
            "footprints": [item.to_dict() for item in self.footprints],
            "reserve": None
            if self.reserve is None
            else {
                "probability": self.reserve.probability,
                "propulsion_margin_fraction": self.reserve.fraction,
                "interval_95": list(self.reserve.interval),
                "ideal_delta_v_m_s": self.reserve.delta_v,
                "samples": self.reserve.samples,
                "beyond_bracket": self.reserve.bounded,
            },
            "drivers": [
                {"field": name, "output": output, "spearman_rho": rho}
                for name, output, rho in self.drivers
            ],
            "statistics_from": "all samples"
            if self.exact
            else f"a uniform reservoir of {self.reservoir} samples (counts are exact)",
            "seed": self.seed,
            "chunks": self.chunks,
            "workers": self.workers,
            "target": self.target,
            "required": self.required,
            "elapsed_s": self.elapsed,
        }


def summarise(
    mission: Mission,
    aggregate: Aggregate,
    seed: int,
    chunks: int,
    workers: str,
    elapsed: float,
    reserve: float | None = None,
) -> ScatterResult:
    """Turn the merged chunks into the study's statistics."""
    aggregate.ordered()
    percentiles: dict[str, dict[float, float]] = {}
    intervals: dict[str, dict[float, tuple[float, float]]] = {}
    for row, metric in enumerate(METRICS):
        if metric == "propulsion_margin" and reserve is None:
            continue
        values = aggregate.outputs[row]
        values = values[np.isfinite(values)]
        if metric in GUIDED_METRICS and not values.size:
            continue  # not guided to an orbit (or no sample reached it)
        percentiles[metric] = {
            p: float(np.percentile(values, p)) if values.size else math.nan for p in PERCENTILES
        }
        intervals[metric] = {
            p: quantile_interval(values, p / 100.0, CONFIDENCE) for p in PERCENTILES
        }
    drivers: list[tuple[str, str, float]] = []
    output = METRICS.index("margin")
    y = aggregate.outputs[output]
    usable = y[np.isfinite(y)]
    guided = aggregate.outputs[METRICS.index("propellant_left_kg")]
    if np.isfinite(guided).sum() >= 3:
        # guided to an orbit: the shape is the guidance's; what varies is what is left
        output = METRICS.index("propellant_left_kg")
        y = guided
    elif usable.size < 3 or np.ptp(usable) == 0:  # no target: rank against the apogee
        output = METRICS.index("apogee_m")
        y = aggregate.outputs[output]
    finite = np.isfinite(y)
    for d, dispersion in enumerate(mission.dispersions):
        x = aggregate.inputs[d][finite]
        if x.size > 2 and np.ptp(x) > 0 and np.ptp(y[finite]) > 0:
            rho = spearman(x, y[finite])
            drivers.append((dispersion.field, METRICS[output], rho))
    drivers.sort(key=lambda item: -abs(item[2]))
    nominal = flight.build_core(mission, ascent.flown_stages(mission))
    target = margins.Target(mission, nominal)
    probability = aggregate.meets / aggregate.valid if aggregate.valid else math.nan
    footprints = tuple(
        footprint_of(name, aggregate.impacts[2 * b], aggregate.impacts[2 * b + 1])
        for b, name in enumerate(aggregate.bodies)
    )
    found = None
    if reserve is not None:
        values = aggregate.outputs[METRICS.index("propulsion_margin")]
        values = values[np.isfinite(values)]
        if values.size:
            fraction = float(np.quantile(values, 1.0 - reserve))
            scaled = margins.scale_propulsion(nominal, np.array([1.0, 1.0 - fraction]))
            ideal = margins.ideal_delta_v(scaled)
            found = Reserve(
                probability=reserve,
                fraction=fraction,
                interval=quantile_interval(values, 1.0 - reserve, CONFIDENCE),
                delta_v=float(ideal[0] - ideal[1]),
                samples=int(values.size),
                bounded=int(np.sum((values >= 0.95 - 1e-12) | (values <= -4.0 + 1e-12))),
            )
    return ScatterResult(
        mission=mission,
        samples=aggregate.total,
        valid=aggregate.valid,
        meets=aggregate.meets,
        invalid_reasons=dict(sorted(aggregate.invalid_reasons.items())),
        bad_ignitions=aggregate.flagged,
        probability=probability,
        interval=wilson_interval(aggregate.meets, aggregate.valid),
        percentiles=percentiles,
        drivers=drivers,
        reservoir=aggregate.capacity,
        exact=aggregate.total <= aggregate.capacity,
        seed=seed,
        chunks=chunks,
        workers=workers,
        elapsed=elapsed,
        target=target.kind,
        required=target.required,
        values={metric: aggregate.outputs[i].copy() for i, metric in enumerate(METRICS)},
        misses=dict(sorted(aggregate.misses.items())),
        intervals=intervals,
        reserve=found,
        target_unit={"length": "m", "speed": "m/s"}.get(target.dimension, ""),
        footprints=footprints,
    )


def check_study(samples: int, seed: int, workers: int | None = None) -> None:
    """Refuse a study size, seed or thread count out of range (before anything is drawn)."""
    from propulsion.errors import RequestError
    from propulsion.flight.batch import available_threads

    if not 1 <= samples <= MAX_SAMPLES:
        raise RequestError(
            f"{samples:,} samples is out of range",
            f"from 1 to {MAX_SAMPLES:,} samples (about three hours on two cores)",
        )
    if not 0 <= seed <= MAX_SEED:
        raise RequestError(f"the seed {seed} is out of range", f"a seed from 0 to {MAX_SEED}")
    cores = available_threads()
    if workers is not None and not 1 <= workers <= WORKERS_PER_CORE * cores:
        raise RequestError(
            f"{workers} threads on {plural(cores, 'core')} is out of range",
            f"from 1 to {WORKERS_PER_CORE * cores} threads ({WORKERS_PER_CORE} per core)",
        )


def scatter(
    mission: Mission,
    samples: int,
    seed: int = 1,
    chunk_size: int | None = None,
    workers: int | None = None,
    cluster: str | Any | None = None,
    on_chunk: Callable[[ChunkResult], None] | None = None,
    progress: Callable[[int, int], None] | None = None,
    reserve: float | None = None,
    footprint: bool = False,
) -> ScatterResult:
    """Fly ``samples`` dispersed vehicles and summarise the outputs.

    Parameters
    ----------
    mission : Mission
        A mission with ``[[dispersion]]`` entries.
    samples : int
        Number of samples N.
    seed : int
        Seed of the study; sample i's values depend on the seed and i alone
        (:func:`propulsion.studies.dispersion.draw`).
    chunk_size : int or None
        Samples per chunk (one batched flight each); by default ``CHUNK`` in this
        process, and on a cluster the samples shared in 8 or more chunks.
    workers : int or None
        Threads that fly the samples in this process (None: one per core).
    cluster : str, dask Client, or None
        A dask.distributed scheduler address (``tcp://host:port``) or a Client; the
        chunks then run there.
    on_chunk : callable or None
        Called with every chunk result as it arrives (for streaming per-sample output).
    progress : callable or None
        Called with (samples done, samples) as chunks arrive.
    reserve : float or None
        A probability (0.997 for the three-sigma flight-performance reserve): find every
        sample's propulsion margin by root finding (about 15 more flights per sample) and
        report the margin that share of the flights still has (:class:`Reserve`).
    footprint : bool
        Fly every sample on to the ground (no recovery device), and every stage it drops
        down on its own, and give where they come down (:mod:`propulsion.impacts`).

    Returns
    -------
    ScatterResult
        Percentiles (1, 5, 50, 95, 99) of the outputs, the probability of meeting the
        target with its 95 % Wilson interval, and the dispersed inputs ranked by their
        Spearman rank correlation with the margin.
    """
    import time

    from propulsion.studies.executors import run_chunks

    check_study(samples, seed, workers)
    if not mission.dispersions:
        from propulsion.errors import MissionError

        raise MissionError(
            mission.source,
            "dispersion",
            "the mission states no dispersions",
            "[[dispersion]] tables, each with a field and a distribution",
        )
    started = time.perf_counter()
    spec = StudySpec(
        document=mission.document,
        source=mission.source,
        base_dir=str(Path(mission.source).parent) if mission.source != "<mission>" else None,
        seed=seed,
        reserve=reserve is not None,
        footprint=footprint,
    )
    aggregate = Aggregate(len(mission.dispersions))
    done = 0

    def collect(chunk: ChunkResult) -> None:
        nonlocal done
        aggregate.add(chunk)
        done += chunk.stop - chunk.start
        if on_chunk is not None:
            on_chunk(chunk)
        if progress is not None:
            progress(done, samples)

    if chunk_size is None:
        import os

        chunk_size = CHUNK
        if cluster is not None or os.environ.get("PROPULSION_DASK_SCHEDULER"):
            # a cluster's size is not known here: enough chunks to share out
            chunk_size = max(500, min(5000, math.ceil(samples / 8)))
    chunks, where = run_chunks(spec, samples, chunk_size, collect, workers=workers, cluster=cluster)
    return summarise(
        mission, aggregate, seed, chunks, where, time.perf_counter() - started, reserve
    )
