"""Sampling a mission's dispersions and turning the samples into a batch of flights.

The samples are drawn in fixed blocks of ``BLOCK``: block b draws from its own generator
(``SeedSequence(seed, spawn_key=(b,))``), so a sample draws the same values whatever chunk
or worker it lands in, and a study of N samples builds N / BLOCK generators, not N.

Fields that map straight onto the flight core's arrays (masses, scales, launch angle,
wind, delays, the pitch kick) are applied to a copy of the nominal core at array speed;
any other numeric field is written into the mission document and the mission is checked
and built again for that sample (slower, but any field works).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from propulsion import ascent, fields, flight
from propulsion.errors import MissionError, PropulsionError
from propulsion.mission import Dispersion, Mission, parse_mission
from propulsion.units import MAX_MAGNITUDE

__all__ = ["BLOCK", "Sampler", "draw"]

FloatArray = npt.NDArray[np.float64]


BLOCK = 256
"""Samples drawn together from one generator (a constant of the method: changing it
changes every study's numbers)."""


def draw(
    dispersions: tuple[Dispersion, ...], nominal: list[float], seed: int, start: int, stop: int
) -> tuple[FloatArray, FloatArray]:
    """Draw samples ``start..stop-1``: values (dispersions, n) [SI] and reservoir keys (n,).

    Samples come in blocks of ``BLOCK``: block b draws, from a generator seeded by
    ``SeedSequence(seed, spawn_key=(b,))``, one array of ``BLOCK`` values per dispersion in
    the order they are listed, then the reservoir keys. The values of sample i therefore
    depend on the seed and i alone.
    """
    first, last = start // BLOCK, (stop - 1) // BLOCK if stop > start else start // BLOCK - 1
    blocks_values = []
    blocks_keys = []
    for block in range(first, last + 1):
        rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(block,))))
        values = np.empty((len(dispersions), BLOCK))
        for d, (dispersion, centre) in enumerate(zip(dispersions, nominal, strict=True)):
            if dispersion.distribution == "normal":
                mean = centre if dispersion.mean is None else dispersion.mean
                values[d] = mean + dispersion.sigma * rng.standard_normal(BLOCK)
            elif dispersion.distribution == "uniform":
                values[d] = dispersion.low + (dispersion.high - dispersion.low) * rng.random(BLOCK)
            else:
                values[d] = rng.triangular(dispersion.low, dispersion.mode, dispersion.high, BLOCK)
        blocks_values.append(values)
        blocks_keys.append(rng.random(BLOCK))
    if not blocks_values:
        return np.empty((len(dispersions), 0)), np.empty(0)
    offset = first * BLOCK
    values = np.concatenate(blocks_values, axis=1)[:, start - offset : stop - offset]
    keys = np.concatenate(blocks_keys)[start - offset : stop - offset]
    return values, keys


def _nominal(mission: Mission, ref: fields.FieldRef) -> float:
    """The field's nominal value: from the file, or what the mission takes when it is silent."""
    value = fields.get_value(mission.document, ref)
    if value is not None:
        return float(value)
    path = ref.path
    launch = mission.launch
    implied: dict[str, float] = {
        "elevation": launch.elevation,
        "rail_length": launch.rail_length or 0.0,
        "site_altitude": launch.altitude,
        "wind_speed": launch.wind_offset,
    }
    if path[0] == "launch" and str(path[1]) in implied:
        return float(implied[str(path[1])])
    if path[0] == "stage" and len(path) == 4 and path[2] == "motor":
        motor = mission.vehicle.stages[int(path[1])].propulsion
        if path[3] in ("propellant_mass", "case_mass"):
            return float(getattr(motor, str(path[3])))
    raise MissionError(
        mission.source,
        ref.name,
        "a dispersed field needs a nominal value, and the file does not give this one",
        f"a value for {ref.name} in the file (or a 'mean' for a normal distribution)",
    )


@dataclass
class _Mapping:
    """How one dispersed field reaches the core: a kind and, for stage fields, the stage."""

    kind: str
    stage: int = -1


def _fast_mapping(ref: fields.FieldRef, mission: Mission) -> _Mapping | None:
    path = ref.path
    if path[0] == "vehicle" and path[1] in ("payload", "drag_scale"):
        return _Mapping(str(path[1]))
    if path[0] == "launch" and path[1] in (
        "elevation",
        "rail_length",
        "wind_speed",
        "wind_scale",
        "wind_turn",
        "site_altitude",
    ):
        return _Mapping(str(path[1]))
    if path[0] == "flight" and path[1] in ("pitch_kick_angle", "pitch_kick_speed"):
        return _Mapping(str(path[1]))
    if path[0] == "stage":
        k = int(path[1])
        stage = mission.vehicle.stages[k]
        name = str(path[-1])
        if len(path) == 3 and name in ("inert_mass", "separation_delay", "ignition_delay"):
            return _Mapping(name, k)
        if len(path) == 3 and name == "propellant_mass" and not stage.is_motor:
            return _Mapping(name, k)
        if len(path) == 4 and path[2] == "motor" and name in ("impulse_scale", "burn_time_scale"):
            return _Mapping(name, k)
        if len(path) == 4 and path[2] == "engine" and name in ("isp_vacuum", "thrust_vacuum"):
            return _Mapping(name, k)
    return None


class Sampler:
    """Builds batches of dispersed flights of one mission."""

    def __init__(self, mission: Mission) -> None:
        self.mission = mission
        self.dispersions = mission.dispersions
        self.refs = [fields.resolve(mission.document, d.field) for d in self.dispersions]
        nominal = []
        for ref in self.refs:
            nominal.append(_nominal(mission, ref))
        self.nominal = nominal
        self.stages = ascent.flown_stages(mission)
        self.mappings = [_fast_mapping(ref, mission) for ref in self.refs]
        self.base_dir = Path(mission.source).parent if mission.source != "<mission>" else None
        self.core = flight.build_core(mission, self.stages)
        self.document = mission.document
        if self.core.kick_chosen:
            # the pitch kick is chosen once, for the nominal vehicle, and flown by every
            # sample (a vehicle's pitch programme is loaded before the flight); a sample
            # rebuilt from its document keeps it rather than choosing its own
            kick = fields.resolve(self.document, "flight.pitch_kick_angle")
            self.document = fields.set_value(self.document, kick, float(self.core.kick_angle[0]))

    @property
    def all_fast(self) -> bool:
        """True when every dispersed field maps straight onto the core."""
        return all(mapping is not None for mapping in self.mappings)

    def batch(
        self, values: FloatArray
    ) -> tuple[flight.FlightCore, npt.NDArray[np.bool_], list[str]]:
        """A core of the valid samples, the validity mask, and why invalid ones are not."""
        count = values.shape[1]
        built = np.ones(count, dtype=bool)
        reasons = [""] * count
        slow = [d for d, mapping in enumerate(self.mappings) if mapping is None]
        if slow:
            cores = []
            for j in range(count):
                document = self.document
                for d in slow:
                    document = fields.set_value(document, self.refs[d], float(values[d, j]))
                try:
                    sample = parse_mission(
                        document, source=self.mission.source, base_dir=self.base_dir
                    )
                    one = flight.build_core(sample, self.stages)
                    one.kick_chosen = self.core.kick_chosen  # flown as the nominal's
                    cores.append(one)
                except PropulsionError as exc:
                    built[j] = False
                    names = ", ".join(self.dispersions[d].field for d in slow)
                    reasons[j] = f"{names}: {exc}"
            empty = self.core.take(np.zeros(0, dtype=np.int64))
            core = _concatenate(cores, self.core) if cores else empty
        else:
            core = self.core.take(np.zeros(count, dtype=np.int64))
        rows = np.flatnonzero(built)  # the samples that have a row in ``core``
        good = np.ones(rows.size, dtype=bool)
        for d, mapping in enumerate(self.mappings):
            if mapping is None:
                continue
            drawn = values[d, rows]
            # a drawn value is checked against the very range the file's value is checked
            # against (fields.RANGES), so a sample flies only if the file could hold it
            allowed = fields.range_of(self.refs[d])
            bad = (
                allowed.refuses(drawn)
                if allowed is not None
                else ~np.isfinite(drawn) | (np.abs(drawn) > MAX_MAGNITUDE)
            )
            if np.any(bad):
                reason = _outside(self.refs[d], allowed)
                for j in rows[bad & good]:
                    reasons[j] = f"{self.dispersions[d].field}: {reason}"
                good &= ~bad
            with np.errstate(all="ignore"):  # refused samples may hold absurd values
                problem = _apply(
                    core, mapping, np.where(bad, self.nominal[d], drawn), self.nominal[d]
                )
            if problem is not None:
                bad, reason = problem
                for j in rows[bad & good]:
                    reasons[j] = f"{self.dispersions[d].field}: {reason}"
                good &= ~bad
        valid = np.zeros(count, dtype=bool)
        valid[rows[good]] = True
        return core.take(np.flatnonzero(good)), valid, reasons


def _outside(ref: fields.FieldRef, allowed: fields.Range | None) -> str:
    """Why a drawn value is refused, in the words of the file's check."""
    if allowed is None:
        return "not a finite value of at most 1e15 in SI units"
    if ref.dimension == "angle":
        return f"outside the range a mission file allows ({allowed.describe('deg', 180 / math.pi)})"
    return f"outside the range a mission file allows ({allowed.describe(ref.si_unit)})"


def _apply(
    core: flight.FlightCore, mapping: _Mapping, values: FloatArray, nominal: float
) -> tuple[npt.NDArray[np.bool_], str] | None:
    """Write sampled values into the core; return (bad samples, reason) for impossible ones."""
    k = mapping.stage
    kind = mapping.kind
    if kind == "payload":
        core.mass_initial = core.mass_initial + (values - nominal)
        bad = values < 0
        return (bad, "negative payload mass") if np.any(bad) else None
    if kind == "drag_scale":
        core.cd_scale = values.copy()
        bad = values < 0
        return (bad, "negative drag scale") if np.any(bad) else None
    if kind == "elevation":
        core.elevation = values.copy()
        bad = (values <= 0) | (values > math.pi / 2)
        return (bad, "launch elevation outside 0..90 deg") if np.any(bad) else None
    if kind == "rail_length":
        core.rail_length = np.maximum(values, 0.0)
        bad = values < 0
        return (bad, "negative rail length") if np.any(bad) else None
    if kind == "wind_speed":
        core.wind_offset = values.copy()
        return None
    if kind == "wind_scale":
        core.wind_scale = values.copy()
        bad = values < 0
        return (bad, "negative wind scale") if np.any(bad) else None
    if kind == "wind_turn":
        core.wind_turn = values.copy()
        return None
    if kind == "site_altitude":
        core.site_altitude = values.copy()
        return None
    if kind == "pitch_kick_angle":
        core.kick_angle = values.copy()
        bad = values < 0
        return (bad, "negative pitch kick") if np.any(bad) else None
    if kind == "pitch_kick_speed":
        core.kick_speed = values.copy()
        return None
    if kind == "inert_mass":
        delta = values - nominal
        core.inert[k] = core.inert[k] + delta
        core.mass_initial = core.mass_initial + delta
        bad = values <= 0
        return (bad, "inert mass not above zero") if np.any(bad) else None
    if kind == "propellant_mass":
        delta = values - nominal
        fraction = core.usable[k] / core.propellant[k]
        core.propellant[k] = values.copy()
        core.usable[k] = values * fraction
        core.mass_initial = core.mass_initial + delta
        bad = values <= 0
        return (bad, "propellant mass not above zero") if np.any(bad) else None
    if kind in ("separation_delay", "ignition_delay"):
        getattr(core, kind)[k] = np.maximum(values, 0.0)
        bad = values < 0
        return (bad, "negative delay") if np.any(bad) else None
    if kind == "impulse_scale":
        core.impulse_scale[k] = values / nominal
        bad = values <= 0
        return (bad, "impulse scale not above zero") if np.any(bad) else None
    if kind == "burn_time_scale":
        core.time_scale[k] = values / nominal
        bad = values <= 0
        return (bad, "burn time scale not above zero") if np.any(bad) else None
    if kind == "isp_vacuum":
        core.mass_flow[k] = core.mass_flow[k] * (nominal / np.where(values > 0, values, 1.0))
        bad = values <= 0
        return (bad, "specific impulse not above zero") if np.any(bad) else None
    if kind == "thrust_vacuum":
        ratio = values / nominal
        core.thrust_vacuum[k] = core.thrust_vacuum[k] * ratio
        core.mass_flow[k] = core.mass_flow[k] * ratio
        bad = values <= 0
        return (bad, "thrust not above zero") if np.any(bad) else None
    raise ValueError(kind)


def _concatenate(cores: list[flight.FlightCore], nominal: flight.FlightCore) -> flight.FlightCore:
    """Join one-sample cores into one batch; their shared tables must be the nominal's."""
    for core in cores:
        if not core.shared_tables_equal(nominal):
            raise PropulsionError(
                "a dispersed field changes a thrust or drag curve, the wind profile or a "
                "setting shared by all samples; disperse the motor's impulse_scale or "
                "burn_time_scale, or the vehicle's drag_scale, instead"
            )
    return flight.FlightCore.concatenate(cores)
