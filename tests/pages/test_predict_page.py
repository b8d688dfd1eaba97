"""Predict page: renders the form, computes the same numbers as the API, shows errors, and the htmx block."""

from __future__ import annotations

from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import login, make_team, part_payload


def _parts_logged_in(app: FastAPI, client: TestClient) -> tuple[dict[str, str], dict[str, int]]:
    """A team with one part of each kind, logged in: its API headers and the parts' ids."""
    team = make_team(app)
    h = team.headers()
    ids = {kind: client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h).json()["id"]
           for kind in ("batteries", "escs", "motors", "propellers")}
    login(client, team.owner_email)
    return h, ids


def test_predict_page_matches_the_api(app: FastAPI, client: TestClient) -> None:
    h, ids = _parts_logged_in(app, client)
    params = {"submitted": "1", "battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
              "propeller_id": ids["propellers"], "rotor_count": "4", "throttles": "1.0, 0.6", "thrusts": "4"}
    page = client.get("/predict", params=params)
    assert page.status_code == 200
    soup = BeautifulSoup(page.text, "html.parser")
    rows = soup.select("#points tbody tr")
    assert len(rows) == 3
    api = client.post("/api/v1/predict", json={
        "battery": {"id": ids["batteries"]}, "esc": {"id": ids["escs"]}, "motor": {"id": ids["motors"]},
        "propeller": {"id": ids["propellers"]}, "rotor_count": 4,
        "points": [{"throttle": 1.0}, {"throttle": 0.6}, {"thrust_n": 4}]}, headers=h).json()
    power_cell = rows[1].select("td")[8]
    assert power_cell.contents[0].strip() == f"{api['points'][1]['electrical_power_w']:.3g}".replace(",", "")
    lo, hi = api["points"][1]["bands"]["electrical_power_w"]
    assert power_cell.select_one(".band").text.replace("\u2009", "") == f"{lo:.3g}–{hi:.3g}".replace(",", "")
    assert soup.select_one("#predict-chart-data") is not None and soup.select_one("#chart-curves") is not None
    table = {r["data-param"]: r for r in soup.select("#parameters tbody tr")}
    sources = {key: r.select("td")[3].text.strip() for key, r in table.items()}
    assert table["motor.kv_rpm_per_v"].select_one(".source").text == "part"
    assert table["esc.k_pwm"].select_one(".source").text == "assumed, not measured"
    assert "Assumed, not measured: " in soup.text and "k_pwm" in soup.select_one("#predict-results").text
    # A prior says where it comes from and how uncertain it is, as the API does.
    k_pwm = api["parameters"]["esc"]["k_pwm"]
    assert k_pwm["origin"] in sources["esc.k_pwm"]
    assert "±" in table["esc.k_pwm"].select("td")[2].text and k_pwm["sd"] > 0
    names = {r["data-param"]: r.select("td")[1].text for r in soup.select("#parameters tbody tr")}
    assert names["motor.kv_rpm_per_v"] == "Kv" and names["propeller.static_table"] == "CT, CP vs rpm"
    # The part's CT and CP constants stand beside its table, which the model reads: said, not hidden.
    assert "not used" in sources["propeller.ct"] and "not used" not in sources["propeller.static_table"]
    fragment = client.get("/predict", params=params, headers={"HX-Request": "true"})
    assert "<html" not in fragment.text and 'id="predict-results"' in fragment.text


def test_predict_page_lists_missing_values(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    page = client.get("/predict", params={"submitted": "1", "supply_voltage_v": "11.1", "throttles": "1",
                                          "motor.kv_rpm_per_v": "900", "propeller.diameter_in": "10"})
    assert page.status_code == 422
    errors = BeautifulSoup(page.text, "html.parser").select_one("ul.errors").text
    assert "motor.winding_resistance_ohm" in errors


def test_predict_page_shows_winding_temperatures_and_the_burst_chart(app: FastAPI, client: TestClient) -> None:
    h, ids = _parts_logged_in(app, client)
    params = {"submitted": "1", "battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
              "propeller_id": ids["propellers"], "rotor_count": "4", "thrusts": "4", "throttles": "",
              "temperature_offset_c": "25", "heat": "on", "burst_s": "20"}
    page = client.get("/predict", params=params)
    assert page.status_code == 200, BeautifulSoup(page.text, "html.parser").select("ul.errors")
    soup = BeautifulSoup(page.text, "html.parser")
    api = client.post("/api/v1/predict", json={
        "battery": {"id": ids["batteries"]}, "esc": {"id": ids["escs"]}, "motor": {"id": ids["motors"]},
        "propeller": {"id": ids["propellers"]}, "rotor_count": 4, "conditions": {"temperature_offset_c": 25},
        "points": [{"thrust_n": 4}], "heat": {"burst_s": 20}}, headers=h).json()["heat"]
    cell = soup.select_one("#winding-points tbody tr").select("td")[1].text.strip()
    assert cell == f"{api['points'][0]['winding_temperature_c']:.3g}"
    assert f"{api['burst']['after_c']:.3g}" in soup.select_one("#burst").text
    assert "assumed" in soup.select_one("#predict-results").text  # the test motor states no thermal data: priors
    assert soup.select_one("#chart-winding") is not None
    # off: no winding section, no chart
    plain = BeautifulSoup(client.get("/predict", params={**params, "heat": ""}).text, "html.parser")
    assert plain.select_one("#winding-points") is None and plain.select_one("#chart-winding") is None
