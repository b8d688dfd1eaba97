"""Heat and cold through the API: mission and motor fields (422 on bad values), the demo's hot-day and winter
missions ranked and explained, predict's winding temperatures, compare's heat and cold rows."""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient

from server.physics import thermal
from server.physics.motor import resistance_at_temperature_ohm
from tests.api.test_rankings import wait_done
from tests.factories import demo_key, make_library, make_team, part_payload

KEYS = ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel")


def _errors(response: Any) -> set[str]:
    assert response.status_code == 422, response.text
    return {e["field"] for e in response.json()["errors"]}


def test_mission_fields_round_trip_with_defaults_and_bad_values(app: Any, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    airframe = client.post("/api/v1/airframes", json={"name": "Q", "rotor_count": 4, "frame_mass_g": 900},
                           headers=h).json()["id"]
    base = {"name": "Plain", "airframe_id": airframe, "kind": "hover"}
    plain = client.post("/api/v1/missions", json=base, headers=h).json()
    assert (plain["temperature_effects"], plain["burst_s"], plain["cold_day_temperature_c"]) == (False, 0.0, None)
    hot = client.post("/api/v1/missions", json=base | {"name": "Hot", "temperature_offset_c": 25,
                                                        "temperature_effects": True, "burst_s": 30,
                                                        "cold_day_temperature_c": -10}, headers=h)
    assert hot.status_code == 201, hot.text
    got = client.get(f"/api/v1/missions/{hot.json()['id']}", headers=h).json()
    assert (got["temperature_effects"], got["burst_s"], got["cold_day_temperature_c"]) == (True, 30.0, -10.0)
    for bad, field in (({"burst_s": -1}, "burst_s"), ({"burst_s": 1e5}, "burst_s"),
                       ({"cold_day_temperature_c": -100}, "cold_day_temperature_c"),
                       ({"temperature_effects": "maybe"}, "temperature_effects"),
                       ({"burst_s": 20}, "burst_s")):  # a burst without the winding model is refused
        assert field in _errors(client.post("/api/v1/missions", json=base | bad, headers=h)), bad
    patched = client.patch(f"/api/v1/missions/{plain['id']}", json={"cold_day_temperature_c": -5},
                           headers={**h, "If-Match": f'"{plain["version"]}"'})
    assert patched.status_code == 200, patched.text
    assert patched.json()["cold_day_temperature_c"] == -5 and patched.json()["temperature_effects"] is False


def test_motor_thermal_fields_round_trip_and_bad_values(app: Any, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    created = client.post("/api/v1/parts/motors", json=part_payload(
        "motors", thermal_resistance_k_per_w=2.5, thermal_time_constant_s=80, max_winding_temperature_c=120),
        headers=h)
    assert created.status_code == 201, created.text
    body = client.get(f"/api/v1/parts/motors/{created.json()['id']}", headers=h).json()
    assert (body["thermal_resistance_k_per_w"], body["thermal_time_constant_s"],
            body["max_winding_temperature_c"]) == (2.5, 80.0, 120.0)
    for field, value in (("thermal_resistance_k_per_w", 0), ("thermal_time_constant_s", -3),
                         ("max_winding_temperature_c", 900), ("thermal_resistance_k_per_w", "hot")):
        assert field in _errors(client.post("/api/v1/parts/motors", json=part_payload("motors", **{field: value}),
                                            headers=h))


@pytest.mark.demo_data
def test_the_demo_hot_day_and_winter_missions_bite_and_are_explained(app: Any, client: TestClient) -> None:
    headers, missions = demo_key(app)
    status = {}
    for name in ("Q4 mapping survey", "Q4 mapping survey, 40 °C day", "Q4 mapping survey, winter morning"):
        rid = client.post("/api/v1/rankings", json={"mission_id": missions[name], "top_n": 5},
                          headers=headers).json()["id"]
        status[name] = wait_done(client, headers, rid)
        assert status[name]["status"] == "done"
    plain, hot, winter = (status[n] for n in ("Q4 mapping survey", "Q4 mapping survey, 40 °C day",
                                              "Q4 mapping survey, winter morning"))
    assert hot["rejected"].get("winding_over_temperature", 0) > 0
    assert winter["rejected"].get("cold_day_thrust_short", 0) > 0
    assert winter["feasible"] < plain["feasible"]
    # the winners change: the plain survey's rank 1 fails the burst on the hot day and the cold-day check in winter
    firsts = {name: client.get(f"/api/v1/rankings/{s['id']}/results?page_size=1", headers=headers).json()["items"][0]
              for name, s in (("plain", plain), ("hot", hot), ("winter", winter))}
    first = {name: tuple(row[k] for k in KEYS) for name, row in firsts.items()}
    assert first["hot"] != first["plain"] and first["winter"] != first["plain"]
    top = client.get(f"/api/v1/rankings/{hot['id']}/results?page_size=3", headers=headers).json()["items"]
    for row in top:
        cruise_c, burst_c = row["cruise"]["winding_temperature_c"], row["full_throttle"]["winding_temperature_c"]
        assert 40.0 < cruise_c < burst_c <= 100.0  # above the 40 °C air, hotter after the 30 s burst, under the prior
    body = client.post("/api/v1/explain", json={"ranking_id": hot["id"], **{k: top[0][k] for k in KEYS}},
                       headers=headers).json()
    check = next(c for c in body["checks"] if c["reason"] == "winding_over_temperature")
    assert check["passed"] and check["limit"] == 100.0 and check["unit"] == "°C"
    assert check["value"] == pytest.approx(top[0]["full_throttle"]["winding_temperature_c"], rel=1e-9)
    assert "after the 30 s full-throttle burst" in check["detail"]
    ex = winter["rejected_examples"]["cold_day_thrust_short"][0]
    body = client.post("/api/v1/explain", json={"ranking_id": winter["id"], **ex}, headers=headers).json()
    assert body["first_failed"] == "cold_day_thrust_short"
    check = next(c for c in body["checks"] if c["reason"] == "cold_day_thrust_short")
    assert check["value"] < check["limit"] == 2.0 and "-10 °C" in check["detail"] and "× 2.50" in check["detail"]
    # the plain mission lists the new checks too, as limits it does not set
    body = client.post("/api/v1/explain", json={"ranking_id": plain["id"], **ex}, headers=headers).json()
    for reason in ("winding_over_temperature", "cold_day_thrust_short", "cold_day_endurance_short"):
        check = next(c for c in body["checks"] if c["reason"] == reason)
        assert check["passed"] and check["detail"] == "the mission sets no limit"


def test_predict_reports_winding_temperatures_and_a_burst(app: Any, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    motor = {"kv_rpm_per_v": 920, "winding_resistance_ohm": 0.10, "no_load_current_a": 0.5,
             "thermal_resistance_k_per_w": 2.0, "thermal_time_constant_s": 60.0, "max_winding_temperature_c": 120}
    request = {"battery": {"supply_voltage_v": 12.0}, "motor": motor,
               "propeller": {"diameter_in": 10, "pitch_in": 7, "ct": 0.1564, "cp": 0.0763}, "rotor_count": 4,
               "conditions": {"air_temperature_c": 40.0}, "points": [{"thrust_n": 4.90332}, {"throttle": 1.0}],
               "heat": {"burst_s": 20}}
    response = client.post("/api/v1/predict", json=request, headers=h)
    assert response.status_code == 200, response.text
    body = response.json()
    heat = body["heat"]
    assert heat["air_temperature_c"] == pytest.approx(40.0)
    assert heat["sources"] == {"thermal_resistance_k_per_w": "stated", "thermal_time_constant_s": "stated",
                               "max_winding_temperature_c": "stated"}
    point = body["points"][0]
    # the hover point's steady temperature is the closed form at its own current and back-EMF
    emf = point["rpm"] * 2 * np.pi / 60 / (920 * 2 * np.pi / 60)
    expected, _ = thermal.steady_winding_temperature_c(40.0, point["motor_current_a"], 0.10, 0.5 * emf, 2.0)
    assert heat["points"][0]["winding_temperature_c"] == pytest.approx(float(expected), rel=1e-9)
    # and it is the fixed point T = T_air + R_th (I^2 R(T) + I0 E)
    t = heat["points"][0]["winding_temperature_c"]
    loss = point["motor_current_a"] ** 2 * float(resistance_at_temperature_ohm(0.10, t)) + 0.5 * emf
    assert 40.0 + 2.0 * loss == pytest.approx(t, rel=1e-9)
    burst = heat["burst"]
    assert burst["from_c"] == pytest.approx(t) and burst["curve"]["temperature_c"][0] == pytest.approx(t)
    assert burst["after_c"] == pytest.approx(burst["curve"]["temperature_c"][-1])
    assert np.all(np.diff(burst["curve"]["temperature_c"]) > 0) and burst["curve"]["t_s"][-1] == 20.0
    # held at full throttle (about 26 A) the winding would settle far above its 120 °C: flagged and warned about
    assert heat["points"][1]["over_limit"] and heat["points"][1]["winding_temperature_c"] > 120.0
    assert any("point 2: winding" in w and "above its maximum 120" in w for w in body["warnings"])
    # with R_th = 4 K/W the full-throttle point has no steady state: R_th I^2 R20 alpha > 1 (HEAT-3's criterion)
    hotter = dict(request, motor=dict(motor, thermal_resistance_k_per_w=4.0))
    second = client.post("/api/v1/predict", json=hotter, headers=h).json()["heat"]["points"][1]
    assert second["runaway"] and second["winding_temperature_c"] is None
    # without the heat block the response is as before; a motor without R_th needs a mass for the prior
    assert client.post("/api/v1/predict", json={k: v for k, v in request.items() if k != "heat"},
                       headers=h).json().get("heat") is None
    bare = dict(request, motor={k: motor[k] for k in ("kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a")})
    assert "heat.motor_mass_g" in _errors(client.post("/api/v1/predict", json=bare, headers=h))
    assumed = client.post("/api/v1/predict", json=dict(bare, heat={"burst_s": 0, "motor_mass_g": 72}), headers=h)
    assert assumed.status_code == 200, assumed.text
    assert assumed.json()["heat"]["thermal_resistance_k_per_w"] == pytest.approx(0.1 / 0.072)
    assert assumed.json()["heat"]["sources"]["thermal_resistance_k_per_w"] == "prior"


def test_compare_lists_heat_and_cold_rows_for_missions_that_ask(app: Any, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    ids = make_library(client, team)
    mission = client.post("/api/v1/missions", json={
        "name": "Hot and cold", "airframe_id": ids["airframe"], "kind": "hover", "temperature_offset_c": 20,
        "temperature_effects": True, "burst_s": 15, "cold_day_temperature_c": -15, "duty_max": 1.0,
        "min_thrust_to_weight": 1.0}, headers=h).json()["id"]
    entry = {"battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
             "propeller_id": ids["propellers"]}
    shortlist = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": mission}, headers=h).json()["id"]
    added = client.post(f"/api/v1/shortlists/{shortlist}/entries", json=entry, headers=h)
    assert added.status_code in (200, 201), added.text
    doc = client.get(f"/api/v1/shortlists/{shortlist}/compare.json", headers=h).json()
    keys = {r["key"] for r in doc["rows"]}
    assert {"heat.cruise_winding_c", "heat.burst_winding_c", "cold_day.thrust_to_weight",
            "cold_day.endurance_min"} <= keys
    metrics = doc["entries"][0]["metrics"]
    assert metrics["heat"]["burst_winding_c"] >= metrics["heat"]["cruise_winding_c"] > 35.0
    assert metrics["cold_day"]["cell_resistance_factor"] == pytest.approx(
        float(thermal.cell_resistance_factor(-15.0)), rel=1e-12)
    assert metrics["cold_day"]["thrust_to_weight"] < metrics["full_throttle"]["thrust_to_weight"]
