"""Benchmark: job throughput on PostgreSQL with 1 and 2 ``liftmatch worker`` processes.

For each worker count: a fresh database on the given cluster with the invented demo scenario, one web process and
that many workers (concurrency 1 each, already started and registered); ``--jobs`` rankings of the demo missions
(top 20, in turn) are submitted through the API, and the time from the first submission to the last job done gives
jobs per second. Every job must end ``done`` after exactly one attempt.

    python benchmarks/job_queue.py --database-url postgresql+psycopg://postgres@127.0.0.1:PORT/db [--jobs 40]

The last line is ``queue: N jobs, 1 worker X jobs/s, 2 workers Y jobs/s, ratio R``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
import uuid
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import httpx2 as httpx  # noqa: E402
from sqlalchemy import create_engine, select, text  # noqa: E402
from sqlalchemy.engine import make_url  # noqa: E402

from server import migrate  # noqa: E402
from server.db import make_engine, make_sessionmaker  # noqa: E402
from server.models import Ranking  # noqa: E402
from tests.pg_workers import workers  # noqa: E402
from tests.reliability.conftest import live_server  # noqa: E402
from tests.reliability.test_queue_workers import _Team, demo_team  # noqa: E402


def run(cluster_url: str, jobs: int, count: int) -> float:
    name = f"liftmatch_bench_{uuid.uuid4().hex[:8]}"
    admin = create_engine(cluster_url, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = make_url(cluster_url).set(database=name).render_as_string(hide_password=False)
    folder = Path(tempfile.mkdtemp(prefix="liftmatch-queue-"))
    try:
        migrate.upgrade(url)
        key, missions = demo_team(url)
        team = _Team(key)
        engine = make_engine(url)
        with live_server(url, folder) as web, httpx.Client(base_url=web.base, timeout=30) as client, \
                workers(url, folder, count=count), make_sessionmaker(engine)() as s:
            while s.scalar(text("SELECT count(*) FROM procrastinate_workers")) < count:  # workers ready
                time.sleep(0.1)
            t0 = time.perf_counter()
            order = list(missions.values())
            ids = [client.post("/api/v1/rankings", json={"mission_id": order[i % len(order)], "top_n": 20},
                               headers=team.headers()).json()["id"] for i in range(jobs)]
            while True:
                rows = list(s.execute(select(Ranking.status, Ranking.attempts).where(Ranking.id.in_(ids))))
                if all(status not in ("queued", "running") for status, _ in rows):
                    break
                time.sleep(0.05)
                s.expire_all()
            elapsed = time.perf_counter() - t0
        engine.dispose()
        bad = [(status, attempts) for status, attempts in rows if status != "done" or attempts != 1]
        if bad:
            raise SystemExit(f"jobs not run exactly once: {bad[:5]}")
        print(f"{count} worker(s): {jobs} jobs in {elapsed:.1f} s ({jobs / elapsed:.2f} jobs/s)")
        return jobs / elapsed
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--database-url", required=True, help="a PostgreSQL cluster (a database is created per run)")
    parser.add_argument("--jobs", type=int, default=40)
    args = parser.parse_args()
    one = run(args.database_url, args.jobs, 1)
    two = run(args.database_url, args.jobs, 2)
    print(f"queue: {args.jobs} jobs, 1 worker {one:.2f} jobs/s, 2 workers {two:.2f} jobs/s, ratio {two / one:.2f}")


if __name__ == "__main__":
    main()
