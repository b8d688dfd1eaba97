"""Cookie-authenticated writes need the session's CSRF token; keys do not (they are not ambient)."""

from __future__ import annotations

from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import login, make_team, part_payload


def test_api_write_with_session_needs_csrf_header(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    refused = client.post("/api/v1/parts/motors", json=part_payload("motors"))
    assert refused.status_code == 403 and "CSRF" in refused.json()["detail"]
    wrong = client.post("/api/v1/parts/motors", json=part_payload("motors"), headers={"X-CSRF-Token": "nope"})
    assert wrong.status_code == 403
    accepted = client.post("/api/v1/parts/motors", json=part_payload("motors"), headers={"X-CSRF-Token": token})
    assert accepted.status_code == 201
    assert client.get("/api/v1/parts/motors").json()["total"] == 1  # reads need no token


def test_page_form_without_csrf_is_refused(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    form = {k: str(v) for k, v in part_payload("motors").items() if not isinstance(v, list)}
    refused = client.post("/parts/motors", data=form, follow_redirects=False)
    assert refused.status_code == 403
    accepted = client.post("/parts/motors", data={**form, "csrf_token": token}, follow_redirects=False)
    assert accepted.status_code == 303
    assert client.get("/api/v1/parts/motors").json()["total"] == 1


def test_login_form_needs_csrf(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    client.get("/login")
    response = client.post("/login", data={"email": team.owner_email, "password": "x"}, follow_redirects=False)
    assert response.status_code == 403
