"""The reliability suite: a real server (uvicorn on 127.0.0.1, one process) driven by concurrent clients.

Every load here is bounded in count and time and goes to loopback only. The database is a migrated SQLite file, or
the throwaway PostgreSQL cluster of scripts/test.sh (``LIFTMATCH_TEST_PG_URL``) for the ``pg`` variants.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import pytest
from sqlalchemy import create_engine, text

from benchmarks._live import wait_until_serving
from server import migrate
from server.config import REPO_ROOT
from server.db import make_sessionmaker, transaction
from server.services import teams
from tests.conftest import TEST_SECRET

PG_URL = os.environ.get("LIFTMATCH_TEST_PG_URL")


@dataclass
class LiveServer:
    base: str
    pid: int
    db_url: str
    log: Path

    def rss_kib(self) -> int:
        """Resident memory of the server process [KiB] (Linux /proc)."""
        for line in Path(f"/proc/{self.pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
        raise RuntimeError("no VmRSS")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def fresh_database(kind: str, folder: Path) -> str:
    """A migrated, empty database: a SQLite file in ``folder``, or the test PostgreSQL with a new schema."""
    if kind == "sqlite":
        url = f"sqlite:///{folder / 'live.db'}"
    else:
        if not PG_URL:
            if os.environ.get("CI"):
                raise RuntimeError("LIFTMATCH_TEST_PG_URL missing: scripts/test.sh must start PostgreSQL")
            pytest.skip("no PostgreSQL (set LIFTMATCH_TEST_PG_URL)")
        url = PG_URL
        engine = create_engine(url)
        with engine.begin() as conn:
            conn.execute(text("DROP SCHEMA public CASCADE; CREATE SCHEMA public"))
        engine.dispose()
    migrate.upgrade(url)
    return url


@contextmanager
def live_server(db_url: str, folder: Path, stop_timeout_s: float = 5, **env: str) -> Iterator[LiveServer]:
    """uvicorn serving the app on a free loopback port until the block ends (stopped by its own pid)."""
    port = _free_port()
    log_path = folder / f"server-{port}.log"
    environment = {**os.environ, "LIFTMATCH_DATABASE_URL": db_url, "LIFTMATCH_SECRET_KEY": TEST_SECRET,
                   "LIFTMATCH_PASSWORD_TIME_COST": "1", "LIFTMATCH_PASSWORD_MEMORY_KIB": "1024",
                   "LIFTMATCH_PASSWORD_PARALLELISM": "1", **env}
    with open(log_path, "w") as log:
        proc = subprocess.Popen([sys.executable, "-m", "uvicorn", "server.main:create_app", "--factory",
                                 "--host", "127.0.0.1", "--port", str(port), "--log-level", "warning",
                                 "--no-access-log"], env=environment, stdout=log, stderr=subprocess.STDOUT,
                                cwd=REPO_ROOT)
        base = f"http://127.0.0.1:{port}"
        try:
            wait_until_serving(proc, base, log_path, timeout_s=90)
            yield LiveServer(base, proc.pid, db_url, log_path)
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=stop_timeout_s)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


def make_live_team(db_url: str, name: str) -> dict[str, str]:
    """A team with an owner (password ``correct-horse-battery``) and a write key; returns headers and names."""
    from sqlalchemy import Engine

    from server.db import make_engine
    from tests.conftest import make_settings

    engine: Engine = make_engine(db_url)
    slug = name.lower().replace(" ", "-")
    try:
        with transaction(make_sessionmaker(engine)) as session:
            team = teams.create_team(session, name=name)
            teams.create_user(session, settings=make_settings(db_url), email=f"owner@{slug}.example",
                              password="correct-horse-battery", team=team, role="owner")
            _, key = teams.create_api_key(session, team_id=team.id, scope="write")
    finally:
        engine.dispose()
    return {"key": key, "email": f"owner@{slug}.example"}


@dataclass
class Live:
    """A served database with two teams (each: an owner and a write key)."""

    server: LiveServer
    alpha: dict[str, str]
    beta: dict[str, str]


@pytest.fixture(params=["sqlite", "postgres"])
def dedicated(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Live]:
    """A server of its own for one test, stopped at once afterwards (work it left running dies with it)."""
    url = fresh_database(str(request.param), tmp_path)
    alpha, beta = make_live_team(url, "Alpha"), make_live_team(url, "Beta")
    with live_server(url, tmp_path, stop_timeout_s=0.5) as server:
        yield Live(server, alpha, beta)


@pytest.fixture(scope="session", params=["sqlite", "postgres"])
def live(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Live]:
    """One server per backend for the whole suite (starting one costs seconds on this machine)."""
    folder = tmp_path_factory.mktemp(f"live-{request.param}")
    url = fresh_database(str(request.param), folder)
    alpha, beta = make_live_team(url, "Alpha"), make_live_team(url, "Beta")
    with live_server(url, folder) as server:
        yield Live(server, alpha, beta)
