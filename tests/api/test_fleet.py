"""Fleet plans API on the demo library: a plan over three airframes, its trade-off curve, BOM, bad input."""

from __future__ import annotations

import csv
import io
import time
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import demo_key, make_team

Headers = dict[str, str]
pytestmark = pytest.mark.demo_data


@pytest.fixture
def demo(app: FastAPI, client: TestClient) -> tuple[Headers, dict[str, int]]:
    return demo_key(app)


def wait(client: TestClient, headers: Headers, plan_id: int) -> dict[str, Any]:
    deadline = time.monotonic() + 120
    while True:
        doc: dict[str, Any] = client.get(f"/api/v1/fleet-plans/{plan_id}", headers=headers).json()
        if doc["status"] not in ("queued", "running"):
            return doc
        assert time.monotonic() < deadline
        time.sleep(0.05)


def body(missions: dict[str, int], **over: Any) -> dict[str, Any]:
    return {"name": "Demo fleet", "missions": [
        {"mission_id": missions["Q4 mapping survey"], "weight": 300, "airframes": 3},
        {"mission_id": missions["H6 structure inspection"], "weight": 120, "airframes": 2},
        {"mission_id": missions["V1 corridor cruise"], "weight": 200, "airframes": 1}],
        "candidates_per_mission": 60, **over}


def test_demo_fleet_plan_tradeoff_and_bom(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    started = client.post("/api/v1/fleet-plans", json=body(missions), headers=headers)
    assert started.status_code == 202 and set(started.json()) >= {"id", "status"}
    doc = wait(client, headers, started.json()["id"])
    assert doc["status"] == "done", doc
    result = doc["result"]
    assert result["status"] == "optimal" and len(result["assignments"]) == 3
    for a in result["assignments"]:
        assert set(a) >= {"mission_id", "battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel",
                          "metric_value", "loss_vs_own_best"}
        assert a["loss_vs_own_best"] >= 0
    assert set(result["stocked"]) == {"batteries", "escs", "motors", "propellers"}
    # contract: objective = Σ weight × cruise power (+ stocking cost, 0 here)
    weights = {m["mission_id"]: m["weight"] for m in doc["missions"]}
    expected = sum(weights[a["mission_id"]] * a["cruise_power_w"] for a in result["assignments"])
    assert result["objective"] == pytest.approx(expected, rel=1e-9)
    curve = doc["tradeoff"]
    assert curve and all(set(p) >= {"part_numbers", "objective"} for p in curve)
    objectives = [p["objective"] for p in curve]
    assert objectives == sorted(objectives, reverse=True)  # more part numbers never cost more power
    assert curve[-1]["objective"] == pytest.approx(result["fleet_metric"], rel=1e-9)
    bom = list(csv.DictReader(io.StringIO(client.get(f"/api/v1/fleet-plans/{started.json()['id']}/bom.csv",
                                                     headers=headers).text)))
    motors = [r for r in bom if r["kind"] == "motors"]
    # by hand: quad 4 rotors × 3 airframes + hexa 6 × 2 + cruiser 1 × 1 motors in all
    assert sum(int(r["quantity"]) for r in motors) == 4 * 3 + 6 * 2 + 1 * 1
    props = [r for r in bom if r["kind"] == "propellers"]
    # ...and propellers by rotation: CW 2 × 3 + 3 × 2 + 0, CCW 2 × 3 + 3 × 2 + 1 (the cruiser's single puller)
    assert sum(int(r["quantity"]) for r in props if r["rotation"] == "CW") == 2 * 3 + 3 * 2
    assert sum(int(r["quantity"]) for r in props if r["rotation"] == "CCW") == 2 * 3 + 3 * 2 + 1
    spared = list(csv.DictReader(io.StringIO(client.get(
        f"/api/v1/fleet-plans/{started.json()['id']}/bom.csv?spares_percent=25", headers=headers).text)))
    for line in spared:
        assert int(line["spares"]) == -(-int(line["quantity"]) * 25 // 100)  # ceil(quantity / 4)
        assert int(line["order_quantity"]) == int(line["quantity"]) + int(line["spares"])


def test_a_plan_turns_into_shortlists_through_the_api(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    plan = client.post("/api/v1/fleet-plans", json=body(missions), headers=headers).json()["id"]
    doc = wait(client, headers, plan)
    created = client.post(f"/api/v1/fleet-plans/{plan}/shortlists", headers=headers)
    assert created.status_code == 201, created.text
    lists = created.json()
    assert sorted(s["name"] for s in lists) == sorted(f"Demo fleet: {m['name']}" for m in doc["missions"])
    for shortlist in lists:
        (entry,) = shortlist["entries"]
        assignment = next(a for a in doc["result"]["assignments"] if a["mission_id"] == shortlist["mission_id"])
        assert {k: entry[k] for k in ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel")} == {
            k: assignment[k] for k in ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel")}
    again = client.post(f"/api/v1/fleet-plans/{plan}/shortlists", headers=headers).json()
    assert all(s["name"].endswith(" 2") for s in again)  # a second time: new names, nothing overwritten


def test_one_battery_for_quad_hexa_and_cruiser_explains_the_conflict(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    doc = wait(client, headers, client.post("/api/v1/fleet-plans", json=body(missions, one_battery=True),
                                            headers=headers).json()["id"])
    result = doc["result"]
    if result["status"] == "infeasible":
        explanation = result["infeasibility"]
        assert "one_battery" in explanation["binding"] and len(explanation["conflicting_missions"]) >= 2
    else:  # a common pack exists: the plan must then stock exactly one battery
        assert len(result["stocked"]["batteries"]) == 1


def test_bad_input(client: TestClient, demo: Any, app: FastAPI) -> None:
    headers, missions = demo
    assert client.post("/api/v1/fleet-plans", json={"missions": []}, headers=headers).status_code == 422
    assert client.post("/api/v1/fleet-plans", json={"missions": [{"mission_id": 99999}]},
                       headers=headers).status_code == 422
    zero_k = client.post("/api/v1/fleet-plans", json=body(missions, candidates_per_mission=0), headers=headers)
    assert zero_k.status_code == 422 and zero_k.json()["errors"][0]["field"] == "candidates_per_mission"
    other = make_team(app, "Elsewhere")
    foreign = client.post("/api/v1/fleet-plans", json=body(missions), headers=other.headers())
    assert foreign.status_code == 422 and foreign.json()["errors"][0]["field"] == "missions.0.mission_id"
    twice = {"missions": [{"mission_id": missions["Q4 mapping survey"]}] * 2}
    assert client.post("/api/v1/fleet-plans", json=twice, headers=headers).status_code == 422


def test_propellers_go_only_where_they_are_made_for(client: TestClient, demo: Any) -> None:
    """The demo stocks multirotor and fixed-wing propellers: a plan never puts a fixed-wing one on the quad or the
    hexa, nor a multirotor one on the cruiser (the engine refuses them under prop_application)."""
    headers, missions = demo
    props = {p["id"]: p["application"] for p in client.get("/api/v1/parts/propellers?page_size=500",
                                                           headers=headers).json()["items"]}
    assert set(props.values()) == {"multirotor", "fixed_wing"}
    doc = wait(client, headers, client.post("/api/v1/fleet-plans", json=body(missions), headers=headers).json()["id"])
    kinds = {m["mission_id"]: ("cruise" if m["name"] == "V1 corridor cruise" else "hover") for m in doc["missions"]}
    points = [doc["result"]["assignments"], *(p["assignments"] for p in doc["tradeoff"])]
    for assignment in (a for point in points for a in point):
        made_for = props[assignment["propeller_id"]]
        assert made_for == ("fixed_wing" if kinds[assignment["mission_id"]] == "cruise" else "multirotor")
    ranking = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"], "top_n": 5},
                          headers=headers).json()["id"]
    deadline = time.monotonic() + 60
    while (status := client.get(f"/api/v1/rankings/{ranking}", headers=headers).json())["status"] != "done":
        assert time.monotonic() < deadline
        time.sleep(0.05)
    assert status["rejected"]["prop_application"] > 0  # the 12x8 and 13x8 fixed-wing props fit the quad's 13 in
