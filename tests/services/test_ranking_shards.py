"""Sharded ranking jobs: shards run as jobs of their own on any runner thread, and the stored ranking equals the
unsharded one (rows, counts, rejection examples); cancel stops every shard."""

from __future__ import annotations

import time
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import transaction
from server.jobs import execute
from server.main import create_app
from server.models import Ranking, RankingShard
from tests.conftest import make_settings
from tests.factories import demo_key
from tests.services.test_jobs import _wait

pytestmark = pytest.mark.demo_data


def _sharded_app(db_url: str, per_shard: int) -> FastAPI:
    settings = make_settings(db_url).model_copy(update={"ranking_shard_combinations": per_shard,
                                                        "job_concurrency": 2, "job_team_limit": 2})
    return create_app(settings)


def _stored(client: TestClient, rid: int, h: dict[str, str]) -> dict[str, Any]:
    status = client.get(f"/api/v1/rankings/{rid}", headers=h).json()
    rows = client.get(f"/api/v1/rankings/{rid}/results?page_size=200", headers=h).json()["items"]
    pareto = client.get(f"/api/v1/rankings/{rid}/pareto", headers=h).json()
    strip = ("result_id",)
    return {"counts": {k: status[k] for k in ("combinations", "evaluated", "feasible", "rejected",
                                                "rejected_examples")},
            "rows": [{k: v for k, v in r.items() if k not in strip} for r in rows],
            "pareto": [{k: v for k, v in r.items() if k not in strip} for r in pareto.get("items", pareto)]}


def test_a_sharded_ranking_stores_exactly_the_unsharded_result(db_url: str) -> None:
    app = _sharded_app(db_url, per_shard=2_000)
    with TestClient(app) as client:
        h, missions = demo_key(app)
        rid = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"], "top_n": 20},
                          headers=h).json()["id"]
        status = _wait(client, f"/api/v1/rankings/{rid}", h)
        assert status["status"] == "done", status
        assert status["timings"]["shards"] > 2
        sharded = _stored(client, rid, h)
        with app.state.sessionmaker() as session:
            shards = list(session.scalars(select(RankingShard).where(RankingShard.ranking_id == rid)))
        assert len(shards) == status["timings"]["shards"]
        assert all(s.status == "done" and s.attempts == 1 for s in shards)  # each shard ran exactly once
        # The same ranking again, whole, in this thread: the stored rows are replaced by identical ones.
        with transaction(app.state.sessionmaker) as session:
            row = session.get(Ranking, rid)
            assert row is not None
            row.status = "queued"
        assert execute(app.state.sessionmaker, "ranking", rid, time_limit_s=600, shard_combinations=0) == "done"
        whole = _stored(client, rid, h)
        assert client.get(f"/api/v1/rankings/{rid}", headers=h).json()["timings"].get("shards") is None
    assert sharded["rows"] and sharded["counts"]["rejected_examples"]
    assert sharded == whole


def test_cancel_stops_a_sharded_ranking_and_every_shard(db_url: str) -> None:
    app = _sharded_app(db_url, per_shard=300)
    with TestClient(app) as client:
        h, missions = demo_key(app)
        rid = client.post("/api/v1/rankings", json={"mission_id": missions["H6 structure inspection"], "top_n": 20},
                          headers=h).json()["id"]
        deadline = time.monotonic() + 60
        with app.state.sessionmaker() as session:
            while not session.scalars(select(RankingShard.id).where(RankingShard.ranking_id == rid,
                                                                    RankingShard.status == "done")).first():
                assert time.monotonic() < deadline
                time.sleep(0.02)
                session.expire_all()
        assert client.post(f"/api/v1/rankings/{rid}/cancel", headers=h).status_code in (200, 202)
        status = _wait(client, f"/api/v1/rankings/{rid}", h)
        time.sleep(1.0)  # shards on the other thread notice at their next check
        with app.state.sessionmaker() as session:
            states = list(session.scalars(select(RankingShard.status).where(RankingShard.ranking_id == rid)))
    assert status["status"] == "cancelled", status
    assert "running" not in states and "queued" not in states and "cancelled" in states, states
