"""API keys resolved a moment ago are reused: revocation through this server holds at once, revocation elsewhere
within the cache's few seconds, and the cache can be turned off."""

from __future__ import annotations

import time
from datetime import UTC, datetime

from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import update

from server import key_cache
from server.db import transaction
from server.models import ApiKey
from server.security import api_key_hash
from tests.factories import login, make_team


def _motors(client: TestClient, headers: dict[str, str]) -> int:
    return client.get("/api/v1/parts/motors", headers=headers).status_code


def test_revoking_through_the_api_holds_at_once(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    assert _motors(client, team.headers("read")) == 200  # now in the cache
    keys = client.get("/api/v1/team/api-keys", headers=team.headers()).json()
    read_id = next(k["id"] for k in keys if k["scope"] == "read")
    csrf = login(client, team.owner_email)
    assert client.post(f"/api/v1/team/api-keys/{read_id}/revoke", headers={"X-CSRF-Token": csrf}).status_code == 200
    client.cookies.clear()
    assert _motors(client, team.headers("read")) == 401
    assert _motors(client, team.headers("write")) == 200


def test_a_key_revoked_by_another_process_stops_within_the_ttl(app: FastAPI, client: TestClient) -> None:
    key_cache.KEYS.ttl_s = 0.5
    team = make_team(app)
    assert _motors(client, team.headers("read")) == 200
    with transaction(app.state.sessionmaker) as session:  # not through this server: as another process would
        session.execute(update(ApiKey).where(ApiKey.key_hash == api_key_hash(team.read_key))
                        .values(revoked_at=datetime.now(UTC)))
    time.sleep(0.6)
    assert _motors(client, team.headers("read")) == 401


def test_unknown_keys_are_never_kept_and_the_cache_can_be_off(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    bad = {"Authorization": "Bearer lm_not_a_key"}
    assert _motors(client, bad) == 401 and key_cache.KEYS.get("lm_not_a_key") is None
    key_cache.KEYS.ttl_s = 0.0
    assert _motors(client, team.headers("read")) == 200
    assert key_cache.KEYS.get(team.read_key) is None
    with transaction(app.state.sessionmaker) as session:
        session.execute(update(ApiKey).where(ApiKey.key_hash == api_key_hash(team.read_key))
                        .values(revoked_at=datetime.now(UTC)))
    assert _motors(client, team.headers("read")) == 401  # looked up every time: refused at once


def test_a_cached_key_still_records_its_use(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    for _ in range(3):
        assert _motors(client, team.headers("read")) == 200
    app.state.key_usage.flush()
    keys = client.get("/api/v1/team/api-keys", headers=team.headers()).json()
    assert next(k for k in keys if k["scope"] == "read")["last_used_at"] is not None
