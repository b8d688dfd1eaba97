"""Reads never write, and no async handler does blocking database work.

Every API key request used to write ``last_used_at`` inside the request, so concurrent readers queued on the
database's write lock; and async page handlers ran their queries on the event loop, stalling every request
(health check included) while one waited for a lock.
"""

from __future__ import annotations

import inspect
import threading
from collections.abc import Iterator
from typing import Any

from fastapi import FastAPI
from fastapi.dependencies.models import Dependant
from fastapi.routing import APIRoute
from fastapi.testclient import TestClient
from sqlalchemy import event, select

from server.deps import get_db
from server.models import ApiKey
from tests.api.test_isolation import _fill, api_routes, two_teams  # noqa: F401 (fixture)


def _dependants(dependant: Dependant) -> Iterator[Dependant]:
    yield dependant
    for sub in dependant.dependencies:
        yield from _dependants(sub)


def _routes(app: FastAPI) -> Iterator[Any]:
    """Every route of the app with its dependency tree (included routers expose theirs as route contexts)."""
    for route in app.routes:
        if isinstance(route, APIRoute):
            yield route
        elif hasattr(route, "effective_route_contexts"):
            yield from route.effective_route_contexts()


def test_no_async_handler_or_dependency_takes_a_database_session(app: FastAPI) -> None:
    checked = 0
    routes = list(_routes(app))
    assert len(routes) > 80
    for route in routes:
        for dependant in _dependants(route.dependant):
            if dependant.call is not None and inspect.iscoroutinefunction(dependant.call):
                direct = {d.call for d in dependant.dependencies}
                assert get_db not in direct, f"{route.path}: async {dependant.call.__name__} takes a DB session"
                checked += 1
    assert checked > 10  # the form readers and the body reader are async; their handlers are not


def test_get_requests_write_nothing(app: FastAPI, client: TestClient, two_teams: Any) -> None:  # noqa: F811
    alpha, _, ids = two_teams
    writes: list[str] = []

    def record(_conn: Any, _cursor: Any, statement: str, *_: Any) -> None:
        if threading.current_thread().name.startswith(("job", "key-usage")):  # background work, not a request
            return
        if statement.lstrip().split(" ", 1)[0].upper() in ("INSERT", "UPDATE", "DELETE", "REPLACE"):
            writes.append(statement.split("\n", 1)[0][:80])

    event.listen(app.state.engine, "before_cursor_execute", record)
    try:
        reads = 0
        for method, path in api_routes(app):
            if method != "GET":
                continue
            response = client.get(_fill(path, ids), headers=alpha.headers("read"))
            assert response.status_code < 500, (path, response.text)
            reads += 1
        for page in ("/", "/parts/motors", "/missions", "/bench-runs", "/rankings", "/shortlists", "/team"):
            client.get(page, headers=alpha.headers("read"))
    finally:
        event.remove(app.state.engine, "before_cursor_execute", record)
    assert reads > 20 and writes == [], writes


def test_key_use_is_recorded_off_the_request(app: FastAPI, client: TestClient, two_teams: Any) -> None:  # noqa: F811
    alpha, _, _ = two_teams
    assert client.get("/api/v1/parts/motors", headers=alpha.headers("read")).status_code == 200
    app.state.key_usage.flush()
    with app.state.sessionmaker() as s:
        used = s.scalars(select(ApiKey.last_used_at).where(ApiKey.team_id == alpha.team_id, ApiKey.scope == "read"))
        assert any(t is not None for t in used)
