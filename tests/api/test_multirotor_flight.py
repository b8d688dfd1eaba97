"""Airframe drag area, frontal-area note and coaxial flag; forward_flight missions and climb rates through the API."""

from __future__ import annotations

from typing import Any

from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import make_library, make_team


def _airframe(client: TestClient, h: dict[str, str], **fields: Any) -> Any:
    return client.post("/api/v1/airframes", headers=h, json={"name": "Mapper", "rotor_count": 4,
                                                             "frame_mass_g": 1400, **fields})


def test_airframe_fields_round_trip_and_default(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    plain = _airframe(client, h)
    assert plain.status_code == 201, plain.text
    assert plain.json()["drag_area_m2"] is None and plain.json()["coaxial"] is False
    assert plain.json()["frontal_area_note"] == ""
    made = _airframe(client, h, drag_area_m2=0.03, frontal_area_note="0.06 m² with the camera pod", coaxial=True,
                     rotor_count=8)
    assert made.status_code == 201, made.text
    body = client.get(f"/api/v1/airframes/{made.json()['id']}", headers=h).json()
    assert (body["drag_area_m2"], body["coaxial"], body["rotor_count"]) == (0.03, True, 8)
    assert body["frontal_area_note"] == "0.06 m² with the camera pod"


def test_bad_airframe_values_are_422_naming_the_field(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    for fields, name in (({"drag_area_m2": -0.01}, "drag_area_m2"), ({"drag_area_m2": 9.0}, "drag_area_m2"),
                         ({"coaxial": True, "rotor_count": 3}, "coaxial")):
        r = _airframe(client, h, **fields)
        assert r.status_code == 422, r.text
        assert name in r.text
    # An update that would make an odd coaxial craft is refused too, and nothing changes.
    made = _airframe(client, h, coaxial=True, rotor_count=4).json()
    r = client.patch(f"/api/v1/airframes/{made['id']}", headers={**h, "If-Match": str(made["version"])},
                     json={"rotor_count": 5})
    assert r.status_code == 422, r.text
    assert client.get(f"/api/v1/airframes/{made['id']}", headers=h).json()["rotor_count"] == 4


def test_forward_flight_mission_round_trip_and_errors(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    ids = make_library(client, team)
    base = {"name": "Transit", "airframe_id": ids["airframe"]}
    made = client.post("/api/v1/missions", headers=h, json={**base, "kind": "forward_flight",
                                                            "cruise_airspeed_m_s": 12.0, "climb_rate_m_s": 1.5})
    assert made.status_code == 201, made.text
    body = client.get(f"/api/v1/missions/{made.json()['id']}", headers=h).json()
    assert (body["kind"], body["cruise_airspeed_m_s"], body["climb_rate_m_s"]) == ("forward_flight", 12.0, 1.5)
    hover = client.get(f"/api/v1/missions/{ids['mission']}", headers=h).json()
    assert hover["climb_rate_m_s"] == 0.0  # the default: level
    for fields, name in (({"kind": "forward_flight"}, "cruise_airspeed_m_s"),
                         ({"kind": "hover", "climb_rate_m_s": 25.0}, "climb_rate_m_s"),
                         ({"kind": "cruise", "cruise_airspeed_m_s": 15, "lift_to_drag": 8, "climb_rate_m_s": 1.0},
                          "climb_rate_m_s"),
                         ({"kind": "sideways"}, "kind")):
        r = client.post("/api/v1/missions", headers=h, json={**base, **fields})
        assert r.status_code == 422, (fields, r.text)
        assert name in r.text


def test_predict_flight_conditions(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    base = {"battery": {"supply_voltage_v": 14.8}, "motor": {"kv_rpm_per_v": 460, "winding_resistance_ohm": 0.1,
                                                              "no_load_current_a": 0.5},
            "propeller": {"diameter_in": 13, "pitch_in": 4.4, "ct": 0.11, "cp": 0.045}, "rotor_count": 4,
            "points": [{"thrust_n": 6.0}]}
    hover = client.post("/api/v1/predict", headers=h, json=base)
    forward = client.post("/api/v1/predict", headers=h, json={
        **base, "conditions": {"forward_airspeed_m_s": 12.0, "drag_area_m2": 0.03}})
    assert hover.status_code == 200 and forward.status_code == 200, forward.text
    assert hover.json()["points"][0].get("flight") is None
    flight = forward.json()["points"][0]["flight"]
    assert flight["kind"] == "forward_flight" and flight["tilt_deg"] > 0 and flight["power_vs_hover"] < 1
    assert forward.json()["points"][0]["electrical_power_w"] < hover.json()["points"][0]["electrical_power_w"]
    for conditions, name in (({"airspeed_m_s": 10.0, "forward_airspeed_m_s": 12.0}, "airspeed_m_s"),
                             ({"forward_airspeed_m_s": 90.0}, "forward_airspeed_m_s"),
                             ({"drag_area_m2": -1}, "drag_area_m2")):
        r = client.post("/api/v1/predict", headers=h, json={**base, "conditions": conditions})
        assert r.status_code == 422 and name in r.text, r.text
