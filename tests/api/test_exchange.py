"""Library export/import: a lossless round trip into another team; a bad file imports nothing."""

from __future__ import annotations

from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.services import teams
from tests.factories import make_team

VOLATILE = {"exported_at", "team"}


def strip_refs(doc: dict[str, Any]) -> dict[str, Any]:
    """The file without its local refs (they are ids, which differ between teams)."""
    out = {k: v for k, v in doc.items() if k not in VOLATILE}
    out["parts"] = {k: [{f: v for f, v in p.items() if f != "ref"} for p in rows] for k, rows in doc["parts"].items()}
    out["airframes"] = [{f: v for f, v in a.items() if f != "ref"} for a in doc["airframes"]]
    out["missions"] = [{f: v for f, v in m.items() if f not in ("ref", "airframe_id")} for m in doc["missions"]]
    out["bench_runs"] = [{f: v for f, v in r.items() if not f.endswith("ref")} for r in doc["bench_runs"]]
    out["calibrations"] = [{f: v for f, v in c.items() if not f.endswith("ref") and f != "run_refs"}
                           for c in doc["calibrations"]]
    return out


@pytest.mark.demo_data
def test_round_trip_into_another_team_is_lossless(app: FastAPI, client: TestClient) -> None:
    with transaction(app.state.sessionmaker) as session:
        team = teams.get_team_by_name(session, name="Northfold Survey")
        _, key = teams.create_api_key(session, team_id=team.id, scope="read")
    exported = client.get("/api/v1/export", headers={"Authorization": f"Bearer {key}"}).json()
    assert exported["format"] == "liftmatch-library" and exported["bench_runs"] and exported["calibrations"]
    other = make_team(app, "Copy")
    created = client.post("/api/v1/import", json=exported, headers=other.headers())
    assert created.status_code == 201, created.text
    assert created.json()["motors"] == len(exported["parts"]["motors"])
    again = client.get("/api/v1/export", headers=other.headers()).json()
    assert strip_refs(again) == strip_refs(exported)
    # The copy works: a mission of the copy ranks with the copied, calibrated parts.
    mission = client.get("/api/v1/missions", headers=other.headers()).json()[0]["id"]
    assert client.post("/api/v1/rankings", json={"mission_id": mission}, headers=other.headers()).status_code == 202


def test_a_bad_file_imports_nothing(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    assert client.post("/api/v1/import", json={"format": "other"}, headers=h).status_code == 422
    bad = {"format": "liftmatch-library", "version": 1, "parts": {
        "motors": [{"ref": 1, "name": "ok", "mass_g": 50, "kv_rpm_per_v": 900},
                   {"ref": 2, "name": "bad", "mass_g": 50, "kv_rpm_per_v": 5}]},
        "missions": [{"ref": 1, "name": "m", "airframe_id": 77, "kind": "hover"}]}
    response = client.post("/api/v1/import", json=bad, headers=h)
    assert response.status_code == 422
    fields = {e["field"] for e in response.json()["errors"]}
    assert "parts.motors.1.kv_rpm_per_v" in fields and "missions.0.airframe_id" in fields
    assert client.get("/api/v1/parts/motors", headers=h).json()["total"] == 0
    assert client.post("/api/v1/import", json=bad, headers=team.headers("read")).status_code == 403


def test_round_trip_keeps_thrust_sign_and_idle_offsets(app: FastAPI, client: TestClient) -> None:
    """A run flipped on import (thrust_sign -1) and one with a negative idle reading survive export and import
    unchanged: the stored samples are the corrected ones and are not flipped again. Sweeps: the published 5-inch
    bench data (tests/data/reference/bench-5in, PROVENANCE.md)."""
    from tests.api.test_bench_runs import csv_of, upload
    from tests.factories import part_payload

    team = make_team(app)
    h = team.headers()
    ids = {key: client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h).json()["id"]
           for key, kind in (("motor", "motors"), ("prop", "propellers"), ("esc", "escs"))}
    assert upload(client, team, ids, csv_of("m_m_p_8_v11p1"), supply_voltage_v=11.1, thrust_sign=-1).status_code == 201
    assert upload(client, team, ids, csv_of("m_e_p_5_v7p4"), supply_voltage_v=7.4).status_code == 201
    exported = client.get("/api/v1/export", headers=h).json()
    assert [r["thrust_sign"] for r in exported["bench_runs"]] == [-1, 1]
    assert exported["bench_runs"][1]["samples"][0]["thrust_n"] == -0.0016
    other = make_team(app, "Copy")
    assert client.post("/api/v1/import", json=exported, headers=other.headers()).status_code == 201
    again = client.get("/api/v1/export", headers=other.headers()).json()
    assert strip_refs(again) == strip_refs(exported)
    copied = client.get("/api/v1/bench-runs", headers=other.headers()).json()
    assert sorted(r["thrust_sign"] for r in copied) == [-1, 1]
    flipped = next(r for r in copied if r["thrust_sign"] == -1)
    samples = client.get(f"/api/v1/bench-runs/{flipped['id']}", headers=other.headers()).json()["samples"]
    assert samples[-1]["thrust_n"] == 2.3087  # the published -2.3087 N, flipped once
