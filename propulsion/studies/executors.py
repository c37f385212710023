"""Where the chunks of a study run: this process, or a Dask cluster.

No scheduling of our own: a chunk is a pure function call (:func:`run_chunk`). In this
process the chunks run one after the other, and each one flies its samples on threads
(the compiled kernel releases the interpreter lock; :func:`propulsion.flight.simulate`).
On a cluster, dask.distributed shares the chunks out, one thread each, and reruns the
chunks of a worker that dies. Results are merged in arrival order; the merge does not
depend on it.

A cluster is trusted like code: the chunk results it sends back are unpickled here, and
unpickling can run code. The address is checked before any connection
(:func:`scheduler_address`); TLS comes from Dask's own configuration (the
``distributed.comm.tls.*`` settings, read by ``distributed.Security``); before Dask
connects, a probe of our own reads the scheduler's greeting, at most
``_GREETING_LIMIT`` bytes within ``CONNECT_TIMEOUT`` seconds, so that a peer that is not
a Dask scheduler is named as such instead of making Dask allocate whatever length its
first bytes announce. Every wait is bounded: the connection and handshake
(``CONNECT_TIMEOUT``), workers to join (``WORKER_WAIT``), and a scheduler that goes away
in the middle of a study ends it with how far it got.
"""

from __future__ import annotations

import contextlib
import ipaddress
import os
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from propulsion.errors import PropulsionError, RequestError
from propulsion.studies.scatter import ChunkResult, StudySpec, run_chunk

if TYPE_CHECKING:
    import socket
    import ssl

__all__ = [
    "CONNECT_TIMEOUT",
    "SCHEDULER_VARIABLE",
    "WORKER_WAIT",
    "ClusterAddressError",
    "ClusterError",
    "Scheduler",
    "run_chunks",
    "scheduler_address",
]

SCHEDULER_VARIABLE = "PROPULSION_DASK_SCHEDULER"
CONNECT_TIMEOUT = 10.0
"""Time a scheduler has to accept the connection and greet (our probe), and again for
Dask's own connection, its handshake and first request (given up after this + 2 s) [s].
The name lookup of a host is the system resolver's and has its own timeouts."""
WORKER_WAIT = 20.0
"""Time to wait for a first worker, or for one to come back when all have left [s]."""
_GREETING_LIMIT = 65536
"""The longest greeting read from a scheduler [bytes]; dask.distributed 2026.8 sends 66
(measured: an 8-byte length, then 58 bytes of frames)."""
_POLL = 1.0
"""Time between looks at the scheduler's health while a chunk is awaited [s]."""
_SCHEMES = ("tcp", "tls")
_EXPECTED = "tcp://HOST:PORT or tls://HOST:PORT (a Dask scheduler listens on port 8786 by default)"
_HOST_NAME = re.compile(
    r"[A-Za-z0-9]([A-Za-z0-9-]*[A-Za-z0-9])?(\.[A-Za-z0-9]([A-Za-z0-9-]*[A-Za-z0-9])?)*"
)
_TLS_SETTINGS = (
    "distributed.comm.tls.ca-file (the cluster's certificate authority), "
    "distributed.comm.tls.client.cert and distributed.comm.tls.client.key (this client's "
    "certificate and key), in a Dask configuration file or the environment variables "
    "DASK_DISTRIBUTED__COMM__TLS__CA_FILE, DASK_DISTRIBUTED__COMM__TLS__CLIENT__CERT and "
    "DASK_DISTRIBUTED__COMM__TLS__CLIENT__KEY"
)


class ClusterError(PropulsionError, ConnectionError):
    """A Dask cluster that cannot be used: unreachable, not a Dask scheduler, without
    workers, gone in the middle of a study (or dask.distributed is not installed)."""

    def __init__(self, address: str, reason: str) -> None:
        self.address = address
        self.reason = reason
        super().__init__(address, reason)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.address, self.reason))

    def __str__(self) -> str:
        return f"cannot use the Dask cluster at {self.address}: {self.reason}."


class ClusterAddressError(RequestError):
    """A scheduler address that is not one, refused before any connection.

    Parameters
    ----------
    origin : str
        Where the address came from: ``--cluster``, ``PROPULSION_DASK_SCHEDULER`` or
        ``cluster`` (the argument of :func:`propulsion.studies.scatter.scatter`).
    address : str
        The text as given.
    problem, expected : str
        What is wrong, and what would have been accepted.
    """

    def __init__(self, origin: str, address: str, problem: str, expected: str = _EXPECTED):
        self.origin = origin
        self.address = address
        super().__init__(problem, expected)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.origin, self.address, self.problem, self.expected))

    def __str__(self) -> str:
        where = (
            f"{self.origin} {self.address!r}"
            if self.origin.startswith("-")
            else f"{self.origin}={self.address!r}"
        )
        return f"{where}: {super().__str__()}"


@dataclass(frozen=True)
class Scheduler:
    """A checked scheduler address: ``scheme://host:port``."""

    scheme: str
    host: str
    port: int

    @property
    def address(self) -> str:
        """The address as Dask takes it (an IPv6 host in brackets)."""
        host = f"[{self.host}]" if ":" in self.host else self.host
        return f"{self.scheme}://{host}:{self.port}"

    @property
    def local(self) -> bool:
        """Whether the host is this machine by name: ``localhost`` or a loopback address."""
        if self.host.lower() == "localhost" or self.host.lower().endswith(".localhost"):
            return True
        try:
            return ipaddress.ip_address(self.host).is_loopback
        except ValueError:
            return False

    @property
    def warning(self) -> str | None:
        """One line for the user when plain tcp:// leaves this machine, else None."""
        if self.scheme != "tcp" or self.local:
            return None
        return (
            f"{self.address} is reached over plain tcp://, neither encrypted nor "
            "authenticated, and the results it sends are unpickled here: trust it like "
            "code, or use tls:// with Dask's certificate settings"
        )


def scheduler_address(cluster: str | None, origin: str = "cluster") -> Scheduler | None:
    """The scheduler to use: ``cluster`` if given, else ``PROPULSION_DASK_SCHEDULER``.

    An unset or empty variable means no cluster. Raises :class:`ClusterAddressError` for
    text that is not ``tcp://HOST:PORT`` or ``tls://HOST:PORT`` (``HOST:PORT`` alone is
    taken as tcp://, as Dask does), before any connection. ``origin`` names the option the
    text came from in the messages.
    """
    if cluster is not None:
        return _parse(cluster, origin)
    text = os.environ.get(SCHEDULER_VARIABLE)
    return _parse(text, SCHEDULER_VARIABLE) if text else None


def _parse(text: str, origin: str) -> Scheduler:
    def refuse(problem: str) -> ClusterAddressError:
        return ClusterAddressError(origin, text, problem)

    if not text:
        raise refuse("the address is empty")
    if "\n" in text or "\r" in text:
        raise refuse("the address contains a line break")
    if any(character.isspace() for character in text):
        raise refuse("the address contains a space")
    if not text.isprintable():
        raise refuse("the address contains a control character")
    scheme, separator, rest = text.partition("://")
    if not separator:
        if ":" not in text:
            raise refuse("this is not an address")
        scheme, rest = "tcp", text
    scheme = scheme.lower()
    if scheme in ("http", "https"):
        raise refuse(
            f"{scheme}:// is a web address (the scheduler's dashboard?), not the scheduler's own"
        )
    if scheme == "inproc":
        raise refuse("inproc:// addresses exist only inside one Python process")
    if scheme not in _SCHEMES:
        raise refuse(f"the scheme {scheme}:// is not supported here")
    if not rest:
        raise refuse("the address has no host and no port")
    if rest.startswith("["):
        host, bracket, after = rest[1:].partition("]")
        if not bracket:
            raise refuse("the IPv6 host has no closing ']'")
        port_text = after[1:] if after.startswith(":") else None
    else:
        head, colon, tail = rest.rpartition(":")
        host, port_text = (head, tail) if colon else (rest, None)
    if "/" in (port_text or "") or "/" in host:
        raise refuse("the address has something after the port")
    if not host:
        raise refuse("the address has no host")
    if port_text is None or port_text == "":
        raise refuse("the address has no port")
    if not _is_host(host, bracketed=rest.startswith("[")):
        raise refuse(f"the host {host!r} is not a host name, IPv4 or [IPv6] address")
    if not port_text.isdigit():
        raise refuse(f"the port {port_text!r} is not a number")
    port = int(port_text)
    if not 1 <= port <= 65535:
        raise refuse(f"the port {port} is not a valid port (1-65535)")
    return Scheduler(scheme, host, port)


def _is_host(host: str, bracketed: bool) -> bool:
    if bracketed:
        try:
            ipaddress.IPv6Address(host)
        except ValueError:
            return False
        return True
    return len(host) <= 253 and _HOST_NAME.fullmatch(host) is not None


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
    one per core). ``cluster`` is a scheduler address (checked by
    :func:`scheduler_address`; None: ``PROPULSION_DASK_SCHEDULER``, if set) or a
    ``dask.distributed.Client``; it is trusted like code, since the results it sends are
    unpickled here. Returns the number of chunks and a short description of where they
    ran. Raises :class:`ClusterAddressError` or :class:`ClusterError` when the cluster
    cannot be used, within ``CONNECT_TIMEOUT`` + ``WORKER_WAIT`` seconds, or when it goes
    away during the study.
    """
    from dataclasses import replace

    from propulsion.flight.batch import available_threads

    pieces = _chunks(samples, max(1, chunk_size))
    target: Scheduler | Any | None = cluster
    if cluster is None or isinstance(cluster, str):
        target = scheduler_address(cluster)
    if target is not None:
        return len(pieces), _on_cluster(replace(spec, threads=1), pieces, collect, target)
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
    cluster: Scheduler | Any,
) -> str:
    own = isinstance(cluster, Scheduler)
    name = (
        cluster.address
        if isinstance(cluster, Scheduler)
        else str(getattr(cluster.scheduler, "address", cluster))
    )
    try:
        import dask.distributed  # noqa: F401
    except ImportError as exc:
        raise ClusterError(name, "dask.distributed is not installed") from exc
    with _quiet_dask():
        client: Any = _connect(cluster) if isinstance(cluster, Scheduler) else cluster
        try:
            return _run(client, name, spec, pieces, collect)
        finally:
            if own:
                with contextlib.suppress(Exception):
                    client.close(timeout=CONNECT_TIMEOUT)


@contextlib.contextmanager
def _quiet_dask() -> Iterator[None]:
    """Hold back dask.distributed's own log lines (tracebacks of a lost connection, for
    example): the study's error says what happened, in one paragraph."""
    import logging

    names = [
        name
        for name in list(logging.root.manager.loggerDict)
        if name == "distributed" or name.startswith("distributed.")
    ]
    loggers = [logging.getLogger(name) for name in names]
    levels = [logger.level for logger in loggers]
    for logger in loggers:
        logger.setLevel(logging.CRITICAL + 1)
    try:
        yield
    finally:
        for logger, level in zip(loggers, levels, strict=True):
            logger.setLevel(level)


def _security(scheduler: Scheduler) -> tuple[Any, ssl.SSLContext | None]:
    """Dask's security settings (``distributed.Security`` from Dask's configuration) and,
    for tls://, the TLS context this client connects with."""
    from distributed import Security

    address = scheduler.address
    try:
        security = Security()
    except Exception as exc:
        raise ClusterError(address, f"Dask's security settings cannot be used: {exc}") from None
    if scheduler.scheme == "tcp":
        if security.require_encryption:
            raise ClusterError(
                address,
                "Dask's configuration requires encryption "
                "(distributed.comm.require-encryption), and tcp:// is not encrypted; "
                "expected tls://HOST:PORT",
            )
        return security, None
    try:
        context = security.get_connection_args("client")["ssl_context"]
    except Exception as exc:
        raise ClusterError(
            address, f"Dask's TLS settings cannot be used ({exc}); expected {_TLS_SETTINGS}"
        ) from None
    if context is None:
        raise ClusterError(
            address,
            "tls:// needs certificates, and Dask's configuration names no certificate "
            f"authority or no client certificate; expected {_TLS_SETTINGS}",
        )
    return security, context


def _connect(scheduler: Scheduler) -> Any:
    """A Client of the scheduler, after :func:`_greet`; all within bounded time."""
    import threading

    from dask.distributed import Client

    address = scheduler.address
    security, context = _security(scheduler)
    _greet(scheduler, context, CONNECT_TIMEOUT)
    # Dask's own handshake waits for the scheduler's answer without a timeout: it runs
    # on a thread of its own, abandoned (and its client closed) if it takes too long
    lock = threading.Lock()
    box: dict[str, Any] = {}

    def connect() -> None:
        try:
            made = Client(address, timeout=CONNECT_TIMEOUT, security=security, set_as_default=False)
        except BaseException as exc:
            with lock:
                box["error"] = exc
            return
        with lock:
            late = "abandoned" in box
            box["client"] = made
        if late:
            made.close()

    thread = threading.Thread(target=connect, name="propulsion-dask-connect", daemon=True)
    limit = CONNECT_TIMEOUT + 2.0  # Dask's own timeouts, when it has them, come first
    thread.start()
    thread.join(limit)
    with lock:
        if "client" in box:
            return box["client"]
        error = box.get("error")
        if error is None:
            box["abandoned"] = True
    if error is None:
        raise ClusterError(
            address, f"it greeted, but did not finish Dask's handshake within {limit:g} s"
        )
    if isinstance(error, TimeoutError):
        raise ClusterError(
            address,
            f"it greeted, but did not answer Dask's first request within {CONNECT_TIMEOUT:g} s",
        ) from None
    if isinstance(error, OSError):
        raise ClusterError(address, f"Dask could not connect: {error}") from None
    if isinstance(error, Exception):
        raise ClusterError(
            address, f"Dask's handshake failed ({type(error).__name__}: {error})"
        ) from None
    raise error


def _greet(scheduler: Scheduler, context: ssl.SSLContext | None, timeout: float) -> None:
    """Connect and read the scheduler's greeting, the first thing a Dask scheduler sends.

    Reads at most 8 + ``_GREETING_LIMIT`` bytes within ``timeout`` seconds; raises
    :class:`ClusterError` when nothing answers, or when what answers is not Dask.
    """
    import socket
    import ssl
    import struct
    import time

    address, host, port = scheduler.address, scheduler.host, scheduler.port
    deadline = time.monotonic() + timeout
    try:
        connection = socket.create_connection((host, port), timeout=timeout)
    except socket.gaierror as exc:
        raise ClusterError(address, f"the host name {host} is not known ({exc.strerror})") from None
    except ConnectionRefusedError:
        raise ClusterError(
            address, f"nothing listens on port {port} of {host} (is the scheduler running?)"
        ) from None
    except TimeoutError:
        raise ClusterError(
            address,
            f"no answer to the connection within {timeout:g} s (a host that is down, or a "
            "firewall?)",
        ) from None
    except OSError as exc:
        raise ClusterError(address, f"the connection failed: {exc.strerror or exc}") from None
    tls = "" if context is None else " over TLS"
    try:
        if context is not None:
            try:
                connection.settimeout(max(deadline - time.monotonic(), 0.001))
                connection = context.wrap_socket(connection)
            except ssl.SSLCertVerificationError as exc:
                raise ClusterError(
                    address,
                    "the scheduler's certificate is not signed by the authority in "
                    f"distributed.comm.tls.ca-file ({exc.verify_message})",
                ) from None
            except (ssl.SSLError, OSError) as exc:
                raise ClusterError(
                    address,
                    f"the TLS handshake failed ({_why(exc)}): is it a plain tcp:// "
                    "scheduler, or one that refuses this client's certificate?",
                ) from None
        head = body = b""
        try:
            head = _receive(connection, 8, deadline)
            (length,) = struct.unpack("Q", head) if len(head) == 8 else (0,)
            if 16 <= length <= _GREETING_LIMIT:  # never more, whatever the peer announces
                body = _receive(connection, length, deadline)
        except TimeoutError:
            if head:
                raise ClusterError(address, _stranger(head, tls)) from None
            raise ClusterError(
                address,
                f"it accepted the connection but sent nothing{tls} within {timeout:g} s, and "
                "a Dask scheduler greets at once: it is not a Dask scheduler (a web "
                "server?), or one that expects tls://, or one too busy to answer",
            ) from None
        except OSError as exc:  # ssl.SSLError too
            raise ClusterError(
                address,
                f"the connection broke{tls} before a greeting ({_why(exc)})"
                + (": does the scheduler refuse this client's certificate?" if tls else ""),
            ) from None
        if not head:
            raise ClusterError(
                address,
                f"it closed the connection{tls} without a greeting: it is not a Dask scheduler"
                + (", or it refuses this client's certificate" if tls else ""),
            )
        if not _is_greeting(body, length):
            raise ClusterError(address, _stranger(head + body, tls))
    finally:
        connection.close()


def _receive(connection: socket.socket, count: int, deadline: float) -> bytes:
    """Up to ``count`` bytes, fewer when the peer hangs up; TimeoutError at ``deadline``."""
    import time

    data = bytearray()
    while len(data) < count:
        left = deadline - time.monotonic()
        if left <= 0:
            raise TimeoutError
        connection.settimeout(left)
        piece = connection.recv(min(count - len(data), 65536))
        if not piece:
            break
        data += piece
    return bytes(data)


def _is_greeting(body: bytes, length: int) -> bool:
    """Whether ``body`` is Dask's framing of one small msgpack map: the frame count, each
    frame's length, the frames (``distributed.comm.tcp``, ``distributed.protocol``)."""
    import struct

    if length < 16 or len(body) != length:
        return False
    (frames,) = struct.unpack_from("Q", body)
    if not 1 <= frames <= 16 or length < 8 * (1 + frames):
        return False
    sizes = struct.unpack_from(f"{frames}Q", body, 8)
    start = 8 * (1 + frames)
    if start + sum(sizes) != length:
        return False
    try:
        import msgpack

        info = msgpack.unpackb(body[start : start + sizes[0]], raw=False, use_list=False)
    except Exception:
        return False
    return isinstance(info, dict)


def _stranger(data: bytes, tls: str) -> str:
    shown = repr(data[:24]) + ("..." if len(data) > 24 else "")
    return (
        f"it is not a Dask scheduler: it sent{tls} {shown}, which is not the greeting "
        "a Dask scheduler sends"
    )


def _why(exc: BaseException) -> str:
    return str(getattr(exc, "reason", None) or getattr(exc, "strerror", None) or exc)


def _run(
    client: Any,
    address: str,
    spec: StudySpec,
    pieces: list[tuple[int, int]],
    collect: Callable[[ChunkResult], None],
) -> str:
    """Wait for a worker, submit the chunks, collect them as they arrive."""
    import queue
    import time
    from concurrent.futures import CancelledError

    samples = pieces[-1][1] if pieces else 0
    done = 0
    flown = 0

    def gone(what: str = "its scheduler went away {progress}") -> ClusterError:
        progress = f"after {done} of {len(pieces)} chunks ({flown:,} of {samples:,} samples)"
        return ClusterError(address, what.format(progress=progress) + "; the study stopped there")

    try:
        client.wait_for_workers(1, timeout=WORKER_WAIT)
    except TimeoutError:
        raise ClusterError(
            address,
            f"no workers joined the Dask scheduler within {WORKER_WAIT:g} s (start some "
            f"with: dask worker {address})",
        ) from None
    except (OSError, CancelledError):
        raise gone() from None
    except Exception as exc:  # it only speaks to the scheduler: not an error of ours
        raise ClusterError(
            address, f"waiting for workers failed ({type(exc).__name__}: {exc})"
        ) from None
    starts = [start for start, _ in pieces]
    stops = [stop for _, stop in pieces]
    futures = client.map(run_chunk, [spec] * len(pieces), starts, stops, pure=False, retries=3)
    lost_since: float | None = None
    alone_since: float | None = None

    def health() -> None:
        nonlocal lost_since, alone_since
        now = time.monotonic()
        if client.status in ("closing", "closed"):
            raise gone()
        try:
            if client.status != "running":
                raise ConnectionError
            workers = len(client.scheduler_info().get("workers", {}))
        except Exception:
            lost_since = lost_since or now
            if now - lost_since > CONNECT_TIMEOUT:
                raise gone(
                    f"its scheduler stopped answering for {CONNECT_TIMEOUT:g} s {{progress}}"
                ) from None
            return
        lost_since = None
        alone_since = None if workers else alone_since or now
        if alone_since is not None and now - alone_since > WORKER_WAIT:
            raise gone(
                "every worker left its scheduler {progress}, and none came back within "
                f"{WORKER_WAIT:g} s"
            )

    arrived: queue.Queue[Any] = queue.Queue()
    for future in futures:
        future.add_done_callback(arrived.put)  # also when it is cancelled or fails
    position = {future.key: index for index, future in enumerate(futures)}
    for _ in futures:
        while True:
            try:
                future = arrived.get(timeout=_POLL)
                break
            except queue.Empty:
                health()
        while True:  # a finished chunk's result still has to come from its worker
            if future.status == "error":
                _reraise(future, address, pieces[position[future.key]])
            try:
                result = future.result(timeout=_POLL)
            except TimeoutError:
                if future.status != "error":
                    health()
                continue
            except (CancelledError, OSError):
                if future.status == "error":
                    continue
                raise gone() from None
            break
        collect(result)
        done += 1
        flown += result.stop - result.start
    try:
        workers = len(client.scheduler_info().get("workers", {}))
    except Exception:
        return f"the Dask cluster at {address}"
    return f"the Dask cluster at {address} ({workers} workers)"


def _reraise(future: Any, address: str, piece: tuple[int, int]) -> None:
    """Raise the error of a chunk as it came from the worker (a PropulsionError pickles
    unchanged), or as a :class:`ClusterError` when the chunk killed the workers it ran on."""
    from dask.distributed import KilledWorker

    try:
        future.result()
    except KilledWorker:
        raise ClusterError(
            address,
            f"the chunk of samples {piece[0]} to {piece[1] - 1} stopped every worker that "
            "ran it (they died, or ran out of memory)",
        ) from None
