"""Shortlists API: entries, notes, order, re-evaluation, compare.json against predict, BOM by hand."""

from __future__ import annotations

import csv
import io

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.models import Calibration
from server.physics import ENGINE_VERSION
from tests.factories import TeamFixture, make_library, make_team, part_payload


@pytest.fixture
def team(app: FastAPI, client: TestClient) -> TeamFixture:
    return make_team(app)


def entry_body(ids: dict[str, int], **over: object) -> dict[str, object]:
    return {"battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
            "propeller_id": ids["propellers"], **over}


def test_shortlist_lifecycle(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team)
    created = client.post("/api/v1/shortlists", json={"name": "Quad options", "mission_id": ids["mission"]}, headers=h)
    assert created.status_code == 201
    sid = created.json()["id"]
    first = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, note="baseline"), headers=h)
    assert first.status_code == 201, first.text
    entry = first.json()
    assert entry["engine_version"] == ENGINE_VERSION and entry["note"] == "baseline"
    assert entry["metrics"]["cruise"]["electrical_power_w"] > 0 and entry["added_by"] is None  # added by a key
    second = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, packs_in_parallel=2),
                         headers=h).json()
    assert second["metrics"]["all_up_mass_g"] == pytest.approx(entry["metrics"]["all_up_mass_g"] + 540)
    reordered = client.post(f"/api/v1/shortlists/{sid}/reorder", json={"entry_ids": [second["id"], entry["id"]]},
                            headers=h).json()
    assert [e["id"] for e in reordered["entries"]] == [second["id"], entry["id"]]
    noted = client.patch(f"/api/v1/shortlists/{sid}/entries/{entry['id']}", json={"note": "too heavy?"}, headers=h)
    assert noted.json()["note"] == "too heavy?"
    renamed = client.patch(f"/api/v1/shortlists/{sid}", json={"name": "Quad finalists"}, headers=h).json()
    assert renamed["name"] == "Quad finalists"
    assert client.delete(f"/api/v1/shortlists/{sid}/entries/{second['id']}", headers=h).status_code == 204
    left = client.get(f"/api/v1/shortlists/{sid}", headers=h).json()["entries"]
    assert [(e["id"], e["position"]) for e in left] == [(entry["id"], 0)]
    assert client.delete(f"/api/v1/shortlists/{sid}", headers=h).status_code == 204
    assert client.get(f"/api/v1/shortlists/{sid}", headers=h).status_code == 404


def test_compare_json_equals_a_fresh_predict_call(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team)
    sid = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h).json()["id"]
    client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h)
    client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, packs_in_parallel=2), headers=h)
    compare = client.get(f"/api/v1/shortlists/{sid}/compare.json", headers=h).json()
    assert len(compare["entries"]) == 2
    for entry in compare["entries"]:
        metrics = entry["metrics"]
        predicted = client.post("/api/v1/predict", headers=h, json={
            "battery": {"id": ids["batteries"], "packs_in_parallel": entry["packs_in_parallel"],
                        "state_of_charge": 0.5},
            "esc": {"id": ids["escs"]}, "motor": {"id": ids["motors"]}, "propeller": {"id": ids["propellers"]},
            "rotor_count": 4, "all_up_mass_g": metrics["all_up_mass_g"], "conditions": {"altitude_m": 500},
            "points": [{"thrust_n": metrics["thrust_required_n"]}]}).json()["points"][0]
        assert metrics["cruise"]["electrical_power_w"] == pytest.approx(predicted["craft"]["electrical_power_w"],
                                                                         rel=1e-9)
        assert metrics["cruise"]["duty"] == pytest.approx(predicted["duty"], rel=1e-9)
    for entry in compare["entries"]:  # every ambiguous value also under a name that says per rotor or craft
        cruise, full = entry["metrics"]["cruise"], entry["metrics"]["full_throttle"]
        assert cruise["thrust_per_rotor_n"] == cruise["thrust_n"]
        assert cruise["electrical_power_craft_w"] == cruise["electrical_power_w"]
        assert cruise["electrical_power_craft_w"] == pytest.approx(4 * cruise["electrical_power_per_rotor_w"])
        assert full["motor_current_per_rotor_a"] == full["motor_current_a"]
        assert full["bus_current_craft_a"] == full["bus_current_a"]
        assert entry["metrics"]["thrust_required_per_rotor_n"] == entry["metrics"]["thrust_required_n"]
    mass_row = next(r for r in compare["rows"] if r["key"] == "all_up_mass_g")
    assert mass_row["best"] == [0]  # one pack is lighter than two
    assert compare["entries"][0]["metrics"]["curves"]["thrust_n"]


def test_bom_quantities_and_totals_by_hand(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team, rotors=6)
    sid = client.post("/api/v1/shortlists", json={"name": "Hexa", "mission_id": ids["mission"]}, headers=h).json()["id"]
    client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, packs_in_parallel=2), headers=h)
    response = client.get(f"/api/v1/shortlists/{sid}/bom.csv?airframes=3", headers=h)
    assert response.status_code == 200 and response.headers["content-type"].startswith("text/csv")
    rows = {r["kind"]: r for r in csv.DictReader(io.StringIO(response.text))}
    # By hand: 2 packs per airframe × 3 airframes = 6 packs at 10.00 = 60.00; 6 rotors × 3 = 18 motors.
    assert rows["batteries"]["quantity_per_airframe"] == "2" and rows["batteries"]["quantity"] == "6"
    assert rows["batteries"]["total_cost"] == "60.0"
    assert rows["motors"]["quantity"] == "18" and rows["motors"]["total_cost"] == "180.0"
    assert rows["propellers"]["part_number"] == "T-pro-1"
    assert client.get(f"/api/v1/shortlists/{sid}/bom.csv?airframes=0", headers=h).status_code == 422


def test_bad_input_is_a_clear_4xx(client: TestClient, team: TeamFixture, app: FastAPI) -> None:
    h = team.headers()
    ids = make_library(client, team)
    assert client.post("/api/v1/shortlists", json={"name": "S", "mission_id": 999}, headers=h).status_code == 422
    sid = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h).json()["id"]
    unknown = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, motor_id=99999), headers=h)
    assert unknown.status_code == 422 and unknown.json()["errors"][0]["field"] == "motor_id"
    both = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, ranking_id=1, rank=1), headers=h)
    assert both.status_code == 422
    no_ranking = client.post(f"/api/v1/shortlists/{sid}/entries", json={"ranking_id": 12345, "rank": 1}, headers=h)
    assert no_ranking.status_code == 422 and no_ranking.json()["errors"][0]["field"] == "ranking_id"
    other = make_team(app, "Other")
    other_motor = client.post("/api/v1/parts/motors", json=part_payload("motors"), headers=other.headers()).json()
    foreign = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, motor_id=other_motor["id"]),
                          headers=h)
    assert foreign.status_code == 422
    for _ in range(6):
        assert client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h).status_code == 201
    seventh = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h)
    assert seventh.status_code == 409 and "at most 6" in seventh.json()["detail"]


def test_re_evaluate_picks_up_a_new_calibration(client: TestClient, team: TeamFixture, app: FastAPI) -> None:
    h = team.headers()
    ids = make_library(client, team)
    sid = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h).json()["id"]
    before = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h).json()
    unchanged = client.post(f"/api/v1/shortlists/{sid}/re-evaluate", headers=h).json()["changes"]
    assert unchanged[0]["changed"] == {}
    with transaction(app.state.sessionmaker) as session:
        session.add(Calibration(team_id=team.team_id, part_kind="escs", part_id=ids["escs"], engine_version="t",
                                parameters={"k_pwm": {"value": 0.05, "stderr": 0.01, "status": "identified"}}))
    changes = client.post(f"/api/v1/shortlists/{sid}/re-evaluate", headers=h).json()["changes"]
    power = changes[0]["changed"]["cruise.electrical_power_w"]
    assert power["before"] == pytest.approx(before["metrics"]["cruise"]["electrical_power_w"])
    # the calibrated k_pwm (0.05) replaces the prior (0.4655, no bench run yet): less PWM loss at partial throttle
    assert power["after"] < power["before"]
    stored = client.get(f"/api/v1/shortlists/{sid}", headers=h).json()["entries"][0]
    assert stored["metrics"]["sources"]["escs"]["k_pwm"] == "calibrated"


def test_a_mission_with_shortlists_cannot_be_deleted(client: TestClient, team: TeamFixture) -> None:
    """Regression (found by fuzzing): deleting such a mission was a 500 (foreign key), now a 409."""
    h = team.headers()
    ids = make_library(client, team)
    client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h)
    response = client.delete(f"/api/v1/missions/{ids['mission']}", headers=h)
    assert response.status_code == 409 and "shortlist" in response.json()["detail"]
    assert client.get(f"/api/v1/missions/{ids['mission']}", headers=h).status_code == 200


def test_bom_chosen_entries_spares_and_rotation_by_hand(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team, rotors=6)
    sid = client.post("/api/v1/shortlists", json={"name": "Hexa", "mission_id": ids["mission"]}, headers=h).json()["id"]
    first = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h).json()["id"]
    second = client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids, packs_in_parallel=2),
                         headers=h).json()["id"]
    url = f"/api/v1/shortlists/{sid}/bom.csv"
    every = list(csv.DictReader(io.StringIO(client.get(f"{url}?airframes=3", headers=h).text)))
    assert {r["entry_id"] for r in every} == {str(first), str(second)}  # default: every entry, as before
    response = client.get(f"{url}?airframes=3&entries={second}&spares_percent=10", headers=h)
    assert response.status_code == 200, response.text
    rows = list(csv.DictReader(io.StringIO(response.text)))
    assert {r["entry_id"] for r in rows} == {str(second)} and {r["entry"] for r in rows} == {"2"}
    by = {(r["kind"], r["rotation"]): r for r in rows}
    assert set(by) == {("batteries", ""), ("escs", ""), ("motors", ""), ("propellers", "CW"), ("propellers", "CCW")}
    # By hand: 6 rotors → 3 CW + 3 CCW propellers per airframe; × 3 airframes = 9 each; 10 % spares of 9 = 0.9 → 1.
    for rotation in ("CW", "CCW"):
        prop = by[("propellers", rotation)]
        assert (prop["quantity_per_airframe"], prop["quantity"], prop["spares"], prop["order_quantity"]) == (
            "3", "9", "1", "10")
    # 2 packs × 3 airframes = 6, spares ceil(0.6) = 1, 7 ordered at 10.00 = 70.00 (the factory's unit cost).
    pack = by[("batteries", "")]
    assert (pack["quantity"], pack["spares"], pack["order_quantity"], pack["total_cost"]) == ("6", "1", "7", "70.0")
    motors = by[("motors", "")]
    assert (motors["quantity"], motors["spares"], motors["order_quantity"]) == ("18", "2", "20")  # ceil(1.8) = 2
    for bad, field in ((f"entries={second},999999", "entries"), ("entries=a,b", "entries"),
                       ("spares_percent=-5", "spares_percent")):
        refused = client.get(f"{url}?{bad}", headers=h)
        assert refused.status_code == 422, bad
        assert refused.json()["errors"][0]["field"] == field


def test_bom_of_an_odd_rotor_count_lists_the_unpaired_propeller_ccw(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team, rotors=3)
    sid = client.post("/api/v1/shortlists", json={"name": "Tri", "mission_id": ids["mission"]}, headers=h).json()["id"]
    client.post(f"/api/v1/shortlists/{sid}/entries", json=entry_body(ids), headers=h)
    rows = list(csv.DictReader(io.StringIO(client.get(f"/api/v1/shortlists/{sid}/bom.csv", headers=h).text)))
    props = {r["rotation"]: r["quantity"] for r in rows if r["kind"] == "propellers"}
    assert props == {"CW": "1", "CCW": "2"}
    assert all(r["rotation"] == "" for r in rows if r["kind"] != "propellers")


def test_shortlist_names_never_collide_silently(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    ids = make_library(client, team)
    body = {"name": "Quad options", "mission_id": ids["mission"]}
    assert client.post("/api/v1/shortlists", json=body, headers=h).status_code == 201
    again = client.post("/api/v1/shortlists", json=body | {"name": "quad OPTIONS"}, headers=h)
    assert again.status_code == 409 and again.json()["errors"][0]["field"] == "name"
    other = client.post("/api/v1/shortlists", json=body | {"name": "Other"}, headers=h).json()["id"]
    clash = client.patch(f"/api/v1/shortlists/{other}", json={"name": "Quad options"}, headers=h)
    assert clash.status_code == 409
    assert client.patch(f"/api/v1/shortlists/{other}", json={"name": "other"}, headers=h).status_code == 200
    assert [s["name"] for s in client.get("/api/v1/shortlists", headers=h).json()].count("Quad options") == 1
