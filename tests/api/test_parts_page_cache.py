"""The parts list's page cache: a cached page equals a fresh one, and every change to the rows is seen at once,
whatever made it (the API, the ORM outside the API, plain SQL that bumps no version)."""

from __future__ import annotations

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import text

from server.config import Settings
from server.db import transaction
from server.main import create_app
from server.models import PART_MODELS, Motor
from server.services import page_cache
from server.services.page_cache import PageCache
from tests.factories import TeamFixture, make_team, part_payload


@pytest.fixture
def team(app: FastAPI, client: TestClient) -> TeamFixture:
    return make_team(app)


def _names(client: TestClient, team: TeamFixture, query: str = "") -> list[str]:
    response = client.get(f"/api/v1/parts/motors{query}", headers=team.headers("read"))
    assert response.status_code == 200, response.text
    return [p["name"] for p in response.json()["items"]]


def test_cached_pages_follow_every_change(app: FastAPI, client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    first = client.post("/api/v1/parts/motors", json=part_payload("motors", "M 10"), headers=h).json()
    assert _names(client, team) == ["M 10"]
    pages: PageCache = app.state.parts_pages
    hits = pages.hits
    assert _names(client, team) == ["M 10"] and pages.hits == hits + 1  # served from the cache
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
    # Plain SQL that leaves the version and the update time alone (a script, a manual fix) is seen as well.
    with app.state.engine.begin() as connection:
        connection.exec_driver_sql("UPDATE motor SET name = 'Fixed by hand' WHERE team_id = ?", (team.team_id,))
    assert _names(client, team) == ["Fixed by hand"]
    with app.state.engine.begin() as connection:
        connection.exec_driver_sql("DELETE FROM motor WHERE team_id = ?", (team.team_id,))
    assert _names(client, team) == []


def test_another_server_process_sees_every_write_at_once(app: FastAPI, client: TestClient, team: TeamFixture,
                                                         settings: Settings) -> None:
    """Two apps on one database stand for two server processes: each has its own cache, engine and key cache."""
    h = team.headers()
    with TestClient(create_app(settings)) as other:
        def names_there() -> list[str]:
            return [p["name"] for p in other.get("/api/v1/parts/motors", headers=h).json()["items"]]

        assert names_there() == names_there() == []  # the second one from the other process's cache
        part = client.post("/api/v1/parts/motors", json=part_payload("motors", "Here"), headers=h).json()
        assert names_there() == ["Here"]
        client.patch(f"/api/v1/parts/motors/{part['id']}", json={"name": "Changed here"},
                     headers={**h, "If-Match": '"1"'})
        assert names_there() == ["Changed here"]
        client.delete(f"/api/v1/parts/motors/{part['id']}", headers=h)
        assert names_there() == []


def test_a_cached_page_is_byte_for_byte_a_fresh_one(app: FastAPI, client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    for i in range(7):
        client.post("/api/v1/parts/motors", json=part_payload("motors", f"Motor {i}", kv_rpm_per_v=500 + 10 * i),
                    headers=h)
    url = "/api/v1/parts/motors?page_size=3&page=2&sort=-kv_rpm_per_v&where=kv_rpm_per_v>=520"
    fresh = client.get(url, headers=h).content
    cached = client.get(url, headers=h).content
    app.state.parts_pages.clear()
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


def test_every_write_to_a_part_table_changes_only_its_teams_stamp(app: FastAPI, client: TestClient) -> None:
    alpha, beta = make_team(app), make_team(app, "Beta")
    engine = app.state.engine

    def stamps() -> dict[tuple[int, str], tuple[object, ...]]:
        return {(t, kind): page_cache.stamp(engine, kind, t) for t in (alpha.team_id, beta.team_id)
                for kind in PART_MODELS}

    for kind, model in PART_MODELS.items():
        table = model.__table__  # type: ignore[attr-defined]
        columns = ", ".join(c.name for c in table.c if c.name != "id")
        with transaction(app.state.sessionmaker) as session:
            part = model(team_id=alpha.team_id, **_columns(kind))
            session.add(part)
            session.flush()
            part_id = part.id
        # INSERT, UPDATE of a column no version counter sees, DELETE: plain SQL, each in its own transaction.
        for statement in (f"INSERT INTO {table.name} ({columns}) SELECT {columns} FROM {table.name} WHERE id = :id",
                          f"UPDATE {table.name} SET notes = 'seen' WHERE team_id = :team",
                          f"DELETE FROM {table.name} WHERE team_id = :team"):
            before = stamps()
            with engine.begin() as connection:
                connection.execute(text(statement), {"id": part_id, "team": alpha.team_id})
            after = stamps()
            assert {k for k in before if before[k] != after[k]} == {(alpha.team_id, kind)}, statement
        before = stamps()
        with engine.begin() as connection:  # a write that is rolled back changes nothing
            connection.execute(text(f"UPDATE {table.name} SET notes = 'no' WHERE team_id = :t"), {"t": alpha.team_id})
            connection.rollback()
        assert stamps() == before


def _columns(kind: str) -> dict[str, object]:
    """The stored columns of a valid part of ``kind`` (the API's create body, without the derived ``kind``)."""
    data = part_payload(kind, f"Stamp {kind}")
    model = PART_MODELS[kind]
    return {k: v for k, v in data.items() if k in model.__table__.c}  # type: ignore[attr-defined]


def test_a_page_built_while_the_rows_changed_is_not_kept() -> None:
    cache = PageCache()
    assert cache.get_or_build("k", (1,), lambda: b"old or new?", after=lambda: (2,)) == b"old or new?"
    assert cache.get_or_build("k", (1,), lambda: b"rebuilt", after=lambda: (1,)) == b"rebuilt"  # not kept before
    assert cache.get_or_build("k", (1,), lambda: b"again", after=lambda: (1,)) == b"rebuilt"  # kept now
