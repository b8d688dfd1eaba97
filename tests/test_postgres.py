"""PostgreSQL by URL alone: migrations, models match, and the main flows through the API.

Runs when LIFTMATCH_TEST_PG_URL is set (scripts/test.sh starts a throwaway cluster); skipped otherwise, and
required in CI.
"""

from __future__ import annotations

import os
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import create_engine, text

from server import migrate
from server.db import transaction
from server.main import create_app
from server.services import seed
from tests.conftest import make_settings
from tests.factories import make_library, make_team, part_payload
from tests.pg_workers import workers

PG_URL = os.environ.get("LIFTMATCH_TEST_PG_URL")
if not PG_URL:
    if os.environ.get("CI"):
        raise RuntimeError("LIFTMATCH_TEST_PG_URL missing: scripts/test.sh must start PostgreSQL")
    pytest.skip("no PostgreSQL (set LIFTMATCH_TEST_PG_URL)", allow_module_level=True)


def fresh_migrated_database() -> None:
    """An empty public schema, migrated to head."""
    assert PG_URL
    engine = create_engine(PG_URL)
    with engine.begin() as conn:
        conn.execute(text("DROP SCHEMA public CASCADE; CREATE SCHEMA public"))
    engine.dispose()
    migrate.upgrade(PG_URL)


@pytest.fixture
def pg_client(tmp_path: Path) -> Iterator[TestClient]:
    """The app on PostgreSQL, with one ``liftmatch worker`` process to run its jobs."""
    assert PG_URL
    fresh_migrated_database()
    with workers(PG_URL, tmp_path), TestClient(create_app(make_settings(PG_URL))) as client:
        yield client


def test_migrations_round_trip_and_match_models() -> None:
    assert PG_URL
    fresh_migrated_database()
    migrate.check(PG_URL)
    migrate.downgrade(PG_URL, "base")
    migrate.upgrade(PG_URL)


def test_parts_shortlist_and_ranking_flows(pg_client: TestClient) -> None:
    app = pg_client.app
    team = make_team(app, "PG team")  # type: ignore[arg-type]
    h = team.headers()
    ids = make_library(pg_client, team)
    part = pg_client.get(f"/api/v1/parts/motors/{ids['motors']}", headers=h)
    assert part.status_code == 200
    stale = pg_client.patch(f"/api/v1/parts/motors/{ids['motors']}", json={"mass_g": 70},
                            headers={**h, "If-Match": '"7"'})
    assert stale.status_code == 412
    bad = pg_client.post("/api/v1/parts/motors/import", headers=h,
                         files={"file": ("m.csv", "name,mass_g,kv_rpm_per_v\nA,60,920\nB,x,1\n", "text/csv")})
    assert bad.status_code == 422
    assert pg_client.get("/api/v1/parts/motors", headers=h).json()["total"] == 1
    sid = pg_client.post("/api/v1/shortlists", json={"name": "PG", "mission_id": ids["mission"]},
                         headers=h).json()["id"]
    entry = pg_client.post(f"/api/v1/shortlists/{sid}/entries", headers=h, json={
        "battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
        "propeller_id": ids["propellers"]})
    assert entry.status_code == 201
    assert pg_client.get(f"/api/v1/shortlists/{sid}/bom.csv", headers=h).status_code == 200
    with transaction(app.state.sessionmaker) as session:  # type: ignore[attr-defined]
        seed.load_demo(session, settings=app.state.settings)  # type: ignore[attr-defined]
    missions = pg_client.get("/api/v1/missions", headers=h).json()
    assert all(m["name"] != "Q4 mapping survey" for m in missions)  # the demo team's missions are not ours
    rid = pg_client.post("/api/v1/rankings", json={"mission_id": ids["mission"], "top_n": 5}, headers=h).json()["id"]
    deadline = time.monotonic() + 60
    while (status := pg_client.get(f"/api/v1/rankings/{rid}", headers=h).json())["status"] in ("queued", "running"):
        assert time.monotonic() < deadline
        time.sleep(0.05)
    assert status["status"] == "done"
    assert status["feasible"] + sum(status["rejected"].values()) == status["combinations"]
    assert pg_client.delete(f"/api/v1/parts/motors/{ids['motors']}", headers=h).status_code == 409  # in use
    assert pg_client.post("/api/v1/parts/motors", json=part_payload("motors", name="x" * 121),
                          headers=h).status_code == 422


def test_the_parts_list_follows_writes_made_outside_the_api(pg_client: TestClient) -> None:
    """The revision triggers on PostgreSQL: plain SQL that bumps no version is seen by the cached parts list."""
    app = pg_client.app
    team = make_team(app, "PG cache")  # type: ignore[arg-type]
    h = team.headers()
    assert pg_client.post("/api/v1/parts/motors", json=part_payload("motors", "Before"), headers=h).status_code == 201

    def names() -> list[str]:
        return [p["name"] for p in pg_client.get("/api/v1/parts/motors", headers=h).json()["items"]]

    assert names() == names() == ["Before"]  # the second one from the cache
    engine = app.state.engine  # type: ignore[attr-defined]
    with engine.begin() as connection:
        connection.execute(text("UPDATE motor SET name = 'After' WHERE team_id = :t"), {"t": team.team_id})
    assert names() == ["After"]
    with engine.begin() as connection:
        connection.execute(text("DELETE FROM motor WHERE team_id = :t"), {"t": team.team_id})
    assert names() == []
