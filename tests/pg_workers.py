"""``liftmatch worker`` processes for the PostgreSQL tests (jobs on PostgreSQL run only in workers)."""

from __future__ import annotations

import os
import subprocess
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from server.config import REPO_ROOT
from tests.conftest import TEST_SECRET


def worker_env(db_url: str, **env: str) -> dict[str, str]:
    return {**os.environ, "LIFTMATCH_DATABASE_URL": db_url, "LIFTMATCH_SECRET_KEY": TEST_SECRET,
            "LIFTMATCH_PASSWORD_TIME_COST": "1", "LIFTMATCH_PASSWORD_MEMORY_KIB": "1024",
            "LIFTMATCH_PASSWORD_PARALLELISM": "1", **env}


def start_worker(db_url: str, folder: Path, name: str, concurrency: int = 1, **env: str) -> subprocess.Popen[bytes]:
    """One worker process (its log in ``folder``); stop it with :func:`stop`."""
    with open(folder / f"worker-{name}.log", "wb") as log:  # the child keeps its own copy of the descriptor
        return subprocess.Popen([sys.executable, "-m", "server.cli", "worker", "--concurrency", str(concurrency),
                                 "--name", name], env=worker_env(db_url, **env), stdout=log,
                                stderr=subprocess.STDOUT, cwd=REPO_ROOT)


def stop(proc: subprocess.Popen[bytes], timeout_s: float = 30) -> None:
    proc.terminate()
    try:
        proc.wait(timeout=timeout_s)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()


@contextmanager
def workers(db_url: str, folder: Path, count: int = 1, concurrency: int = 1,
            **env: str) -> Iterator[list[subprocess.Popen[bytes]]]:
    procs = [start_worker(db_url, folder, f"w{i}", concurrency, **env) for i in range(count)]
    try:
        yield procs
    finally:
        for proc in procs:
            stop(proc)
