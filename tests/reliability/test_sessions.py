"""Sessions end when they should (logout, password change, deactivation, removal), log-ins are throttled, unknown
and known e-mails cost the same, and only owners manage write keys and other people's keys."""

from __future__ import annotations

import pytest
from argon2 import PasswordHasher
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.services import teams
from tests.factories import PASSWORD, TeamFixture, login, make_team


def _login_as(app: FastAPI, email: str, password: str = PASSWORD) -> tuple[TestClient, str]:
    client = TestClient(app)
    return client, login(client, email, password)


def _logged_in(client: TestClient) -> bool:
    return client.get("/", follow_redirects=False).status_code == 200


@pytest.fixture
def team(client: TestClient) -> TeamFixture:
    return make_team(client.app, "Sessions")  # type: ignore[arg-type]


def test_logout_kills_a_replayed_cookie(client: TestClient, team: TeamFixture) -> None:
    csrf = login(client, team.owner_email)
    stolen = dict(client.cookies)
    assert client.post("/logout", data={"csrf_token": csrf}, follow_redirects=False).status_code == 303
    replay = TestClient(client.app, cookies=stolen)
    assert replay.get("/", follow_redirects=False).status_code == 303  # back to the login page
    assert replay.get("/api/v1/parts/motors").status_code == 401


def test_password_change_ends_other_sessions(client: TestClient, team: TeamFixture) -> None:
    app: FastAPI = client.app  # type: ignore[assignment]
    other, _ = _login_as(app, team.owner_email)
    csrf = login(client, team.owner_email)
    wrong = client.post("/team/password", data={"csrf_token": csrf, "current_password": "nope",
                                                "new_password": "new-password-1", "repeat_password": "new-password-1"})
    assert "is not your current password" in wrong.text and _logged_in(other)
    done = client.post("/team/password", data={"csrf_token": csrf, "current_password": PASSWORD,
                                               "new_password": "new-password-1", "repeat_password": "new-password-1"})
    assert "Password changed" in done.text
    assert _logged_in(client) and not _logged_in(other)
    assert _logged_in(_login_as(app, team.owner_email, "new-password-1")[0])


def test_deactivation_and_removal_end_sessions(client: TestClient, team: TeamFixture) -> None:
    app: FastAPI = client.app  # type: ignore[assignment]
    viewer, _ = _login_as(app, team.viewer_email)
    with transaction(app.state.sessionmaker) as s:
        teams.set_active(s, email=team.viewer_email, active=False)
    assert not _logged_in(viewer)
    with transaction(app.state.sessionmaker) as s:
        teams.set_active(s, email=team.viewer_email, active=True)
    viewer, _ = _login_as(app, team.viewer_email)
    csrf = login(client, team.owner_email)
    members = client.get("/api/v1/team/members").json()
    viewer_id = next(m["user_id"] for m in members if m["email"] == team.viewer_email)
    assert client.post(f"/team/members/{viewer_id}/remove", data={"csrf_token": csrf},
                       follow_redirects=False).status_code == 303
    assert not _logged_in(viewer)
    owner_id = next(m["user_id"] for m in members if m["email"] == team.owner_email)
    last = client.post(f"/team/members/{owner_id}/remove", data={"csrf_token": csrf})
    assert "last owner" in last.text


def test_login_is_throttled_per_account_with_retry_after(client: TestClient, team: TeamFixture) -> None:
    settings = client.app.state.settings  # type: ignore[attr-defined]
    token = client.get("/login").text.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]
    for _ in range(settings.login_failures_per_account):
        bad = client.post("/login", data={"email": team.owner_email, "password": "wrong", "csrf_token": token})
        assert bad.status_code == 401
    blocked = client.post("/login", data={"email": team.owner_email, "password": PASSWORD, "csrf_token": token})
    assert blocked.status_code == 429 and 0 < int(blocked.headers["retry-after"]) <= settings.login_window_s
    assert "Too many failed log-ins" in blocked.text
    # Another account from the same client still gets in (until the per-client limit).
    assert client.post("/login", data={"email": team.viewer_email, "password": PASSWORD, "csrf_token": token},
                       follow_redirects=False).status_code == 303


def test_login_is_throttled_per_client(client: TestClient, team: TeamFixture) -> None:
    settings = client.app.state.settings  # type: ignore[attr-defined]
    token = client.get("/login").text.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]
    for i in range(settings.login_failures_per_client):
        client.post("/login", data={"email": f"nobody{i}@x.example", "password": "x", "csrf_token": token})
    blocked = client.post("/login", data={"email": team.owner_email, "password": PASSWORD, "csrf_token": token})
    assert blocked.status_code == 429 and "this address" in blocked.text


def test_unknown_and_known_emails_cost_one_verification_each(
    client: TestClient, team: TeamFixture, monkeypatch: pytest.MonkeyPatch
) -> None:
    calls: list[str] = []
    original_verify, original_hash = PasswordHasher.verify, PasswordHasher.hash
    monkeypatch.setattr(PasswordHasher, "verify", lambda self, h, p: calls.append("verify") or original_verify(
        self, h, p))
    app: FastAPI = client.app  # type: ignore[assignment]
    with transaction(app.state.sessionmaker) as s:
        teams.authenticate(s, settings=app.state.settings, email="nobody@else.example", password="x")  # warm the dummy
    monkeypatch.setattr(PasswordHasher, "hash", lambda self, p: calls.append("hash") or original_hash(self, p))
    calls.clear()
    with transaction(app.state.sessionmaker) as s:
        teams.authenticate(s, settings=app.state.settings, email="nobody@else.example", password="x")
    unknown = list(calls)
    calls.clear()
    with transaction(app.state.sessionmaker) as s:
        teams.authenticate(s, settings=app.state.settings, email=team.owner_email, password="x")
    assert unknown == calls == ["verify"]


def test_adding_an_existing_account_never_touches_its_password(client: TestClient, team: TeamFixture) -> None:
    app: FastAPI = client.app  # type: ignore[assignment]
    other = make_team(app, "Elsewhere")
    csrf = login(client, other.owner_email)
    response = client.post("/team/members", data={"csrf_token": csrf, "email": team.owner_email, "role": "viewer",
                                                   "password": "attacker-knows-this"})
    assert "already has a liftmatch account" in response.text
    assert client.post("/login", data={"email": team.owner_email, "password": "attacker-knows-this",
                                       "csrf_token": csrf}).status_code == 401
    assert _logged_in(_login_as(app, team.owner_email)[0])


def test_only_owners_manage_write_keys_and_other_peoples_keys(client: TestClient, team: TeamFixture) -> None:
    app: FastAPI = client.app  # type: ignore[assignment]
    with transaction(app.state.sessionmaker) as s:
        teams.create_user(s, settings=app.state.settings, email="eng@sessions.example", password=PASSWORD,
                          team=teams.get_team_by_name(s, name="Sessions"), role="engineer")
    engineer, csrf = _login_as(app, "eng@sessions.example")
    h = {"X-CSRF-Token": csrf}
    assert engineer.post("/api/v1/team/api-keys", json={"scope": "write"}, headers=h).status_code == 403
    mine = engineer.post("/api/v1/team/api-keys", json={"scope": "read", "name": "mine"}, headers=h)
    assert mine.status_code == 201
    keys = engineer.get("/api/v1/team/api-keys").json()
    owners_key = next(k for k in keys if k["scope"] == "write")
    assert engineer.post(f"/api/v1/team/api-keys/{owners_key['id']}/revoke", headers=h).status_code == 403
    assert engineer.post(f"/api/v1/team/api-keys/{mine.json()['id']}/revoke", headers=h).status_code == 200
    # A write key revokes only itself.
    read_key = next(k for k in keys if k["scope"] == "read" and k["name"] != "mine")
    by_key = client.post(f"/api/v1/team/api-keys/{read_key['id']}/revoke", headers=team.headers())
    assert by_key.status_code == 403
    assert client.post(f"/api/v1/team/api-keys/{owners_key['id']}/revoke", headers=team.headers()).status_code == 200
    owner, owner_csrf = _login_as(app, team.owner_email)
    assert owner.post(f"/api/v1/team/api-keys/{read_key['id']}/revoke",
                      headers={"X-CSRF-Token": owner_csrf}).status_code == 200
