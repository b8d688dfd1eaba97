"""Jobs on PostgreSQL across processes: two web processes only enqueue, two ``liftmatch worker`` processes run.

Two teams submit 24 rankings through both web processes: every job runs exactly once and the second team does not
wait behind the first team's burst; cancel works for rankings and fleet plans; a worker killed with SIGKILL mid-job
loses nothing (the queue's heartbeat check hands the job to another worker). Needs the test PostgreSQL cluster; runs
in a database of its own, so the suite's shared servers are untouched.
"""

from __future__ import annotations

import os
import signal
import time
import uuid
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx2 as httpx
import pytest
from sqlalchemy import create_engine, select, text
from sqlalchemy.engine import make_url

from server import migrate
from server.db import make_engine, make_sessionmaker
from server.models import FleetPlan, Ranking
from tests.factories import make_library, part_payload
from tests.pg_workers import start_worker, stop, workers
from tests.reliability.conftest import PG_URL, live_server, make_live_team

pytestmark = pytest.mark.slow


@pytest.fixture
def queue_db() -> Iterator[str]:
    """A migrated database of its own on the test cluster (dropped afterwards)."""
    if not PG_URL:
        if os.environ.get("CI"):
            raise RuntimeError("LIFTMATCH_TEST_PG_URL missing: scripts/test.sh must start PostgreSQL")
        pytest.skip("no PostgreSQL (set LIFTMATCH_TEST_PG_URL)")
    name = f"liftmatch_queue_{uuid.uuid4().hex[:8]}"
    admin = create_engine(PG_URL, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = make_url(PG_URL).set(database=name).render_as_string(hide_password=False)
    try:
        migrate.upgrade(url)
        yield url
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


class _Team:
    def __init__(self, key: str) -> None:
        self.key = key

    def headers(self) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.key}"}


def _rows(url: str, model: Any, ids: list[int]) -> list[Any]:
    engine = make_engine(url)
    try:
        with make_sessionmaker(engine)() as s:
            return list(s.scalars(select(model).where(model.id.in_(ids)).order_by(model.id)))
    finally:
        engine.dispose()


def _wait_all(url: str, model: Any, ids: list[int], timeout_s: float) -> list[Any]:
    deadline = time.monotonic() + timeout_s
    while True:
        rows = _rows(url, model, ids)
        if all(r.status not in ("queued", "running") for r in rows):
            return rows
        assert time.monotonic() < deadline, [(r.id, r.status) for r in rows]
        time.sleep(0.25)


def _more_parts(client: httpx.Client, headers: dict[str, str], count: int) -> None:
    """``count`` more parts of each kind (invented values inside every bound), so that a ranking has some work."""
    varied = {"batteries": ("capacity_mah", 3000, 800), "escs": ("continuous_current_a", 30, 10),
              "motors": ("kv_rpm_per_v", 700, 150), "propellers": ("diameter_in", 9, 1)}
    for kind, (field, start, step) in varied.items():
        for j in range(count):
            body = part_payload(kind, name=f"Extra {kind} {j}", **{field: start + j * step})
            body["part_number"] = f"X-{kind[:3]}-{j}"
            assert client.post(f"/api/v1/parts/{kind}", json=body, headers=headers).status_code == 201


def test_two_web_and_two_worker_processes_run_every_job_once_and_fairly(queue_db: str, tmp_path: Path) -> None:
    alpha, beta = make_live_team(queue_db, "Alpha"), make_live_team(queue_db, "Beta")
    env = {"LIFTMATCH_JOB_TEAM_LIMIT": "1"}
    # The workers start once every job is queued: the backlog the fairness is about (rankings of this size take
    # tens of milliseconds, so with workers already running a burst would barely queue up).
    with live_server(queue_db, tmp_path, **env) as web1, live_server(queue_db, tmp_path, **env) as web2:
        clients = [httpx.Client(base_url=w.base, timeout=30) for w in (web1, web2)]
        a, b = _Team(alpha["key"]), _Team(beta["key"])
        lib_a, lib_b = make_library(clients[0], a), make_library(clients[1], b)  # type: ignore[arg-type]
        # Rankings of 4 parts of each kind with 50 result rows take 120-150 ms (one combination: about 20 ms), so the
        # burst is a queue of a few seconds that half a second of a busy machine cannot reorder.
        _more_parts(clients[0], a.headers(), 3)
        _more_parts(clients[1], b.headers(), 3)

        def start(team: _Team, mission: int, i: int) -> int:
            made = clients[i % 2].post("/api/v1/rankings", json={"mission_id": mission, "top_n": 50},
                                       headers=team.headers())
            assert made.status_code == 202, made.text
            return int(made.json()["id"])

        burst = [start(a, lib_a["mission"], i) for i in range(20)]
        later = [start(b, lib_b["mission"], i) for i in range(4)]
        # Cancel: a queued ranking of the burst, and a fleet plan (queued behind the burst) of the other team.
        assert clients[1].post(f"/api/v1/rankings/{burst[-1]}/cancel", headers=a.headers()).status_code in (200, 202)
        plan = clients[0].post("/api/v1/fleet-plans", headers=b.headers(), json={
            "missions": [{"mission_id": lib_b["mission"]}]})
        assert plan.status_code == 202, plan.text
        plan_id = int(plan.json()["id"])
        assert clients[1].post(f"/api/v1/fleet-plans/{plan_id}/cancel", headers=b.headers()).status_code in (200, 202)
        with workers(queue_db, tmp_path, count=2, **env):
            rows = _wait_all(queue_db, Ranking, burst + later, timeout_s=240)
        for client in clients:
            client.close()
    by_id = {r.id: r for r in rows}
    assert by_id[burst[-1]].status == "cancelled"
    ran = [by_id[i] for i in burst[:-1] + later]
    assert all(r.status == "done" and r.attempts == 1 for r in ran), [(r.id, r.status, r.attempts) for r in ran]
    # Fair: the second team's jobs did not wait for the end of the first team's burst.
    last_of_burst = max(by_id[i].started_at for i in burst[:-1])
    assert max(by_id[i].started_at for i in later) < last_of_burst, sorted(
        (by_id[i].started_at.isoformat()[11:23], "A" if i in burst else "B", by_id[i].finished_at.isoformat()[11:23])
        for i in burst[:-1] + later)
    (fleet,) = _rows(queue_db, FleetPlan, [plan_id])
    assert fleet.status == "cancelled"


def demo_team(url: str, copies: int = 1) -> tuple[str, dict[str, int]]:
    """Load the invented demo scenario (with ``copies`` of each motor and propeller, to make rankings larger); a
    write key of its team and its missions by name."""
    from server.db import transaction
    from server.models import Mission
    from server.schemas.parts import CREATE_SCHEMAS
    from server.services import parts, seed, teams
    from server.services._validation import validate
    from tests.conftest import make_settings

    engine = make_engine(url)
    try:
        with transaction(make_sessionmaker(engine)) as session:
            seed.load_demo(session, settings=make_settings(url))
            demo = seed.read_demo()
            team_id = teams.get_team_by_name(session, name="Northfold Survey").id
            for copy in range(1, copies):
                for kind in ("motors", "propellers"):
                    for row in demo[kind]:
                        twin = row | {"name": f"{row['name']} ({copy})",
                                      "part_number": f"{row.get('part_number', '')}-{copy}"}
                        parts.create_part(session, team_id=team_id, user_id=None, kind=kind,
                                          data=validate(CREATE_SCHEMAS[kind], twin, what="copy"))
            team = teams.get_team_by_name(session, name="Northfold Survey")
            _, key = teams.create_api_key(session, team_id=team.id, scope="write")
            missions = {m.name: m.id for m in session.scalars(select(Mission).where(Mission.team_id == team.id))}
    finally:
        engine.dispose()
    return key, missions


def test_a_worker_killed_mid_job_loses_nothing(queue_db: str, tmp_path: Path) -> None:
    key, missions = demo_team(queue_db)
    team = _Team(key)
    with live_server(queue_db, tmp_path) as web, httpx.Client(base_url=web.base, timeout=30) as client:
        first = start_worker(queue_db, tmp_path, "doomed", LIFTMATCH_JOB_STALLED_AFTER_S="6")
        try:
            plan = client.post("/api/v1/fleet-plans", headers=team.headers(), json={
                "missions": [{"mission_id": m} for m in missions.values()]})
            assert plan.status_code == 202, plan.text
            pid = int(plan.json()["id"])
            deadline = time.monotonic() + 90
            while _rows(queue_db, FleetPlan, [pid])[0].status != "running":
                assert time.monotonic() < deadline
                time.sleep(0.05)
            os.kill(first.pid, signal.SIGKILL)
            first.wait()
        finally:
            stop(first)
        assert _rows(queue_db, FleetPlan, [pid])[0].status == "running"  # as the dead worker left it
        second = start_worker(queue_db, tmp_path, "rescuer", LIFTMATCH_JOB_STALLED_AFTER_S="6")
        try:
            (row,) = _wait_all(queue_db, FleetPlan, [pid], timeout_s=150)
        finally:
            stop(second)
    assert row.status == "done" and row.attempts == 2, (row.status, row.attempts, row.error)


def test_a_large_ranking_sharded_over_two_workers_equals_the_whole_and_cancels(queue_db: str, tmp_path: Path) -> None:
    from server.db import transaction
    from server.jobs import execute
    from tests.services.test_ranking_shards import _stored

    key, missions = demo_team(queue_db, copies=4)  # 16 times the demo's combinations
    team = _Team(key)
    # The hot-day mission: its screen (the heat model, numpy) takes long enough that the ranking's own worker cannot
    # finish every shard before the other worker takes some (a plain hover ranking of this size, compiled, can).
    mission = missions["Q4 mapping survey, 40 °C day"]
    env = {"LIFTMATCH_RANKING_SHARD_COMBINATIONS": "10000"}
    with live_server(queue_db, tmp_path, **env) as web, httpx.Client(base_url=web.base, timeout=30) as client:
        with workers(queue_db, tmp_path, count=2, **env):
            rid = int(client.post("/api/v1/rankings", headers=team.headers(), json={
                "mission_id": mission, "top_n": 20}).json()["id"])
            (row,) = _wait_all(queue_db, Ranking, [rid], timeout_s=240)
            # Cancel reaches a running sharded ranking and every shard of it, wherever they run.
            other = int(client.post("/api/v1/rankings", headers=team.headers(), json={
                "mission_id": mission, "top_n": 20}).json()["id"])
            deadline = time.monotonic() + 90
            while not any(s.status == "done" for s in _shards(queue_db, other)):
                assert time.monotonic() < deadline
                time.sleep(0.02)
            assert client.post(f"/api/v1/rankings/{other}/cancel", headers=team.headers()).status_code == 200
            (cancelled,) = _wait_all(queue_db, Ranking, [other], timeout_s=60)
            time.sleep(2.0)  # a shard on the other worker notices at its next check
            assert cancelled.status == "cancelled", (cancelled.status, cancelled.error)
            assert not any(s.status in ("queued", "running") for s in _shards(queue_db, other))
        assert row.status == "done" and row.timings["shards"] > 2, (row.status, row.error, row.timings)
        shards = _shards(queue_db, rid)
        assert len(shards) == row.timings["shards"] and all(s.status == "done" and s.attempts == 1 for s in shards)
        spans = sorted((s.started_at, s.finished_at) for s in shards)
        # Spread: some shard started before the one before it had finished, so two processes screened at once.
        assert any(later[0] < earlier[1] for earlier, later in zip(spans, spans[1:], strict=False)), spans
        sharded = _stored(client, rid, team.headers())  # type: ignore[arg-type]
        engine = make_engine(queue_db)
        try:  # the same ranking again, whole, in this process: its stored rows are replaced by identical ones
            factory = make_sessionmaker(engine)
            with transaction(factory) as session:
                stored = session.get(Ranking, rid)
                assert stored is not None
                stored.status = "queued"
            assert execute(factory, "ranking", rid, time_limit_s=600, shard_combinations=0) == "done"
        finally:
            engine.dispose()
        whole = _stored(client, rid, team.headers())  # type: ignore[arg-type]
    assert sharded["rows"] and sharded == whole


def _shards(url: str, ranking_id: int) -> list[Any]:
    from server.models import RankingShard

    engine = make_engine(url)
    try:
        with make_sessionmaker(engine)() as s:
            return list(s.scalars(select(RankingShard).where(RankingShard.ranking_id == ranking_id)))
    finally:
        engine.dispose()
