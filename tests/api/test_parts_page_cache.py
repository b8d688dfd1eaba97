"""The parts list's page cache: a cached page equals a fresh one, and every change to the rows is seen at once."""

from __future__ import annotations

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.models import Motor
from server.services.page_cache import PARTS_PAGES, PageCache
from tests.factories import TeamFixture, make_team, part_payload


@pytest.fixture
def team(app: FastAPI, client: TestClient) -> TeamFixture:
    PARTS_PAGES.clear()
    return make_team(app)


def _names(client: TestClient, team: TeamFixture, query: str = "") -> list[str]:
    response = client.get(f"/api/v1/parts/motors{query}", headers=team.headers("read"))
    assert response.status_code == 200, response.text
    return [p["name"] for p in response.json()["items"]]


def test_cached_pages_follow_every_change(app: FastAPI, client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    first = client.post("/api/v1/parts/motors", json=part_payload("motors", "M 10"), headers=h).json()
    assert _names(client, team) == ["M 10"]
    hits = PARTS_PAGES.hits
    assert _names(client, team) == ["M 10"] and PARTS_PAGES.hits == hits + 1  # served from the cache
    client.post("/api/v1/parts/motors", json=part_payload("motors", "M 9"), headers=h)  # create
    assert _names(client, team) == ["M 9", "M 10"]  # natural order
    client.patch(f"/api/v1/parts/motors/{first['id']}", json={"name": "M 8"}, headers={**h, "If-Match": '"1"'})
    assert _names(client, team) == ["M 8", "M 9"]  # update
    client.post(f"/api/v1/parts/motors/{first['id']}/archive", headers=h)
    assert _names(client, team) == ["M 9"]  # archive
    assert _names(client, team, "?archived=all") == ["M 8", "M 9"]  # another query, its own page
    second = _names(client, team, "?archived=all&sort=-name")
    assert second == ["M 9", "M 8"]
    client.delete(f"/api/v1/parts/motors/{first['id']}", headers=h)
    assert _names(client, team, "?archived=all") == ["M 9"]  # delete
    # A write that did not pass through this process's API (another worker process, a script) is seen too.
    with transaction(app.state.sessionmaker) as session:
        row = session.query(Motor).filter(Motor.team_id == team.team_id).one()
        row.name = "Renamed elsewhere"
    assert _names(client, team) == ["Renamed elsewhere"]


def test_a_cached_page_is_byte_for_byte_a_fresh_one(app: FastAPI, client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    for i in range(7):
        client.post("/api/v1/parts/motors", json=part_payload("motors", f"Motor {i}", kv_rpm_per_v=500 + 10 * i),
                    headers=h)
    url = "/api/v1/parts/motors?page_size=3&page=2&sort=-kv_rpm_per_v&where=kv_rpm_per_v>=520"
    fresh = client.get(url, headers=h).content
    cached = client.get(url, headers=h).content
    PARTS_PAGES.clear()
    assert client.get(url, headers=h).content == fresh == cached
    assert [p["kv_rpm_per_v"] for p in client.get(url, headers=h).json()["items"]] == [530.0, 520.0]


def test_teams_never_share_pages(app: FastAPI, client: TestClient, team: TeamFixture) -> None:
    other = make_team(app, "Beta")
    client.post("/api/v1/parts/motors", json=part_payload("motors", "Alpha motor"), headers=team.headers())
    assert _names(client, team) == ["Alpha motor"]
    assert client.get("/api/v1/parts/motors", headers=other.headers("read")).json()["items"] == []


def test_the_cache_is_bounded_in_bytes() -> None:
    cache = PageCache(max_bytes=100)
    for i in range(10):
        cache.get_or_build(i, (1,), lambda: b"x" * 30)
    assert sum(len(body) for _, body in cache._pages.values()) <= 100
    assert cache.get_or_build(9, (1,), lambda: b"new") == b"x" * 30  # the newest stayed
    assert cache.get_or_build(0, (1,), lambda: b"new") == b"new"  # the oldest went first
    assert cache.get_or_build(9, (2,), lambda: b"changed") == b"changed"  # a new stamp rebuilds
