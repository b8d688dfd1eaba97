"""The mission form's flight-profile editor: rows in, rows stored, rows shown again; bad rows named, nothing saved."""

from __future__ import annotations

from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import login, make_team
from tests.pages.test_forms import form_of, soup


def _airframe(client: TestClient, headers: dict[str, str]) -> int:
    made = client.post("/api/v1/airframes", json={"name": "Grid quad", "rotor_count": 4, "frame_mass_g": 1400},
                       headers=headers)
    return int(made.json()["id"])


def test_profile_rows_round_trip_through_the_form(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    airframe = _airframe(client, team.headers())
    page = soup(client.get("/missions").text)
    form = form_of(page, "form[action='/missions']")
    assert "segments-0-kind" in form and "segments-2-kind" in form  # spare rows on an empty profile
    form |= {"name": "Grid survey", "airframe_id": str(airframe), "reserve_min": "3",
             "segments-0-kind": "hover", "segments-0-label": "checks", "segments-0-duration_s": "45",
             "segments-2-kind": "hover", "segments-2-label": "survey", "segments-2-duration_s": "600"}
    saved = client.post("/missions", data=form, follow_redirects=False)
    assert saved.status_code == 303, soup(saved.text).select(".error")
    stored = client.get("/api/v1/missions", headers=team.headers()).json()[0]
    assert [(s["kind"], s["label"], s["duration_s"]) for s in stored["segments"]] == [
        ("hover", "checks", 45.0), ("hover", "survey", 600.0)]  # the empty row between them is dropped
    assert stored["reserve_min"] == 3.0
    edit = soup(client.get(f"/missions/{stored['id']}/edit").text)
    values = form_of(edit, "#edit-form")
    assert values["segments-1-label"] == "survey" and values["segments-1-duration_s"] == "600"
    assert "segments-4-kind" in values  # two rows used, three spare
    values |= {"segments-1-duration_s": "900", "segments-0-kind": ""}  # longer survey; the first row removed
    assert client.post(f"/missions/{stored['id']}", data=values, follow_redirects=False).status_code == 303
    again = client.get(f"/api/v1/missions/{stored['id']}", headers=team.headers()).json()
    assert [(s["label"], s["duration_s"]) for s in again["segments"]] == [("survey", 900.0)]


def test_a_bad_profile_row_is_named_and_nothing_is_saved(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    airframe = _airframe(client, team.headers())
    form = form_of(soup(client.get("/missions").text), "form[action='/missions']")
    form |= {"name": "Grid survey", "airframe_id": str(airframe), "segments-0-kind": "hover",
             "segments-0-duration_s": "45", "segments-1-kind": "hover"}  # row 2: no duration, distance or height
    refused = client.post("/missions", data=form, follow_redirects=False)
    assert refused.status_code == 422
    errors = [e.text for e in soup(refused.text).select("#m-segments .error")]
    assert any(e.startswith("segment 2 duration_s") for e in errors), errors
    again = form_of(soup(refused.text), "form[action='/missions']")
    assert again["segments-0-duration_s"] == "45"  # what was typed stays
    assert client.get("/api/v1/missions", headers=team.headers()).json() == []
