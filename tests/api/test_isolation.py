"""Team isolation and key scopes over EVERY /api/v1 route (enumerated from the app, so new routes are covered)."""

from __future__ import annotations

import json
import re
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.routing import APIRoute
from fastapi.testclient import TestClient

from tests.api.test_bench_runs import calibration_of, csv_of
from tests.factories import TeamFixture, login, make_team, part_payload

UNSAFE = {"POST", "PUT", "PATCH", "DELETE"}
# POST for a body, but they read and change nothing: read keys may call them.
COMPUTE_ONLY = {("POST", "/api/v1/predict"), ("POST", "/api/v1/explain")}
SECRET_NAME = "ALPHA-PRIVATE-7f3a"


def api_routes(app: FastAPI) -> list[tuple[str, str]]:
    """Every (method, path) of the JSON API, read from the app's own OpenAPI document.

    Every /api/v1 route is in the schema (test_no_api_route_hides_from_the_schema), so this list is complete.
    """
    out = []
    for path, operations in app.openapi()["paths"].items():
        if path.startswith("/api/v1"):
            out += [(method.upper(), path) for method in operations]
    assert len(out) > 20
    return sorted(out)


def _router_routes(router: object) -> list[APIRoute]:
    return [r for r in getattr(router, "routes", []) if isinstance(r, APIRoute)]


def test_no_api_route_hides_from_the_schema() -> None:
    """Every route of every module of ``server.api`` (found by walking the package, not listed by hand)."""
    import importlib
    import pkgutil

    import server.api

    modules = [importlib.import_module(f"server.api.{m.name}") for m in pkgutil.iter_modules(server.api.__path__)]
    routers = [m.router for m in modules if hasattr(m, "router")]
    assert len(routers) >= 9
    for router in routers:
        for route in _router_routes(router):
            assert route.include_in_schema, route.path
    # ...and every route of the application's API router is one of them.
    from server.api import api_router

    assert {r.path for r in _router_routes(api_router)} <= {
        "/api/v1" + r.path for router in routers for r in _router_routes(router)}


def _fill(path: str, ids: dict[str, int]) -> str:
    kind = re.search(r"/parts/(\w+)/", path)

    def value(match: re.Match[str]) -> str:
        name = match.group(1)
        if name == "part_id" and kind:
            return str(ids[f"part_id:{kind.group(1)}"])
        return str(ids[name])

    return re.sub(r"\{(\w+)\}", value, path)


@pytest.fixture
def two_teams(app: FastAPI, client: TestClient) -> tuple[TeamFixture, TeamFixture, dict[str, int]]:
    alpha, beta = make_team(app, "Alpha"), make_team(app, "Beta")
    h = alpha.headers()
    ids: dict[str, Any] = {}
    for kind in ("batteries", "escs", "motors", "propellers"):
        ids[f"part_id:{kind}"] = client.post(
            f"/api/v1/parts/{kind}", json=part_payload(kind, name=SECRET_NAME), headers=h
        ).json()["id"]
    ids["airframe_id"] = client.post(
        "/api/v1/airframes", json={"name": SECRET_NAME, "rotor_count": 4, "frame_mass_g": 1200}, headers=h
    ).json()["id"]
    ids["mission_id"] = client.post(
        "/api/v1/missions", json={"name": SECRET_NAME, "airframe_id": ids["airframe_id"], "kind": "hover"}, headers=h
    ).json()["id"]
    keys = client.get("/api/v1/team/api-keys", headers=h).json()
    ids["key_id"] = keys[0]["id"]
    shortlist = client.post(
        "/api/v1/shortlists", json={"name": SECRET_NAME, "mission_id": ids["mission_id"]}, headers=h
    )
    ids["shortlist_id"] = shortlist.json()["id"]
    entry = client.post(
        f"/api/v1/shortlists/{ids['shortlist_id']}/entries",
        headers=h,
        json={
            "battery_id": ids["part_id:batteries"],
            "esc_id": ids["part_id:escs"],
            "motor_id": ids["part_id:motors"],
            "propeller_id": ids["part_id:propellers"],
            "note": SECRET_NAME,
        },
    )
    assert entry.status_code == 201, entry.text
    ids["entry_id"] = entry.json()["id"]
    meta = {"motor_id": ids["part_id:motors"], "propeller_id": ids["part_id:propellers"],
            "esc_id": ids["part_id:escs"], "supply_voltage_v": 7.4, "notes": SECRET_NAME}
    run = client.post("/api/v1/bench-runs", headers=h, data={"metadata": json.dumps(meta)},
                      files={"file": ("s.csv", csv_of("m_a_p_1_v7p4"), "text/csv")})
    assert run.status_code == 201, run.text
    ids["run_id"] = run.json()["id"]
    ids["refit_id"] = run.json()["calibration"]["refit_id"]
    ids["calibration_id"] = calibration_of(client, alpha, run)["calibrations"][0]["id"]
    ranking = client.post("/api/v1/rankings", json={"mission_id": ids["mission_id"], "top_n": 5}, headers=h)
    assert ranking.status_code == 202, ranking.text
    ids["ranking_id"] = ranking.json()["id"]
    for _ in range(400):
        if client.get(f"/api/v1/rankings/{ids['ranking_id']}", headers=h).json()["status"] != "queued":
            break
    plan = client.post("/api/v1/fleet-plans", json={"name": SECRET_NAME, "missions": [
        {"mission_id": ids["mission_id"]}], "candidates_per_mission": 5}, headers=h)
    assert plan.status_code == 202, plan.text
    ids["plan_id"] = plan.json()["id"]
    return alpha, beta, ids


def test_every_route_needs_credentials(app: FastAPI, client: TestClient, two_teams: Any) -> None:
    _, _, ids = two_teams
    for method, path in api_routes(app):
        response = client.request(method, _fill(path, ids))
        assert response.status_code == 401, (method, path, response.status_code)
        assert response.headers["content-type"].startswith("application/problem+json")


def _body(method: str, path: str, ids: dict[str, int]) -> dict[str, Any]:
    """A body that passes validation, so the only thing left to fail is the ownership check."""
    if path.endswith("/shortlists/{shortlist_id}") and method == "PATCH":
        return {"name": "x"}
    if path.startswith("/api/v1/calibrations/"):
        return {"active": True}
    if path.endswith("/reorder"):
        return {"entry_ids": [ids["entry_id"]]}
    if path.endswith("/shortlists/{shortlist_id}/entries") and method == "POST":
        return {"ranking_id": 1, "rank": 1}
    if path.endswith("/rankings/{ranking_id}/shortlist"):
        return {"rank": 1}
    return {}


def test_other_team_sees_nothing_and_gets_404(app: FastAPI, client: TestClient, two_teams: Any) -> None:
    alpha, beta, ids = two_teams
    checked_ids = 0
    for method, path in api_routes(app):
        url = _fill(path, ids)
        response = client.request(method, url, headers=beta.headers("write"), json=_body(method, path, ids))
        assert SECRET_NAME not in response.text, (method, path)
        if "{" in path:
            assert response.status_code == 404, (method, path, response.status_code, response.text)
            checked_ids += 1
        else:
            assert response.status_code != 500, (method, path)
    assert checked_ids >= 10
    # ...and Alpha's data is untouched.
    for kind in ("batteries", "escs", "motors", "propellers"):
        own = client.get(f"/api/v1/parts/{kind}/{ids[f'part_id:{kind}']}", headers=alpha.headers("read"))
        assert own.status_code == 200 and own.json()["name"] == SECRET_NAME


def test_read_keys_and_viewers_cannot_write(app: FastAPI, client: TestClient, two_teams: Any) -> None:
    alpha, _, ids = two_teams
    writes = [(m, p) for m, p in api_routes(app) if m in UNSAFE and (m, p) not in COMPUTE_ONLY]
    assert writes
    for method, path in writes:
        response = client.request(
            method, _fill(path, ids), headers=alpha.headers("read"), json=_body(method, path, ids)
        )
        assert response.status_code == 403, (method, path, response.status_code, response.text)


def test_revoked_key_stops_working(client: TestClient, two_teams: Any) -> None:
    alpha, _, _ = two_teams
    keys = client.get("/api/v1/team/api-keys", headers=alpha.headers()).json()
    read_id = next(k["id"] for k in keys if k["scope"] == "read")
    # A write key may not revoke another key; the team's owner may.
    assert client.post(f"/api/v1/team/api-keys/{read_id}/revoke", headers=alpha.headers()).status_code == 403
    csrf = login(client, alpha.owner_email)
    assert client.post(f"/api/v1/team/api-keys/{read_id}/revoke", headers={"X-CSRF-Token": csrf}).status_code == 200
    client.cookies.clear()
    assert client.get("/api/v1/parts/motors", headers=alpha.headers("read")).status_code == 401
    assert client.get("/api/v1/parts/motors", headers=alpha.headers("write")).status_code == 200


def test_malformed_authorization_header(client: TestClient, two_teams: Any) -> None:
    assert client.get("/api/v1/parts/motors", headers={"Authorization": "Basic abc"}).status_code == 401
    assert client.get("/api/v1/parts/motors", headers={"Authorization": "Bearer lm_nope"}).status_code == 401
