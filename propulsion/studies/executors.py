"""Where the chunks of a study run: this process, or a Dask cluster.

No scheduling of our own: a chunk is a pure function call (:func:`run_chunk`). In this
process the chunks run one after the other, and each one flies its samples on threads
(the compiled kernel releases the interpreter lock; :func:`propulsion.flight.simulate`).
On a cluster, dask.distributed shares the chunks out, one thread each, and reruns the
chunks of a worker that dies. Results are merged in arrival order; the merge does not
depend on it.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from typing import Any

from propulsion.errors import PropulsionError
from propulsion.studies.scatter import ChunkResult, StudySpec, run_chunk

__all__ = ["SCHEDULER_VARIABLE", "ClusterError", "run_chunks"]

SCHEDULER_VARIABLE = "PROPULSION_DASK_SCHEDULER"


class ClusterError(PropulsionError, ConnectionError):
    """A Dask scheduler that cannot be reached (or dask.distributed is not installed)."""

    def __init__(self, address: str, reason: str) -> None:
        self.address = address
        self.reason = reason
        super().__init__(address, reason)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.address, self.reason))

    def __str__(self) -> str:
        return f"cannot use the Dask cluster at {self.address}: {self.reason}."


def _chunks(samples: int, size: int) -> list[tuple[int, int]]:
    return [(start, min(start + size, samples)) for start in range(0, samples, size)]


def run_chunks(
    spec: StudySpec,
    samples: int,
    chunk_size: int,
    collect: Callable[[ChunkResult], None],
    workers: int | None = None,
    cluster: str | Any | None = None,
) -> tuple[int, str]:
    """Run every chunk of a study and hand each result to ``collect``.

    ``workers`` is the number of threads that fly each chunk in this process (None:
    one per core). Returns the number of chunks and a short description of where they ran.
    """
    from dataclasses import replace

    from propulsion.flight.batch import available_threads

    pieces = _chunks(samples, max(1, chunk_size))
    address = cluster if cluster is not None else os.environ.get(SCHEDULER_VARIABLE) or None
    if address is not None:
        return len(pieces), _on_cluster(replace(spec, threads=1), pieces, collect, address)
    threads = workers if workers is not None else available_threads()
    local = replace(spec, threads=threads)
    for start, stop in pieces:
        collect(run_chunk(local, start, stop))
    where = "this process" if threads == 1 else f"this process, {threads} threads"
    return len(pieces), where


def _on_cluster(
    spec: StudySpec,
    pieces: list[tuple[int, int]],
    collect: Callable[[ChunkResult], None],
    cluster: str | Any,
) -> str:
    try:
        from dask.distributed import Client, as_completed
    except ImportError as exc:
        raise ClusterError(str(cluster), "dask.distributed is not installed") from exc
    own = isinstance(cluster, str)
    client: Any
    try:
        client = Client(cluster, timeout="10s") if own else cluster
    except OSError as exc:
        raise ClusterError(str(cluster), str(exc) or type(exc).__name__) from exc
    try:
        starts = [start for start, _ in pieces]
        stops = [stop for _, stop in pieces]
        futures = client.map(run_chunk, [spec] * len(pieces), starts, stops, pure=False, retries=3)
        for future in as_completed(futures):
            collect(future.result())
        workers = len(client.scheduler_info().get("workers", {}))
        address = getattr(client.scheduler, "address", str(cluster))
        return f"the Dask cluster at {address} ({workers} workers)"
    finally:
        if own:
            client.close()
