"""The job runner: start-up recovery, fairness between teams, cancel for every kind, the time limit."""

from __future__ import annotations

import threading
import time
from typing import Any

from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import transaction
from server.jobs import JobContext, execute
from server.jobs.inprocess import InProcessRunner
from server.main import create_app
from server.models import FleetPlan, Ranking
from tests.conftest import make_settings
from tests.factories import make_library, make_team


def _wait(client: TestClient, url: str, headers: dict[str, str], timeout_s: float = 120) -> dict[str, Any]:
    deadline = time.monotonic() + timeout_s
    while (status := client.get(url, headers=headers).json())["status"] in ("queued", "running"):
        assert time.monotonic() < deadline, status
        time.sleep(0.05)
    return dict(status)


def test_restart_requeues_queued_and_interrupted_rankings(app: FastAPI) -> None:
    with TestClient(app) as client:
        team = make_team(app)
        ids = make_library(client, team)
        h = team.headers()
        body = {"mission_id": ids["mission"], "top_n": 5}
        first = client.post("/api/v1/rankings", json=body, headers=h).json()["id"]
        second = client.post("/api/v1/rankings", json=body, headers=h).json()["id"]
        _wait(client, f"/api/v1/rankings/{second}", h)
    with transaction(app.state.sessionmaker) as session:
        a, b = session.get(Ranking, first), session.get(Ranking, second)
        assert a is not None and b is not None
        a.status, b.status = "running", "queued"  # as a killed process would leave them
    restarted = create_app(app.state.settings)
    with TestClient(restarted) as again:
        for rid in (first, second):  # both run again from their snapshots, with the same result
            assert _wait(again, f"/api/v1/rankings/{rid}", h)["status"] == "done"
        rows = again.get(f"/api/v1/rankings/{first}/results", headers=h).json()
        assert rows["total"] == again.get(f"/api/v1/rankings/{second}/results", headers=h).json()["total"]
    with restarted.state.sessionmaker() as session:
        row = session.get(Ranking, first)
        assert row is not None and row.attempts == 2


def test_a_job_interrupted_too_often_fails_with_the_reason(app: FastAPI) -> None:
    with TestClient(app) as client:
        team = make_team(app)
        ids = make_library(client, team)
        rid = client.post("/api/v1/rankings", json={"mission_id": ids["mission"], "top_n": 5},
                          headers=team.headers()).json()["id"]
        _wait(client, f"/api/v1/rankings/{rid}", team.headers())
    with transaction(app.state.sessionmaker) as session:
        row = session.get(Ranking, rid)
        assert row is not None
        row.status, row.attempts = "queued", 3
    assert execute(app.state.sessionmaker, "ranking", rid, time_limit_s=60) == "failed"
    with app.state.sessionmaker() as session:
        row = session.get(Ranking, rid)
        assert row is not None and "interrupted 3 times" in row.error


def test_one_teams_burst_does_not_starve_another() -> None:
    """A runner with one thread: team A queues 6 jobs, then team B one; B's runs second, not seventh."""
    order: list[tuple[str, int]] = []
    done = threading.Event()
    runner = InProcessRunner(None, concurrency=1, team_limit=1, time_limit_s=60)  # type: ignore[arg-type]
    gate = threading.Event()

    def fake_execute(factory: Any, kind: str, job_id: int, **_: Any) -> str:
        gate.wait(5)
        order.append((kind, job_id))
        if len(order) == 7:
            done.set()
        return "done"

    import server.jobs.inprocess as inprocess

    original = inprocess.execute
    inprocess.execute = fake_execute  # type: ignore[assignment]
    try:
        for job_id in range(1, 7):
            runner.submit("ranking", job_id, team_id=1)
        runner.submit("ranking", 100, team_id=2)
        threading.Thread(target=runner._work, name="job-test", daemon=True).start()
        gate.set()
        assert done.wait(10)
    finally:
        runner.stop(wait_s=1)
        inprocess.execute = original  # type: ignore[assignment]
    assert order[0] == ("ranking", 1) and order[1] == ("ranking", 100), order


def test_team_limit_bounds_running_jobs() -> None:
    running: dict[int, int] = {1: 0, 2: 0}
    peak: dict[int, int] = {1: 0, 2: 0}
    lock = threading.Lock()
    finished = threading.Semaphore(0)

    def fake_execute(factory: Any, kind: str, job_id: int, **_: Any) -> str:
        team = 1 if job_id < 100 else 2
        with lock:
            running[team] += 1
            peak[team] = max(peak[team], running[team])
        time.sleep(0.05)
        with lock:
            running[team] -= 1
        finished.release()
        return "done"

    import server.jobs.inprocess as inprocess

    original = inprocess.execute
    inprocess.execute = fake_execute  # type: ignore[assignment]
    runner = InProcessRunner(None, concurrency=4, team_limit=2, time_limit_s=60)  # type: ignore[arg-type]
    try:
        for job_id in [*range(1, 9), 100, 101]:
            runner.submit("ranking", job_id, team_id=1 if job_id < 100 else 2)
        for i in range(4):
            threading.Thread(target=runner._work, name=f"job-test-{i}", daemon=True).start()
        for _ in range(10):
            assert finished.acquire(timeout=10)
    finally:
        runner.stop(wait_s=1)
        inprocess.execute = original  # type: ignore[assignment]
    assert peak[1] == 2 and peak[2] <= 2


def test_fleet_plans_can_be_cancelled(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    ids = make_library(client, team)
    h = team.headers()
    with transaction(app.state.sessionmaker) as session:  # queued, not yet picked up: cancel ends it at once
        plan = FleetPlan(team_id=team.team_id, name="p", status="queued", engine_version="x", inputs={
            "metric": "cruise_energy", "missions": []})
        session.add(plan)
        session.flush()
        plan_id = plan.id
    cancelled = client.post(f"/api/v1/fleet-plans/{plan_id}/cancel", headers=h)
    assert cancelled.status_code == 200 and cancelled.json()["status"] == "cancelled"
    assert client.post(f"/api/v1/fleet-plans/{plan_id}/cancel", headers=h).status_code == 409
    # A running plan stops at its next check.
    started = client.post("/api/v1/fleet-plans", headers=h, json={
        "missions": [{"mission_id": ids["mission"], "weight": 1}]}).json()["id"]
    client.post(f"/api/v1/fleet-plans/{started}/cancel", headers=h)
    final = _wait(client, f"/api/v1/fleet-plans/{started}", h)
    assert final["status"] in ("cancelled", "done")  # it may have finished before the request arrived


def test_time_limit_fails_the_job_with_the_reason(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    ids = make_library(client, team)
    rid = client.post("/api/v1/rankings", json={"mission_id": ids["mission"], "top_n": 5},
                      headers=team.headers()).json()["id"]
    _wait(client, f"/api/v1/rankings/{rid}", team.headers())
    with transaction(app.state.sessionmaker) as session:
        row = session.get(Ranking, rid)
        assert row is not None
        row.status = "queued"
    import server.services.rankings as rankings

    original = rankings.rank

    def slow_rank(*args: Any, should_cancel: Any = None, **kwargs: Any) -> Any:
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline:
            if should_cancel():
                return original(*args, should_cancel=lambda: True, **kwargs)
            time.sleep(0.01)
        raise AssertionError("the time limit was not applied")

    rankings.rank = slow_rank  # type: ignore[assignment]
    try:
        assert execute(app.state.sessionmaker, "ranking", rid, time_limit_s=0.3) == "failed"
    finally:
        rankings.rank = original  # type: ignore[assignment]
    with app.state.sessionmaker() as session:
        row = session.get(Ranking, rid)
        assert row is not None and row.status == "failed" and "time limit of 0.3 s" in row.error
        assert session.scalar(select(Ranking.status).where(Ranking.id == rid)) == "failed"


def test_a_stopping_runner_requeues_the_job() -> None:
    stopping = threading.Event()
    context = JobContext(None, Ranking, 1, 60, stopping)  # type: ignore[arg-type]
    stopping.set()
    assert context.should_stop() and context.stop is not None and context.stop.status == "queued"


def test_legacy_setting_name_still_works(monkeypatch: Any, tmp_path: Any) -> None:
    monkeypatch.setenv("LIFTMATCH_RANKING_WORKERS", "3")
    assert make_settings(f"sqlite:///{tmp_path / 'x.db'}").job_concurrency == 3
    monkeypatch.setenv("LIFTMATCH_JOB_CONCURRENCY", "2")
    monkeypatch.delenv("LIFTMATCH_RANKING_WORKERS")
    assert make_settings(f"sqlite:///{tmp_path / 'x.db'}").job_concurrency == 2
