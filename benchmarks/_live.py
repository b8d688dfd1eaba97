"""Shared by the load benchmarks: a server of our own on a free loopback port (SQLite file with the demo loaded, or
a given PostgreSQL URL), and a small asyncio HTTP/1.1 keep-alive load generator (loopback only, bounded in time)."""

from __future__ import annotations

import asyncio
import os
import re
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from collections import Counter
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import httpx2 as httpx

ROOT = Path(__file__).resolve().parents[1]
SECRET = "benchmark-secret-0123456789abcdef"


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _stop_cleanly(*_: object) -> None:
    raise SystemExit(1)  # runs the finally blocks below, so our server is stopped too


@contextmanager
def served(database_url: str | None = None, *, demo: bool = True, workers: int = 1,
           env: dict[str, str] | None = None) -> Iterator[tuple[str, int, str]]:
    """(base URL, server pid, database URL) of a server that runs until the block ends (stopped by its pid)."""
    signal.signal(signal.SIGTERM, _stop_cleanly)
    folder = Path(tempfile.mkdtemp(prefix="liftmatch-bench-"))
    url = database_url or f"sqlite:///{folder / 'bench.db'}"
    environment = {**os.environ, "LIFTMATCH_DATABASE_URL": url, "LIFTMATCH_SECRET_KEY": SECRET, **(env or {})}
    cli = [sys.executable, "-m", "server.cli"]
    subprocess.run([*cli, "migrate"], env=environment, check=True, capture_output=True, cwd=ROOT)
    if demo:
        subprocess.run([*cli, "load-demo", "--with-demo-logins"], env=environment, check=True, capture_output=True,
                       cwd=ROOT)
    port = free_port()
    log = open(folder / "server.log", "w")  # noqa: SIM115 (closed below)
    proc = subprocess.Popen([sys.executable, "-m", "uvicorn", "server.main:create_app", "--factory", "--host",
                             "127.0.0.1", "--port", str(port), "--workers", str(workers), "--log-level", "warning",
                             "--no-access-log"], env=environment, stdout=log, stderr=subprocess.STDOUT, cwd=ROOT)
    base = f"http://127.0.0.1:{port}"
    try:
        wait_until_serving(proc, base, folder / "server.log")
        yield base, proc.pid, url
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            proc.kill()
        log.close()


def wait_until_serving(proc: subprocess.Popen[bytes], base: str, log_path: Path, timeout_s: float = 120) -> None:
    """Poll ``base``/healthz until the server answers; raise with its log if it exits or takes too long."""
    deadline = time.monotonic() + timeout_s  # a loaded 2-core machine can take a while to import numpy and scipy
    while True:
        if proc.poll() is not None:
            raise RuntimeError(f"server exited: {log_path.read_text()}")
        try:
            if httpx.get(f"{base}/healthz", timeout=1).status_code == 200:
                return
        except httpx.HTTPError:
            pass
        if time.monotonic() > deadline:
            proc.kill()
            raise RuntimeError(f"server did not start within {timeout_s:g} s")
        time.sleep(0.1)


def api_key(database_url: str, team: str = "Northfold Survey", scope: str = "read") -> str:
    environment = {**os.environ, "LIFTMATCH_DATABASE_URL": database_url, "LIFTMATCH_SECRET_KEY": SECRET}
    done = subprocess.run([sys.executable, "-m", "server.cli", "create-api-key", "--team", team, "--scope", scope],
                          env=environment, check=True, capture_output=True, text=True, cwd=ROOT)
    return done.stdout.strip()


def check_loopback(base: str) -> None:
    if not re.match(r"^http://(127\.0\.0\.1|localhost)(:\d+)?$", base):
        raise SystemExit("benchmarks only talk to a server on this machine (127.0.0.1 or localhost)")


@dataclass
class LoadResult:
    path: str
    clients: int
    seconds: float
    latencies_ms: list[float] = field(default_factory=list)
    statuses: Counter[int] = field(default_factory=Counter)
    errors: int = 0  # connection errors and 5xx

    @property
    def rate(self) -> float:
        return len(self.latencies_ms) / self.seconds

    def quantile(self, q: float) -> float:
        ordered = sorted(self.latencies_ms)
        return ordered[min(len(ordered) - 1, int(q * len(ordered)))] if ordered else float("nan")

    def line(self) -> str:
        return (f"{self.path}: {self.clients} clients, {self.seconds:.0f} s: {self.rate:.0f} req/s, "
                f"p50 {statistics.median(self.latencies_ms) if self.latencies_ms else float('nan'):.1f} ms, "
                f"p99 {self.quantile(0.99):.1f} ms, errors {self.errors}, statuses {dict(self.statuses)}")


async def _client(host: str, port: int, request: bytes, until: float, result: LoadResult) -> None:
    reader, writer = await asyncio.open_connection(host, port)
    try:
        while time.monotonic() < until:
            started = time.perf_counter()
            writer.write(request)
            head = await reader.readuntil(b"\r\n\r\n")
            status = int(head.split(b" ", 2)[1])
            length = re.search(rb"(?i)content-length: *(\d+)", head)
            if length:
                await reader.readexactly(int(length.group(1)))
            else:  # chunked: read to the terminating chunk
                while (size := int((await reader.readline()).strip() or b"0", 16)) > 0:
                    await reader.readexactly(size + 2)
                await reader.readline()
            result.latencies_ms.append((time.perf_counter() - started) * 1000)
            result.statuses[status] += 1
            if status >= 500:
                result.errors += 1
            if re.search(rb"(?i)connection: *close", head):
                writer.close()
                reader, writer = await asyncio.open_connection(host, port)
    except (OSError, asyncio.IncompleteReadError, ValueError):
        result.errors += 1
    finally:
        writer.close()


def load(base: str, path: str, *, clients: int, seconds: float, headers: dict[str, str] | None = None) -> LoadResult:
    """``clients`` keep-alive connections sending GET ``path`` back to back for ``seconds``."""
    check_loopback(base)
    host, port = base.removeprefix("http://").split(":")
    lines = [f"GET {path} HTTP/1.1", f"Host: {host}:{port}", *(f"{k}: {v}" for k, v in (headers or {}).items())]
    request = ("\r\n".join(lines) + "\r\n\r\n").encode()
    result = LoadResult(path, clients, seconds)

    async def run() -> None:
        until = time.monotonic() + seconds
        await asyncio.gather(*(_client(host, int(port), request, until, result) for _ in range(clients)))

    # In a thread of its own: the caller's thread may already run an event loop (a test session with a browser).
    runner = threading.Thread(target=asyncio.run, args=(run(),))
    runner.start()
    runner.join()
    return result
