"""Start-up recovery of background jobs: queued ones run again, those a stopped process left running fail."""

from __future__ import annotations

from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.main import create_app
from server.models import Ranking
from tests.factories import make_library, make_team


def test_restart_requeues_queued_and_fails_interrupted_rankings(app: FastAPI) -> None:
    with TestClient(app) as client:  # leaving the block stops the app (it waits for its jobs)
        team = make_team(app)
        ids = make_library(client, team)
        h = team.headers()
        body = {"mission_id": ids["mission"], "top_n": 5}
        first = client.post("/api/v1/rankings", json=body, headers=h).json()["id"]
        second = client.post("/api/v1/rankings", json=body, headers=h).json()["id"]
    with transaction(app.state.sessionmaker) as session:
        a, b = session.get(Ranking, first), session.get(Ranking, second)
        assert a is not None and b is not None
        a.status, b.status = "running", "queued"  # as a killed process would leave them
    restarted = create_app(app.state.settings)
    with TestClient(restarted) as again:
        interrupted = again.get(f"/api/v1/rankings/{first}", headers=h).json()
        assert interrupted["status"] == "failed" and "restart" in interrupted["error"]
    with restarted.state.sessionmaker() as session:
        row = session.get(Ranking, second)
        assert row is not None and row.status == "done"  # requeued at start-up and run before shutdown finished
