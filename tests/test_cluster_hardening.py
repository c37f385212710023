"""The Dask path of `scatter --cluster` under bad addresses and misbehaving peers.

Each case ends with exit code 2 and one clear message, within a bounded time: addresses
refused before any connection, a peer that accepts and stays silent, a peer that sends
bytes that are not Dask's, a web server, a scheduler without workers, a scheduler killed
in the middle of a study, and TLS through Dask's own configuration. The peers are small
servers started by the tests themselves. The timeouts are shortened for speed; the
defaults are measured in the report of the change.
"""

from __future__ import annotations

import contextlib
import http.server
import os
import pickle
import re
import select
import shutil
import signal
import socket
import struct
import subprocess
import sys
import threading
import time
import tracemalloc
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner, Result

from propulsion.cli import app
from propulsion.studies import executors
from propulsion.studies.executors import SCHEDULER_VARIABLE, ClusterError

MISSION = str(Path(__file__).resolve().parent.parent / "missions" / "two_stage_competition.toml")
runner = CliRunner()
# How long the tests let a connection or the wait for workers take [s]
SHORT = 1.0
# What a failing command may take beyond that (start-up, Dask's own handshake) [s]
SLACK = 4.0


def need_dask() -> None:
    """Skip without dask.distributed, except under CI=true, where it must be there."""
    if os.environ.get("CI") != "true":
        pytest.importorskip("dask.distributed", reason="dask.distributed is not installed")
    # imported before any dask.config.set, which would otherwise undo the defaults
    # dask.distributed adds to Dask's configuration when it is first imported
    import dask.distributed  # noqa: F401


@pytest.fixture(autouse=True)
def short_timeouts(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(SCHEDULER_VARIABLE, raising=False)
    monkeypatch.setattr(executors, "CONNECT_TIMEOUT", SHORT, raising=False)
    monkeypatch.setattr(executors, "WORKER_WAIT", SHORT, raising=False)


def invoke(
    args: list[str], limit: float, env: dict[str, str] | None = None
) -> tuple[Result, float]:
    """Run the command in this process; fail the test if it runs longer than ``limit`` s."""
    box: dict[str, Result] = {}

    def run() -> None:
        box["result"] = runner.invoke(app, args, env=env)

    thread = threading.Thread(target=run, daemon=True)
    started = time.perf_counter()
    thread.start()
    thread.join(limit)
    elapsed = time.perf_counter() - started
    if thread.is_alive():
        pytest.fail(f"the command still ran after {limit:g} s: it hangs")
    return box["result"], elapsed


def study(address: str, *more: str) -> list[str]:
    return ["scatter", MISSION, "-n", "40", "--json", "--cluster", address, *more]


def assert_refused(result: Result, *words: str) -> str:
    """Exit code 2, one `error:` paragraph naming ``words``, no traceback."""
    message = " ".join(result.stderr.split())
    assert result.exit_code == 2, (result.exit_code, result.stderr, result.exception)
    assert "error:" in message and "Traceback" not in result.stderr
    for word in words:
        assert word in message, (word, message)
    return message


class Peer:
    """A TCP server on 127.0.0.1 that counts connections and answers with ``greeting``.

    ``greeting`` None: accept and stay silent; ``once``: greet the first connection only.
    Connections are held open until the end.
    """

    def __init__(
        self,
        greeting: bytes | None = None,
        then: bytes = b"",
        close: bool = False,
        once: bool = False,
    ):
        self.greeting = greeting
        self.once = once
        self.then = then
        self.close_after = close
        self.accepted = 0
        self.listener = socket.create_server(("127.0.0.1", 0))
        self.port = self.listener.getsockname()[1]
        self.address = f"tcp://127.0.0.1:{self.port}"
        self.held: list[socket.socket] = []
        self.thread = threading.Thread(target=self.serve, daemon=True)
        self.thread.start()

    def serve(self) -> None:
        while True:
            try:
                connection, _ = self.listener.accept()
            except OSError:
                return
            self.accepted += 1
            self.held.append(connection)
            with contextlib.suppress(OSError):
                if self.greeting is not None and not (self.once and self.accepted > 1):
                    connection.sendall(self.greeting)
                if self.then:
                    connection.sendall(self.then)
                if self.close_after:
                    connection.close()

    def stop(self) -> None:
        self.listener.close()
        for connection in self.held:
            connection.close()


@contextlib.contextmanager
def peer(
    greeting: bytes | None = None, then: bytes = b"", close: bool = False, once: bool = False
) -> Iterator[Peer]:
    server = Peer(greeting, then, close, once)
    try:
        yield server
    finally:
        server.stop()


# --- addresses refused before any connection ------------------------------------------


@pytest.fixture
def no_connections(monkeypatch: pytest.MonkeyPatch) -> list[Any]:
    """Record every attempt to open a connection (there must be none)."""
    attempts: list[Any] = []
    original = socket.socket.connect

    def connect(self: socket.socket, address: Any) -> Any:
        attempts.append(address)
        return original(self, address)

    monkeypatch.setattr(socket.socket, "connect", connect)
    monkeypatch.setattr(socket.socket, "connect_ex", lambda self, address: attempts.append(0))
    return attempts


@pytest.mark.parametrize(
    ("address", "words"),
    [
        ("", ["--cluster ''", "is empty"]),
        (" ", ["--cluster ' '", "space"]),
        ("local", ["--cluster 'local'", "not an address"]),
        ("garbage", ["--cluster 'garbage'", "not an address"]),
        ("tcp://", ["--cluster 'tcp://'", "no host"]),
        ("tcp://:8786", ["no host"]),
        ("tcp://127.0.0.1", ["no port"]),
        ("http://host:8786", ["http://", "web address"]),
        ("inproc://x", ["inproc://", "inside one Python process"]),
        ("ucx://host:8786", ["ucx://", "not supported"]),
        ("tcp://127.0.0.1:8786\nrm -rf /", ["line break"]),
        ("tcp://127.0.0.1:99999", ["the port 99999 is not a valid port (1-65535)"]),
        ("tcp://127.0.0.1:0", ["the port 0 is not a valid port (1-65535)"]),
        ("tcp://127.0.0.1:port", ["the port 'port' is not a number"]),
        ("tcp://bad_host!:8786", ["the host 'bad_host!' is not a host name"]),
        ("tcp://127.0.0.1:8786/status", ["after the port"]),
    ],
)
def test_bad_addresses_are_refused_before_any_connection(
    address: str, words: list[str], no_connections: list[Any]
) -> None:
    # Before this change: ValueError or TypeError from dask (exit 3), or for port 99999
    # "timed out" after 10 s.
    result, elapsed = invoke(study(address), limit=10.0)
    message = assert_refused(result, *words, "Expected tcp://HOST:PORT")
    assert "timed out" not in message.lower()
    assert no_connections == [] and elapsed < SLACK


def test_a_bad_address_in_the_environment_names_the_variable(no_connections: list[Any]) -> None:
    result, _ = invoke(
        ["scatter", MISSION, "-n", "40", "--json"], limit=10.0, env={SCHEDULER_VARIABLE: " x"}
    )
    assert_refused(result, f"{SCHEDULER_VARIABLE}=' x'", "space")
    assert no_connections == []


def test_an_empty_variable_means_no_cluster() -> None:
    # the shell's way of unsetting a variable: the study runs in this process
    result, _ = invoke(
        ["scatter", MISSION, "-n", "40", "--json", "--workers", "1"],
        limit=60.0,
        env={SCHEDULER_VARIABLE: ""},
    )
    assert result.exit_code == 0, result.stderr
    assert '"this process"' in result.stdout


def test_tls_without_certificates_is_refused_before_connecting() -> None:
    need_dask()
    import dask

    with (
        peer() as server,
        dask.config.set(
            {
                "distributed.comm.tls.ca-file": None,
                "distributed.comm.tls.client.cert": None,
                "distributed.comm.tls.client.key": None,
            }
        ),
    ):
        address = f"tls://127.0.0.1:{server.port}"
        # before: TypeError "TLS expects a `ssl_context` argument" (exit 3)
        result, elapsed = invoke(study(address), limit=10.0)
        assert_refused(
            result,
            address,
            "certificate",
            "distributed.comm.tls.ca-file",
            "DASK_DISTRIBUTED__COMM__TLS__CLIENT__CERT",
        )
        assert server.accepted == 0 and elapsed < SLACK


def test_plain_tcp_when_dask_requires_encryption_is_refused() -> None:
    need_dask()
    import dask

    with peer() as server, dask.config.set({"distributed.comm.require-encryption": True}):
        result, elapsed = invoke(study(server.address), limit=10.0)
        assert_refused(result, "distributed.comm.require-encryption", "tls://")
        assert server.accepted == 0 and elapsed < SLACK


# --- peers that are not Dask schedulers ----------------------------------------------


def test_a_silent_peer_times_out() -> None:
    need_dask()
    with peer() as server:
        # before: no end (Dask waits for the handshake without a timeout)
        result, elapsed = invoke(study(server.address), limit=SHORT + 20.0)
        message = assert_refused(result, server.address, "not a Dask scheduler", "within 1 s")
        assert server.accepted >= 1
    assert elapsed < SHORT + SLACK
    # a loopback address needs no warning about plain tcp://
    assert "warning" not in message


@pytest.mark.parametrize(
    "greeting",
    [
        b"\xff" * 64,  # before: ValueError "Maximum allowed dimension exceeded"
        b"220 service ready\r\n",  # a line-based service greeting first
        struct.pack("Q", 40) + b"\x07" * 40,  # a plausible length, then not Dask's frames
        struct.pack("Q", 24) + struct.pack("QQ", 1, 8) + b"\xc1" * 8,  # frames, bad msgpack
    ],
    ids=["ones", "text", "length-then-junk", "frames-then-junk"],
)
def test_a_peer_that_sends_other_bytes_is_not_a_dask_scheduler(greeting: bytes) -> None:
    need_dask()
    with peer(greeting) as server:
        result, elapsed = invoke(study(server.address), limit=SHORT + 20.0)
    assert_refused(result, server.address, "not a Dask scheduler")
    assert "Maximum allowed dimension" not in result.stderr
    # the bytes give it away at once: no waiting for the timeout
    assert elapsed < SHORT


def dask_greeting() -> bytes:
    """What a Dask scheduler sends first: one frame, a msgpack map (as read from a real
    scheduler of dask.distributed 2026.8: compression, python, pickle-protocol)."""
    import msgpack

    frame = msgpack.packb({"compression": None, "python": (3, 11, 7), "pickle-protocol": 5})
    body = struct.pack("QQ", 1, len(frame)) + frame
    return struct.pack("Q", len(body)) + body


@pytest.mark.parametrize("once", [False, True], ids=["greets-each-time", "greets-once"])
def test_a_peer_that_greets_like_dask_then_falls_silent_times_out(once: bool) -> None:
    # greets-each-time: Dask's own request for the scheduler's identity times out;
    # greets-once: the probe takes the greeting, and Dask waits for the greeting of its
    # own connection without a timeout: the thread it runs on is abandoned after
    # CONNECT_TIMEOUT + 2 s. Before: both after 10 s, with the message "TimeoutError."
    need_dask()
    with peer(dask_greeting(), once=once) as server:
        result, elapsed = invoke(study(server.address), limit=SHORT + 20.0)
        assert server.accepted >= 2  # the probe, then Dask's own connection(s)
    assert_refused(result, server.address, "it greeted, but did not")
    assert elapsed < SHORT + 2.0 + SLACK


def test_a_web_server_is_not_a_dask_scheduler() -> None:
    need_dask()

    class Quiet(http.server.BaseHTTPRequestHandler):
        def log_message(self, format: str, *args: Any) -> None:
            pass

    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), Quiet)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        address = f"tcp://127.0.0.1:{server.server_address[1]}"
        # before: MemoryError "Unable to allocate 3.07 EiB" (exit 3)
        result, elapsed = invoke(study(address), limit=SHORT + 20.0)
    finally:
        server.shutdown()
        server.server_close()
    assert_refused(result, address, "not a Dask scheduler")
    assert "allocate" not in result.stderr and elapsed < SHORT + SLACK


def test_a_huge_announced_message_is_never_allocated() -> None:
    # A peer announces a 2 GiB message and sends 64 MiB of it, then hangs up. Before this
    # change Dask allocated the 2 GiB (2,048 MiB traced) and read what came. Now at most
    # the announced length of a greeting (64 KiB) is read. tracemalloc sees numpy's
    # allocations too. A first run loads what the command loads, so that the second
    # measures the connection alone.
    need_dask()
    with peer(struct.pack("Q", 2**31), then=b"\0" * 2**26, close=True) as server:
        invoke(study(server.address), limit=SHORT + 20.0)
        tracemalloc.start()
        try:
            result, _ = invoke(study(server.address), limit=SHORT + 20.0)
            _, peak = tracemalloc.get_traced_memory()
        finally:
            tracemalloc.stop()
    assert_refused(result, server.address, "not a Dask scheduler")
    assert peak < 8 * 2**20, f"{peak / 2**20:.0f} MiB allocated"


# --- real schedulers -----------------------------------------------------------------


@pytest.fixture
def empty_scheduler() -> Iterator[str]:
    """A scheduler in this process without any worker."""
    need_dask()
    from dask.distributed import LocalCluster

    cluster = LocalCluster(
        n_workers=0, processes=False, protocol="tcp", host="127.0.0.1", dashboard_address=None
    )
    try:
        yield cluster.scheduler_address
    finally:
        cluster.close()


def test_a_scheduler_without_workers_fails_after_a_bounded_wait(empty_scheduler: str) -> None:
    # before: no end (the chunks wait for a worker forever)
    result, elapsed = invoke(study(empty_scheduler), limit=SHORT + 30.0)
    assert_refused(
        result, empty_scheduler, "no workers joined the Dask scheduler within 1 s", "dask worker"
    )
    assert elapsed < SHORT + SLACK


def test_workers_that_all_leave_mid_study_end_it_after_a_bounded_wait(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    need_dask()
    from dask.distributed import LocalCluster

    from propulsion.studies import scatter

    cluster = LocalCluster(
        n_workers=1,
        threads_per_worker=1,
        processes=False,
        protocol="tcp",
        host="127.0.0.1",
        dashboard_address=None,
    )
    try:
        left: list[float] = []
        add = scatter.Aggregate.add

        def add_then_scale_down(self: Any, chunk: Any) -> None:
            add(self, chunk)
            if not left:
                left.append(time.perf_counter())
                cluster.scale(0)

        monkeypatch.setattr(scatter.Aggregate, "add", add_then_scale_down)
        args = ["scatter", MISSION, "-n", "5000", "--json", "--cluster", cluster.scheduler_address]
        # before: no end (the other chunks wait for a worker forever)
        result, _ = invoke(args, limit=SHORT + 30.0)
        ended = time.perf_counter()
    finally:
        cluster.close()
    message = assert_refused(result, "every worker left its scheduler after", "within 1 s")
    # the chunk running when the worker was told to leave may still arrive
    assert re.search(r"after [12] of 8 chunks", message), message
    assert left and ended - left[0] < SHORT + SLACK


SCHEDULER_SCRIPT = """
import os, sys, time
from dask.distributed import LocalCluster

parent = os.getppid()
cluster = LocalCluster(
    n_workers=1, threads_per_worker=1, processes=False, protocol="tcp",
    host="127.0.0.1", dashboard_address=None,
)
print(cluster.scheduler_address, flush=True)
while os.getppid() == parent:  # never outlive the test
    time.sleep(0.5)
"""


@contextlib.contextmanager
def scheduler_process() -> Iterator[tuple[subprocess.Popen[str], str]]:
    """A scheduler with one worker, in a process of its own, to be killed."""
    process = subprocess.Popen(
        [sys.executable, "-c", SCHEDULER_SCRIPT],
        stdout=subprocess.PIPE,
        stderr=subprocess.DEVNULL,
        text=True,
    )
    try:
        assert process.stdout is not None
        ready, _, _ = select.select([process.stdout], [], [], 30.0)
        assert ready, "the scheduler did not start within 30 s"
        address = process.stdout.readline().strip()
        assert address.startswith("tcp://"), address
        yield process, address
    finally:
        process.kill()
        process.wait(10)


def test_a_scheduler_killed_mid_study_says_how_far_the_study_got(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    need_dask()
    from propulsion.studies import scatter

    with scheduler_process() as (process, address):
        collected: list[float] = []
        add = scatter.Aggregate.add

        def add_then_kill(self: Any, chunk: Any) -> None:
            add(self, chunk)
            collected.append(time.perf_counter())
            if len(collected) == 3:
                os.kill(process.pid, signal.SIGKILL)

        monkeypatch.setattr(scatter.Aggregate, "add", add_then_kill)
        # 5,000 samples on a cluster: 8 chunks of 625, flown one after another by the
        # one worker thread, so the fourth is not done when the third arrives
        args = ["scatter", MISSION, "-n", "5000", "--json", "--cluster", address]
        # before: FutureCancelledError (exit 3)
        result, _ = invoke(args, limit=60.0)
        ended = time.perf_counter()
    assert len(collected) == 3, "the study did not reach its third chunk"
    assert_refused(result, address, "went away after 3 of 8 chunks", "1,875 of 5,000 samples")
    assert ended - collected[-1] < SHORT + SLACK


# --- trust: TLS and the warning about plain tcp:// -------------------------------------


def test_plain_tcp_to_another_machine_warns_in_one_line() -> None:
    # 192.0.2.1 is reserved for documentation (RFC 5737): nothing answers there
    result, elapsed = invoke(study("tcp://192.0.2.1:8786"), limit=SHORT + 20.0)
    warnings = [line for line in result.stderr.splitlines() if line.startswith("warning:")]
    assert len(warnings) == 1, result.stderr
    assert "tcp://192.0.2.1:8786" in warnings[0] and "trust" in warnings[0]
    assert "tls://" in warnings[0]
    assert_refused(result, "tcp://192.0.2.1:8786")
    assert elapsed < SHORT + SLACK


@pytest.mark.parametrize(
    ("address", "local"),
    [
        ("tcp://127.0.0.1:8786", True),
        ("tcp://127.8.9.10:8786", True),
        ("tcp://localhost:8786", True),
        ("tcp://[::1]:8786", True),
        ("localhost:8786", True),
        ("tcp://10.0.0.7:8786", False),
        ("tcp://[2001:db8::1]:8786", False),
        ("tcp://cluster.example.org:8786", False),
        ("tls://cluster.example.org:8786", False),
    ],
)
def test_only_plain_tcp_beyond_this_machine_warns(address: str, local: bool) -> None:
    scheduler = executors.scheduler_address(address, "--cluster")
    assert scheduler is not None
    assert scheduler.address.startswith(("tcp://", "tls://"))
    assert (scheduler.warning is None) == (local or address.startswith("tls://"))


def certificate(folder: Path, name: str) -> tuple[str, str]:
    """A self-signed certificate and its key (PEM files), made with the openssl command."""
    cert, key = folder / f"{name}.crt", folder / f"{name}.key"
    subprocess.run(
        [
            "openssl", "req", "-x509", "-newkey", "ec", "-pkeyopt",
            "ec_paramgen_curve:prime256v1", "-nodes", "-days", "2", "-subj",
            f"/CN={name}", "-keyout", str(key), "-out", str(cert),
        ],
        check=True,
        capture_output=True,
        timeout=30,
    )  # fmt: skip
    return str(cert), str(key)


@pytest.fixture
def tls_cluster(tmp_path: Path) -> Iterator[tuple[str, Path]]:
    """A scheduler and one worker in this process that speak TLS only."""
    need_dask()
    if shutil.which("openssl") is None:
        if os.environ.get("CI") == "true":
            pytest.fail("the openssl command is needed to make test certificates")
        pytest.skip("the openssl command is not installed (needed for test certificates)")
    from dask.distributed import LocalCluster, Security

    cert, key = certificate(tmp_path, "cluster")
    security = Security(
        tls_ca_file=cert,
        tls_scheduler_cert=cert,
        tls_scheduler_key=key,
        tls_worker_cert=cert,
        tls_worker_key=key,
        tls_client_cert=cert,
        tls_client_key=key,
        require_encryption=True,
    )
    cluster = LocalCluster(
        n_workers=1,
        threads_per_worker=1,
        processes=False,
        protocol="tls",
        host="127.0.0.1",
        security=security,
        dashboard_address=None,
    )
    try:
        yield cluster.scheduler_address, tmp_path
    finally:
        cluster.close()


def test_tls_through_dasks_configuration(tls_cluster: tuple[str, Path]) -> None:
    import dask

    address, folder = tls_cluster
    cert, key = str(folder / "cluster.crt"), str(folder / "cluster.key")
    settings = {
        "distributed.comm.tls.ca-file": cert,
        "distributed.comm.tls.client.cert": cert,
        "distributed.comm.tls.client.key": key,
    }
    with dask.config.set(settings):
        result, _ = invoke(study(address), limit=60.0)
    assert result.exit_code == 0, result.stderr
    assert f"the Dask cluster at {address}" in result.stdout
    assert "warning" not in result.stderr


def test_tls_with_a_certificate_from_another_authority_is_refused(
    tls_cluster: tuple[str, Path],
) -> None:
    import dask

    address, folder = tls_cluster
    cert, key = certificate(folder, "stranger")
    settings = {
        "distributed.comm.tls.ca-file": cert,
        "distributed.comm.tls.client.cert": cert,
        "distributed.comm.tls.client.key": key,
    }
    with dask.config.set(settings):
        result, elapsed = invoke(study(address), limit=SHORT + 20.0)
    assert_refused(result, address, "certificate", "distributed.comm.tls.ca-file")
    assert elapsed < SHORT + SLACK


def test_tls_to_a_plain_scheduler_is_refused(empty_scheduler: str, tmp_path: Path) -> None:
    import dask

    if shutil.which("openssl") is None:
        pytest.skip("the openssl command is not installed (needed for test certificates)")
    cert, key = certificate(tmp_path, "client")
    address = empty_scheduler.replace("tcp://", "tls://")
    settings = {
        "distributed.comm.tls.ca-file": cert,
        "distributed.comm.tls.client.cert": cert,
        "distributed.comm.tls.client.key": key,
    }
    with dask.config.set(settings):
        result, elapsed = invoke(study(address), limit=SHORT + 20.0)
    assert_refused(result, address, "TLS")
    assert elapsed < SHORT + SLACK


def test_the_cluster_errors_pickle() -> None:
    errors = [
        ClusterError("tcp://10.0.0.7:8786", "it went away"),
        executors.ClusterAddressError("--cluster", "x", "is not an address", "tcp://HOST:PORT"),
    ]
    for error in errors:
        again = pickle.loads(pickle.dumps(error))
        assert type(again) is type(error) and str(again) == str(error)
