"""Forms as a browser sends them: every field present (blank optional ones take their defaults), selects for
choices, our own plain-language messages, and edit conflicts that stay conflicts until the user chooses."""

from __future__ import annotations

from typing import Any

from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.services._sorting import natural_key, naturally
from tests.factories import login, make_team, part_payload


def soup(html: str) -> BeautifulSoup:
    return BeautifulSoup(html, "html.parser")


def form_of(page: BeautifulSoup, selector: str) -> dict[str, str]:
    """Every control of a form with the value a browser would send (first option of a select)."""
    form = page.select_one(selector)
    values: dict[str, str] = {}
    for control in form.select("input, select, textarea"):
        name = control.get("name")
        if not name or control.get("type") in ("submit", "checkbox"):
            continue
        if control.name == "select":
            chosen = control.select_one("option[selected]") or control.select_one("option")
            values[name] = chosen.get("value", "") if chosen else ""
        elif control.name == "textarea":
            values[name] = control.text
        else:
            values[name] = control.get("value", "")
    return values


def test_airframe_and_mission_with_every_optional_field_blank(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    page = soup(client.get("/missions").text)
    airframe = form_of(page, "form[action='/airframes']") | {"name": "Blank quad", "rotor_count": "4",
                                                              "frame_mass_g": "800"}
    assert airframe["max_packs_in_parallel"] == "" and airframe["max_prop_diameter_in"] == ""
    assert client.post("/airframes", data=airframe, follow_redirects=False).status_code == 303
    page = soup(client.get("/missions").text)
    kind = page.select_one("select[name=kind]")
    assert [o["value"] for o in kind.select("option")] == ["hover", "cruise", "forward_flight"]  # a select
    mission = form_of(page, "form[action='/missions']") | {"name": "Blank survey"}
    assert mission["min_thrust_to_weight"] == "" and mission["duty_min"] == ""
    saved = client.post("/missions", data=mission, follow_redirects=False)
    assert saved.status_code == 303, soup(saved.text).select(".error")
    stored = client.get("/api/v1/missions", headers=team.headers()).json()[0]
    assert stored["kind"] == "hover" and stored["min_thrust_to_weight"] == 2.0 and stored["duty_max"] == 0.75
    assert stored["max_all_up_mass_g"] is None
    shown = soup(client.get("/api/v1/airframes", headers=team.headers()).text)
    assert '"max_packs_in_parallel":1' in shown.text
    listing = soup(client.get("/missions").text).select_one("article.airframe tbody tr").text
    assert "no limit" in listing  # the missions list shows the largest all-up mass (none here)
    help_line = soup(client.get("/missions").text).select_one("#m-min_thrust_to_weight-help").text
    assert "blank: 2" in help_line


def test_forward_flight_fields_through_the_forms(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    page = soup(client.get("/missions").text)
    coaxial = page.select_one("select[name=coaxial]")
    assert [o["value"] for o in coaxial.select("option")] == ["false", "true"]  # yes/no, "no" shown by default
    assert coaxial.select_one("option[selected]")["value"] == "false"
    airframe = form_of(page, "form[action='/airframes']") | {"name": "X8 mapper", "rotor_count": "8",
                                                              "frame_mass_g": "1800", "drag_area_m2": "0.04",
                                                              "frontal_area_note": "pod and gimbal", "coaxial": "true"}
    assert client.post("/airframes", data=airframe, follow_redirects=False).status_code == 303
    stored = client.get("/api/v1/airframes", headers=team.headers()).json()[0]
    assert (stored["coaxial"], stored["drag_area_m2"], stored["frontal_area_note"]) == (True, 0.04, "pod and gimbal")
    page = soup(client.get("/missions").text)
    assert "coaxial pairs" in page.select_one("article.airframe").text
    mission = form_of(page, "form[action='/missions']") | {"name": "Transit", "kind": "forward_flight",
                                                            "cruise_airspeed_m_s": "12", "climb_rate_m_s": "-1.5"}
    assert "blank: 0" in page.select_one("#m-climb_rate_m_s-help").text
    saved = client.post("/missions", data=mission, follow_redirects=False)
    assert saved.status_code == 303, soup(saved.text).select(".error")
    stored = client.get("/api/v1/missions", headers=team.headers()).json()[0]
    assert (stored["kind"], stored["cruise_airspeed_m_s"], stored["climb_rate_m_s"]) == ("forward_flight", 12.0, -1.5)
    assert "12.0 m/s forward, descent 1.50 m/s" in " ".join(soup(client.get("/missions").text).select_one(
        "article.airframe tbody tr").text.split()).replace("\xa0", " ")
    # An odd coaxial craft is refused on the form, naming the field, and nothing is saved.
    bad = airframe | {"name": "Odd", "rotor_count": "5"}
    refused = client.post("/airframes", data=bad, follow_redirects=False)
    assert refused.status_code in (400, 422) and "coaxial" in refused.text
    assert len(client.get("/api/v1/airframes", headers=team.headers()).json()) == 1


def test_plain_messages_instead_of_the_validators(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    def first(response: Any) -> dict[str, str]:
        return {k: response.json()["errors"][0][k] for k in ("field", "message")}

    currency = client.post("/api/v1/parts/motors", json=part_payload("motors", currency="eur"), headers=h)
    assert first(currency) == {"field": "currency",
                               "message": "must be a three-letter currency code in capitals, such as EUR or USD"}
    cells = client.post("/api/v1/parts/escs", json=part_payload("escs", min_cells="six"), headers=h)
    assert first(cells) == {"field": "min_cells", "message": "must be a whole number"}
    kind = client.post("/api/v1/missions", json={"name": "x", "airframe_id": 1, "kind": "Hovering"}, headers=h)
    assert {"field": "kind", "message": "must be hover, cruise or forward_flight"} in [
        {k: e[k] for k in ("field", "message")} for e in kind.json()["errors"]]
    swapped = client.post("/api/v1/parts/escs", json=part_payload("escs", min_cells=6, max_cells=3), headers=h)
    assert first(swapped) == {"field": "min_cells", "message": "must not be above the highest cell count (max_cells)"}
    query = client.get("/api/v1/parts/motors?page=0", headers=h).json()["errors"][0]
    assert query["field"] == "page" and query["message"] == "must be at least 1"
    for response in (currency, cells, kind, swapped):
        assert "should" not in response.text


def test_natural_order_of_names() -> None:
    names = ["30x10 fixed-wing prop", "5x2.5 racing prop", "13x4.4 multirotor prop", "13x10", "NS-M2814-880",
             "ns-m2814-700", None]
    assert naturally(names, lambda n: n) == [None, "5x2.5 racing prop", "13x4.4 multirotor prop", "13x10",
                                            "30x10 fixed-wing prop", "ns-m2814-700", "NS-M2814-880"]
    assert natural_key("2.5") < natural_key("10") and natural_key("a2") < natural_key("a10")


def test_parts_list_sorts_names_naturally(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    for name in ("30x10", "5x2.5", "13x4.4"):
        client.post("/api/v1/parts/propellers", json=part_payload("propellers", name=name), headers=h)
    names = [p["name"] for p in client.get("/api/v1/parts/propellers?sort=name", headers=h).json()["items"]]
    assert names == ["5x2.5", "13x4.4", "30x10"]
    backwards = client.get("/api/v1/parts/propellers?sort=-name&page_size=2&page=1", headers=h).json()
    assert [p["name"] for p in backwards["items"]] == ["30x10", "13x4.4"] and backwards["total"] == 3
    login(client, team.owner_email)
    rows = soup(client.get("/parts/propellers").text).select("#parts-list tbody tr td:first-child a")
    assert [a.text for a in rows] == ["5x2.5", "13x4.4", "30x10"]


def _edit(client: TestClient, url: str) -> dict[str, Any]:
    return form_of(soup(client.get(url).text), "#edit-form")


def test_an_edit_conflict_stays_a_conflict_until_the_user_chooses(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    motor = client.post("/api/v1/parts/motors", json=part_payload("motors", mass_g=60), headers=team.headers()).json()
    login(client, team.owner_email)
    url = f"/parts/motors/{motor['id']}"
    mine = _edit(client, f"{url}/edit") | {"mass_g": "61"}
    # A colleague saves first (through the API here).
    theirs = client.patch(f"/api/v1/parts/motors/{motor['id']}", json={"mass_g": 70},
                          headers={**team.headers(), "If-Match": '"1"'})
    assert theirs.status_code == 200
    first = client.post(url, data=mine)
    assert first.status_code == 409
    page = soup(first.text)
    rows = [[c.text for c in r.select("th, td")] for r in page.select("#conflict-fields tbody tr")]
    assert rows == [["Mass", "61", "70"]]
    assert page.select_one("#edit-form input[name=version]")["value"] == "1"  # still the version the form had
    again = client.post(url, data=form_of(page, "#edit-form"))  # "Save changes" a second time
    assert again.status_code == 409
    assert client.get(f"/api/v1/parts/motors/{motor['id']}", headers=team.headers()).json()["mass_g"] == 70
    overwrite = page.select_one("#edit-conflict button[name=overwrite]")["value"]
    assert overwrite == "2"
    chosen = client.post(url, data=form_of(page, "#edit-form") | {"overwrite": overwrite}, follow_redirects=False)
    assert chosen.status_code == 303
    assert client.get(f"/api/v1/parts/motors/{motor['id']}", headers=team.headers()).json()["mass_g"] == 61


def test_a_mission_edit_conflict_names_both_values(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    airframe = client.post("/api/v1/airframes", json={"name": "Q", "rotor_count": 4, "frame_mass_g": 900},
                           headers=h).json()["id"]
    mission = client.post("/api/v1/missions", json={"name": "Survey", "airframe_id": airframe, "kind": "hover"},
                          headers=h).json()["id"]
    login(client, team.owner_email)
    mine = _edit(client, f"/missions/{mission}/edit") | {"min_thrust_to_weight": "2.5"}
    client.patch(f"/api/v1/missions/{mission}", json={"min_thrust_to_weight": 1.8}, headers={**h, "If-Match": '"1"'})
    page = soup(client.post(f"/missions/{mission}", data=mine).text)
    rows = [[c.text for c in r.select("th, td")] for r in page.select("#conflict-fields tbody tr")]
    assert rows == [["Minimum thrust-to-weight", "2.5", "1.8"]]
    assert client.get(f"/api/v1/missions/{mission}", headers=h).json()["min_thrust_to_weight"] == 1.8


def test_heat_and_cold_fields_on_the_mission_and_motor_forms(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    page = soup(client.get("/missions").text)
    airframe = form_of(page, "form[action='/airframes']") | {"name": "Q", "rotor_count": "4", "frame_mass_g": "800"}
    assert client.post("/airframes", data=airframe, follow_redirects=False).status_code == 303
    page = soup(client.get("/missions").text)
    effects = page.select_one("form[action='/missions'] select[name=temperature_effects]")
    assert [o["value"] for o in effects.select("option")] == ["false", "true"]
    assert effects.select_one("option[selected]")["value"] == "false"  # the default, shown
    assert [o.text for o in effects.select("option")] == ["no", "yes"]
    assert "blank: 0 s" in page.select_one("#m-burst_s-help").text
    mission = form_of(page, "form[action='/missions']") | {"name": "Hot", "temperature_effects": "true",
                                                             "burst_s": "30", "cold_day_temperature_c": "-10"}
    saved = client.post("/missions", data=mission, follow_redirects=False)
    assert saved.status_code == 303, soup(saved.text).select(".error")
    stored = client.get("/api/v1/missions", headers=team.headers()).json()[0]
    assert (stored["temperature_effects"], stored["burst_s"], stored["cold_day_temperature_c"]) == (True, 30.0, -10.0)
    # a burst without temperature effects is refused with our message, beside the field
    bad = client.post("/missions", data=mission | {"name": "Bad", "temperature_effects": "false"})
    assert bad.status_code == 422 and "temperature_effects" in bad.text
    motor_form = soup(client.get("/parts/motors").text)
    for name in ("thermal_resistance_k_per_w", "thermal_time_constant_s", "max_winding_temperature_c"):
        assert motor_form.select_one(f"input[name={name}]") is not None, name
