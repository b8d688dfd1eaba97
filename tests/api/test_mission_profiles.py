"""Missions with a flight profile through the API: stored as given, validated, ranked and explained."""

from __future__ import annotations

from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.api.test_rankings import wait_done
from tests.factories import demo_key

pytestmark = pytest.mark.demo_data

PROFILE = [
    {"kind": "hover", "label": "take-off checks", "duration_s": 60},
    {"kind": "hover", "label": "survey", "duration_s": 420},
    {"kind": "hover", "label": "landing", "duration_s": 45},
]


def _airframe(client: TestClient, headers: dict[str, str], name: str = "NF-Q4 Mapper") -> int:
    return next(a["id"] for a in client.get("/api/v1/airframes", headers=headers).json() if a["name"] == name)


def _mission(client: TestClient, headers: dict[str, str], **changes: Any) -> Any:
    body = {"name": "Profile survey", "airframe_id": _airframe(client, headers), "kind": "hover",
            "payload_mass_g": 350, "max_all_up_mass_g": 3000, "segments": PROFILE, "reserve_min": 3} | changes
    return client.post("/api/v1/missions", json=body, headers=headers)


def test_a_profile_is_stored_ranked_and_explained(app: FastAPI, client: TestClient) -> None:
    headers, _ = demo_key(app)
    created = _mission(client, headers)
    assert created.status_code == 201, created.text
    mission = created.json()
    assert [s["label"] for s in mission["segments"]] == ["take-off checks", "survey", "landing"]
    assert mission["reserve_min"] == 3
    started = client.post("/api/v1/rankings", json={"mission_id": mission["id"], "objective": "profile_energy",
                                                    "top_n": 5}, headers=headers)
    assert started.status_code == 202, started.text
    done = wait_done(client, headers, started.json()["id"])
    assert done["status"] == "done", done
    results = client.get(f"/api/v1/rankings/{done['id']}/results", headers=headers).json()
    rows = results["items"] if isinstance(results, dict) else results
    assert rows, "the demo library flies this profile"
    energies = [r["profile"]["total_energy_wh"] for r in rows]
    assert energies == sorted(energies)  # the objective orders by profile energy
    first = rows[0]["profile"]
    assert first["completed"] and first["completed_share"] == 1.0
    assert [s["label"] for s in first["segments"]] == ["take-off checks", "survey", "landing", "reserve"]
    # the state of charge carries over: each segment starts where the previous one ended
    for a, b in zip(first["segments"], first["segments"][1:], strict=False):
        assert b["start_state_of_charge"] == a["end_state_of_charge"]
    assert first["total_energy_wh"] == pytest.approx(sum(s["energy_wh"] for s in first["segments"][:3]), rel=1e-12)
    # the ranking counts the profile's rejections under its own reason
    assert "profile_reserve_short" in done["rejected"]
    explained = client.post("/api/v1/explain", json={
        "mission_id": mission["id"], "battery_id": rows[0]["battery_id"], "esc_id": rows[0]["esc_id"],
        "motor_id": rows[0]["motor_id"], "propeller_id": rows[0]["propeller_id"],
        "packs_in_parallel": rows[0]["packs_in_parallel"]}, headers=headers)
    assert explained.status_code == 200, explained.text
    check = next(c for c in explained.json()["checks"] if c["reason"] == "profile_reserve_short")
    assert check["passed"] is True


def test_a_long_profile_is_refused_with_its_reason(app: FastAPI, client: TestClient) -> None:
    headers, _ = demo_key(app)
    long = [{"kind": "hover", "duration_s": 3600, "label": "an hour"}]
    mission = _mission(client, headers, name="Too long", segments=long).json()
    started = client.post("/api/v1/rankings", json={"mission_id": mission["id"], "top_n": 5}, headers=headers)
    done = wait_done(client, headers, started.json()["id"])
    assert done["feasible"] == 0
    assert done["rejected"]["profile_reserve_short"] > 0


@pytest.mark.parametrize(("changes", "field"), [
    ({"segments": [{"kind": "hover"}]}, "segments.0.duration_s"),  # no duration, distance or height
    ({"segments": [{"kind": "hover", "duration_s": 60, "distance_m": 100}]}, "segments.0.duration_s"),
    ({"segments": [{"kind": "forward", "distance_m": 500}]}, "segments.0.airspeed_m_s"),
    ({"segments": [{"kind": "climb", "height_m": 50}]}, "segments.0.climb_rate_m_s"),
    ({"segments": [{"kind": "hover", "duration_s": -5}]}, "segments.0.duration_s"),
    ({"segments": [{"kind": "cruise", "duration_s": 60}]}, "segments.0.kind"),  # a fixed-wing segment on a multirotor
    ({"segments": [{"kind": "hover", "duration_s": 60, "colour": "red"}]}, "segments.0.colour"),
    ({"segments": [], "reserve_min": 5}, "reserve_min"),
    ({"segments": [{"kind": "hover", "duration_s": 10}] * 41}, "segments"),
])
def test_bad_profiles_are_refused_naming_the_field(app: FastAPI, client: TestClient, changes: dict[str, Any],
                                                    field: str) -> None:
    headers, _ = demo_key(app)
    before = client.get("/api/v1/missions", headers=headers).json()
    refused = _mission(client, headers, **changes)
    assert refused.status_code == 422, refused.text
    fields = [e["field"] for e in refused.json()["errors"]]
    assert any(f.startswith(field) for f in fields), fields
    assert client.get("/api/v1/missions", headers=headers).json() == before  # nothing half-saved
