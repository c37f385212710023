"""`propulsion scatter`: a dispersion (Monte Carlo) study of the mission's uncertainties."""

from __future__ import annotations

import io
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import typer

from propulsion.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    emit_json,
    guard,
    hide_progress,
    stderr,
    stdout,
)

if TYPE_CHECKING:
    from propulsion.studies.scatter import ChunkResult


def scatter_command(
    mission_file: Path = typer.Argument(
        ...,
        help="Mission file (TOML) with dispersion tables.",
        show_default=False,
        metavar="MISSION.toml",
    ),
    samples: int = typer.Option(1000, "-n", "--samples-count", min=1, help="Number of samples."),
    seed: int = typer.Option(1, "--seed", help="Seed: the same seed gives the same numbers."),
    workers: int | None = typer.Option(
        None, "--workers", min=1, help="Threads that fly the samples (default: one per core)."
    ),
    cluster: str | None = typer.Option(
        None,
        "--cluster",
        help="A dask.distributed scheduler, tcp://HOST:PORT or tls://HOST:PORT (or set "
        "PROPULSION_DASK_SCHEDULER). Trusted like code: its results are unpickled here.",
    ),
    samples_file: Path | None = typer.Option(
        None, "--samples", help="Write every sample's inputs and outputs to this CSV (streamed)."
    ),
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw histograms of apogee and margin (and where the apogees lie) to this "
        ".png or .svg file.",
    ),
    reserve: str | None = typer.Option(
        None,
        "--reserve",
        help="Find each flight's propulsion margin (about 15 more flights per sample) and "
        "report the margin this share of the flights still has, e.g. '99.7 %' (the "
        "three-sigma flight-performance reserve).",
    ),
    footprint: bool = typer.Option(
        False,
        "--footprint",
        help="Fly every sample on to the ground (no recovery device), and every dropped "
        "stage down too, and show where they come down: points, 1-sigma and 3-sigma "
        "ellipses, the farthest from the pad.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite output files that exist."),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Fly N sampled vehicles: percentiles, probability of meeting the target, drivers.

    Example: propulsion scatter missions/two_stage_competition.toml -n 10000 --seed 1

    Exit code 0 when the study ran, 2 on bad input (for example no [[dispersion]] tables
    or a distribution with impossible parameters).
    """
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    from propulsion.mission import load_mission
    from propulsion.report.files import StreamedCsv, all_or_nothing
    from propulsion.studies.scatter import METRICS, scatter

    with guard():  # the scheduler's address, checked before anything else
        from propulsion.studies.executors import scheduler_address

        scheduler = scheduler_address(cluster, "--cluster")
        if scheduler is not None and scheduler.warning:
            stderr().print(
                f"warning: {scheduler.warning}.", markup=False, highlight=False, soft_wrap=True
            )
    # the outputs are written together when every one of them is ready, or not at all
    with guard(), all_or_nothing(mission_file) as outputs:
        from propulsion.studies.scatter import check_study

        check_study(samples, seed, workers)
        mission = load_mission(mission_file)
        outputs.protect(mission)
        probability = _probability(reserve) if reserve is not None else None
        if plot is not None:
            from propulsion.report.plots import check_plot_path

            check_plot_path(plot, force)
        writer = None
        if samples_file is not None:
            header = ["sample", "valid"]
            header += [
                f"{d.field} [{_si(d.dimension)}]" if _si(d.dimension) else d.field
                for d in mission.dispersions
            ]
            header += [_metric_header(metric) for metric in METRICS]
            header += ["meets_target", "miss"]
            writer = StreamedCsv(samples_file, header, force)

        def stream(chunk: ChunkResult) -> None:
            if writer is not None:
                writer.add(chunk.start, chunk.stop, _rows(chunk))

        progress = Progress(
            TextColumn("Flying samples"),
            BarColumn(),
            TextColumn("{task.completed:,.0f}/{task.total:,.0f}"),
            TimeRemainingColumn(),
            console=stderr(),
            disable=hide_progress(json_output),
            transient=True,
        )
        try:
            with progress:
                task = progress.add_task("samples", total=samples)
                result = scatter(
                    mission,
                    samples,
                    seed=seed,
                    workers=workers,
                    cluster=cluster,
                    on_chunk=stream,
                    progress=lambda done, total: progress.update(task, completed=done),
                    reserve=probability,
                    footprint=footprint,
                )
        except BaseException:
            if writer is not None:
                writer.abandon()
            raise
        if writer is not None:
            writer.close()
        if plot is not None:
            from propulsion.report.plots import save_figure, scatter_figure

            save_figure(scatter_figure(result, units.display()), plot, force)
    if json_output:
        emit_json(result.to_dict())
        return
    from propulsion.report.tables import scatter_view

    stdout().print(scatter_view(result, units.display()))


def _probability(text: str) -> float:
    """--reserve as a probability strictly between 0 and 1 ("99.7 %" or "0.997")."""
    from propulsion.errors import RequestError
    from propulsion.units import UnitParseError, parse_quantity

    try:
        value = parse_quantity(text, "dimensionless")
    except UnitParseError as exc:
        raise RequestError(
            f"--reserve {text!r}: {exc.reason}; expected a share such as '99.7 %'"
        ) from None
    if not 0.0 < value < 1.0:
        raise RequestError(
            f"--reserve {text!r} is not a share of the flights; expected one between 0% and "
            "100%, such as '99.7 %'"
        )
    return value


def _si(dimension: str) -> str:
    from propulsion.units import DIMENSIONS

    unit = DIMENSIONS[dimension]
    return "" if unit == "dimensionless" else unit.replace("**", "^")


def _metric_header(metric: str) -> str:
    for suffix, unit in (
        ("_m_s", "m/s"),
        ("_pa", "Pa"),
        ("_m", "m"),
        ("_deg", "deg"),
        ("_kg", "kg"),
    ):
        if metric.endswith(suffix):
            return f"{metric[: -len(suffix)]} [{unit}]"
    return metric


def _rows(chunk: ChunkResult) -> str:
    buffer = io.StringIO()
    for j in range(chunk.stop - chunk.start):
        cells = [str(chunk.start + j), "1" if chunk.valid[j] else "0"]
        cells += [f"{value:.10g}" for value in chunk.inputs[:, j]]
        cells += ["" if not np.isfinite(v) else f"{v:.10g}" for v in chunk.outputs[:, j]]
        cells.append("1" if chunk.meets[j] else "0")
        cells.append(str(chunk.misses[j]) if chunk.misses.size else "")
        buffer.write(",".join(cells) + "\n")
    return buffer.getvalue()
