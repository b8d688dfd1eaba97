"""Rankings API on the demo library: job lifecycle, counts, paging/sorting/filters, Pareto, reproducibility."""

from __future__ import annotations

import time
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.models import Ranking
from server.selection import ENGINE_VERSION, rank
from server.services.ranking_inputs import engine_inputs
from tests.factories import demo_key, make_team

Headers = dict[str, str]
pytestmark = pytest.mark.demo_data


@pytest.fixture
def demo(app: FastAPI, client: TestClient) -> tuple[Headers, dict[str, int]]:
    return demo_key(app)


def wait_done(client: TestClient, headers: Headers, ranking_id: int, timeout_s: float = 60) -> dict[str, Any]:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        status: dict[str, Any] = client.get(f"/api/v1/rankings/{ranking_id}", headers=headers).json()
        if status["status"] in ("done", "failed", "cancelled"):
            return status
        time.sleep(0.05)
    raise AssertionError("ranking did not finish")


def test_ranking_job_runs_and_counts_add_up(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    started = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"],
                                                    "objective": "cruise_power", "top_n": 20}, headers=headers)
    assert started.status_code == 202
    body = started.json()
    assert set(body) >= {"id", "status"} and body["status"] == "queued"
    status = wait_done(client, headers, body["id"])
    assert status["status"] == "done" and status["progress"] == 1.0
    assert status["engine_version"] == ENGINE_VERSION and status["elapsed_s"] >= 0
    assert status["feasible"] > 0
    assert status["feasible"] + sum(status["rejected"].values()) == status["combinations"]
    results = client.get(f"/api/v1/rankings/{body['id']}/results", headers=headers).json()
    assert results["total"] == 20 and [r["rank"] for r in results["items"]] == list(range(1, 21))
    first = results["items"][0]
    for key in ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel", "all_up_mass_g",
                "endurance_min", "cost"):
        assert key in first
    assert set(first["cruise"]) >= {"duty", "rpm", "electrical_power_w", "specific_thrust_g_per_w", "bus_current_a"}
    assert set(first["full_throttle"]) >= {"thrust_to_weight", "motor_current_a", "bus_current_a"}
    powers = [r["cruise"]["electrical_power_w"] for r in results["items"]]
    assert powers == sorted(powers)  # objective: lowest cruise power first
    assert first["cruise"]["electrical_power_craft_w"] == first["cruise"]["electrical_power_w"]
    assert first["cruise"]["thrust_per_rotor_n"] == first["cruise"]["thrust_n"]
    assert first["full_throttle"]["motor_current_per_rotor_a"] == first["full_throttle"]["motor_current_a"]


def test_results_sort_filter_page_and_pareto(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    rid = client.post("/api/v1/rankings", json={"mission_id": missions["H6 structure inspection"], "top_n": 40},
                      headers=headers).json()["id"]
    wait_done(client, headers, rid)
    by_endurance = client.get(f"/api/v1/rankings/{rid}/results?sort=-endurance_min&page_size=10",
                              headers=headers).json()
    values = [r["endurance_min"] for r in by_endurance["items"]]
    assert values == sorted(values, reverse=True) and len(values) == 10
    page2 = client.get(f"/api/v1/rankings/{rid}/results?sort=-endurance_min&page_size=10&page=2",
                       headers=headers).json()
    assert page2["items"][0]["endurance_min"] <= values[-1]
    cells = by_endurance["items"][0]["cells_series"]
    filtered = client.get(f"/api/v1/rankings/{rid}/results?cells={cells}", headers=headers).json()
    assert filtered["total"] >= 1 and all(r["cells_series"] == cells for r in filtered["items"])
    ratings = {e["id"]: e["continuous_current_a"]
               for e in client.get("/api/v1/parts/escs?page_size=100", headers=headers).json()["items"]}
    everything = client.get(f"/api/v1/rankings/{rid}/results?page_size=500", headers=headers).json()["items"]
    cheap_escs = client.get(f"/api/v1/rankings/{rid}/results?esc_max_a=50&page_size=500", headers=headers).json()
    expected = sorted(r["rank"] for r in everything if ratings[r["esc_id"]] <= 50)
    assert 0 < len(expected) < len(everything)  # the filter must keep some rows and drop others to mean anything
    assert sorted(r["rank"] for r in cheap_escs["items"]) == expected
    assert all(ratings[r["esc_id"]] <= 50 for r in cheap_escs["items"])
    pareto = client.get(f"/api/v1/rankings/{rid}/pareto", headers=headers).json()
    assert pareto["total"] >= 1 and all(r["pareto"] for r in pareto["items"])
    assert client.get(f"/api/v1/rankings/{rid}/results?sort=colour", headers=headers).status_code == 422


def test_stored_ranking_reproduces_from_its_snapshot(client: TestClient, demo: Any, app: FastAPI) -> None:
    headers, missions = demo
    rid = client.post("/api/v1/rankings", json={"mission_id": missions["V1 corridor cruise"], "top_n": 10},
                      headers=headers).json()["id"]
    wait_done(client, headers, rid)
    stored = client.get(f"/api/v1/rankings/{rid}/results", headers=headers).json()["items"]
    with app.state.sessionmaker() as session:
        ranking = session.get(Ranking, rid)
        assert ranking is not None
        library, mission = engine_inputs(ranking.inputs)
    again = rank(library, mission, objective="cruise_power", top_n=10)
    assert [(r.battery_id, r.esc_id, r.motor_id, r.propeller_id, r.packs_in_parallel) for r in again.top] == [
        (r["battery_id"], r["esc_id"], r["motor_id"], r["propeller_id"], r["packs_in_parallel"]) for r in stored]
    assert [r.cruise["electrical_power_w"] for r in again.top] == [r["cruise"]["electrical_power_w"] for r in stored]


def test_bad_input_and_isolation(client: TestClient, demo: Any, app: FastAPI) -> None:
    headers, missions = demo
    assert client.post("/api/v1/rankings", json={"mission_id": 99999}, headers=headers).status_code == 422
    bad_objective = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"],
                                                          "objective": "fastest"}, headers=headers)
    assert bad_objective.status_code == 422 and bad_objective.json()["errors"][0]["field"] == "objective"
    other = make_team(app, "Rivals")
    foreign = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"]},
                          headers=other.headers())
    assert foreign.status_code == 422
    rid = client.post("/api/v1/rankings", json={"mission_id": missions["Q4 mapping survey"], "top_n": 5},
                      headers=headers).json()["id"]
    wait_done(client, headers, rid)
    assert client.get(f"/api/v1/rankings/{rid}", headers=other.headers()).status_code == 404
    assert client.post(f"/api/v1/rankings/{rid}/cancel", headers=headers).status_code == 409


def test_shortlist_entry_from_a_ranking_row(client: TestClient, demo: Any) -> None:
    headers, missions = demo
    mission_id = missions["Q4 mapping survey"]
    rid = client.post("/api/v1/rankings", json={"mission_id": mission_id, "top_n": 5}, headers=headers).json()["id"]
    wait_done(client, headers, rid)
    best = client.get(f"/api/v1/rankings/{rid}/results", headers=headers).json()["items"][0]
    sid = client.post("/api/v1/shortlists", json={"name": "From ranking", "mission_id": mission_id},
                      headers=headers).json()["id"]
    entry = client.post(f"/api/v1/shortlists/{sid}/entries", json={"ranking_id": rid, "rank": 1, "note": "top"},
                        headers=headers)
    assert entry.status_code == 201, entry.text
    metrics = entry.json()["metrics"]
    assert metrics["motor_id"] == best["motor_id"] and entry.json()["ranking_id"] == rid
    # The shortlist's own evaluation and the ranking agree on the cruise point (same model, same definitions).
    assert metrics["cruise"]["electrical_power_w"] == pytest.approx(best["cruise"]["electrical_power_w"], rel=1e-6)
    assert metrics["full_throttle"]["thrust_to_weight"] == pytest.approx(best["full_throttle"]["thrust_to_weight"],
                                                                         rel=1e-6)
    assert metrics["endurance_min"] == pytest.approx(best["endurance_min"], rel=1e-6)
    missing = client.post(f"/api/v1/shortlists/{sid}/entries", json={"ranking_id": rid, "rank": 999},
                          headers=headers)
    assert missing.status_code == 422 and missing.json()["errors"][0]["field"] == "rank"


def test_a_ranked_row_goes_to_a_shortlist_through_the_api(client: TestClient, demo: Any) -> None:
    """What the page's "Add" does, for scripts: a new automatically named shortlist, then the same one again."""
    headers, missions = demo
    mission = missions["Q4 mapping survey"]
    ranking = client.post("/api/v1/rankings", json={"mission_id": mission, "top_n": 5}, headers=headers).json()["id"]
    assert wait_done(client, headers, ranking)["status"] == "done"
    url = f"/api/v1/rankings/{ranking}/shortlist"
    first = client.post(url, json={"rank": 1}, headers=headers)
    assert first.status_code == 201, first.text
    doc = first.json()
    assert doc["created_shortlist"] is True and doc["shortlist"]["name"] == "Q4 mapping survey shortlist"
    assert doc["entry"]["ranking_id"] == ranking and doc["shortlist"]["mission_id"] == mission
    row = client.get(f"/api/v1/rankings/{ranking}/results", headers=headers).json()["items"][0]
    assert {k: doc["entry"][k] for k in ("battery_id", "esc_id", "motor_id", "propeller_id")} == {
        k: row[k] for k in ("battery_id", "esc_id", "motor_id", "propeller_id")}
    sid = doc["shortlist"]["id"]
    second = client.post(url, json={"rank": 2, "shortlist_id": sid, "note": "runner-up"}, headers=headers).json()
    assert second["created_shortlist"] is False and len(second["shortlist"]["entries"]) == 2
    # A second automatic shortlist gets the next free name; an explicit name that is taken is a 409.
    third = client.post(url, json={"rank": 3}, headers=headers).json()
    assert third["shortlist"]["name"] == "Q4 mapping survey shortlist 2"
    taken = client.post(url, json={"rank": 3, "name": "Q4 mapping survey shortlist"}, headers=headers)
    assert taken.status_code == 409
    assert client.post(url, json={"rank": 999}, headers=headers).status_code == 422
    assert client.post(url, json={"rank": 1, "shortlist_id": sid, "name": "x"}, headers=headers).status_code == 422
    other = client.post("/api/v1/shortlists", headers=headers, json={
        "name": "Hexa list", "mission_id": missions["H6 structure inspection"]}).json()["id"]
    wrong_mission = client.post(url, json={"rank": 1, "shortlist_id": other}, headers=headers)
    assert wrong_mission.status_code == 422 and wrong_mission.json()["errors"][0]["field"] == "ranking_id"
    assert client.post("/api/v1/rankings/999999/shortlist", json={"rank": 1}, headers=headers).status_code == 404
    names = [s["name"] for s in client.get("/api/v1/shortlists", headers=headers).json()]
    assert sorted(names) == ["Hexa list", "Q4 mapping survey shortlist", "Q4 mapping survey shortlist 2"]
