"""Pages render in-process: login flow, parts tabs and forms (full page and htmx block), missions, team."""

from __future__ import annotations

from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import login, make_team, part_payload


def soup(html: str) -> BeautifulSoup:
    return BeautifulSoup(html, "html.parser")


def test_pages_redirect_to_login_when_logged_out(client: TestClient) -> None:
    for path in ("/", "/parts/motors", "/missions", "/team"):
        response = client.get(path, follow_redirects=False)
        assert response.status_code == 303 and response.headers["location"].startswith("/login?next=")


def test_wrong_password_shows_an_error(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    page = soup(client.get("/login").text)
    token = page.select_one("input[name=csrf_token]")["value"]
    response = client.post(
        "/login", data={"email": team.owner_email, "password": "wrong-password", "csrf_token": token}
    )
    assert response.status_code == 401
    assert "Wrong e-mail or password" in soup(response.text).select_one("[role=alert]").text


def test_login_then_overview_and_logout(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    home = soup(client.get("/").text)
    assert home.select_one("h1").text == "Alpha"
    assert "Lithium packs can burn" in home.select_one(".caution").text
    assert client.post("/logout", data={"csrf_token": token}, follow_redirects=False).status_code == 303
    assert client.get("/", follow_redirects=False).status_code == 303


def test_parts_tab_lists_sorts_and_renders_the_htmx_block(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    for name, kv in (("Slow", 300), ("Fast", 1400)):
        client.post(
            "/api/v1/parts/motors", json=part_payload("motors", name=name, kv_rpm_per_v=kv), headers=team.headers()
        )
    login(client, team.owner_email)
    full = client.get("/parts/motors?sort=-kv_rpm_per_v")
    page = soup(full.text)
    assert "HX-Request" in full.headers["vary"]
    assert page.select_one(".tabs a[aria-current=page]").text == "Motors"
    names = [a.text for a in page.select("#parts-list tbody td:first-child a")]
    assert names == ["Fast", "Slow"]
    assert page.select_one("#add-form form") is not None
    block = client.get("/parts/motors?sort=kv_rpm_per_v", headers={"HX-Request": "true"})
    fragment = soup(block.text)
    assert fragment.select_one("html") is None and fragment.select_one("#parts-table") is not None
    assert [a.text for a in fragment.select("#parts-list tbody td:first-child a")] == ["Slow", "Fast"]


def test_add_form_shows_inline_errors_and_saves_nothing(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    form = {"csrf_token": token, "name": "Bad", "mass_g": "60", "kv_rpm_per_v": "5"}
    response = client.post("/parts/motors", data=form, headers={"HX-Request": "true"})
    assert response.status_code == 200
    fragment = soup(response.text)
    error = fragment.select_one(".field.has-error .error")
    assert error is not None and "between 10 and 20000 rpm/V" in error.text
    assert fragment.select_one("input[name=kv_rpm_per_v]")["value"] == "5"  # what the user typed is kept
    assert client.get("/api/v1/parts/motors").json()["total"] == 0
    ok = client.post("/parts/motors", data={**form, "kv_rpm_per_v": "900"}, headers={"HX-Request": "true"})
    assert ok.headers["hx-trigger"] == "parts-changed"
    assert client.get("/api/v1/parts/motors").json()["total"] == 1


def test_edit_page_detects_a_concurrent_change(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    part = client.post("/api/v1/parts/escs", json=part_payload("escs"), headers=team.headers()).json()
    token = login(client, team.owner_email)
    page = soup(client.get(f"/parts/escs/{part['id']}/edit").text)
    form = {i["name"]: i.get("value", "") for i in page.select("form.grid-form input")}
    form.update({"csrf_token": token, "name": "Mine"})
    client.patch(
        f"/api/v1/parts/escs/{part['id']}", json={"name": "Theirs"}, headers={**team.headers(), "If-Match": '"1"'}
    )
    response = client.post(f"/parts/escs/{part['id']}", data=form)
    assert response.status_code == 409
    alert = soup(response.text).select_one("[role=alert]").text
    assert "Someone else saved this ESC while you were editing" in alert and "Theirs" in alert and "Mine" in alert
    assert client.get(f"/api/v1/parts/escs/{part['id']}").json()["name"] == "Theirs"


def test_viewer_sees_no_forms_and_cannot_post(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.viewer_email)
    page = soup(client.get("/parts/batteries").text)
    assert page.select_one("#add-form") is None
    response = client.post("/parts/batteries", data={"csrf_token": token, "name": "x"})
    assert response.status_code == 403


def test_csv_import_page_reports_rows_and_keeps_db_unchanged(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    bad = "name,mass_g,kv_rpm_per_v\nA,60,920\nB,x,920\n"
    response = client.post(
        "/parts/motors/import", data={"csrf_token": token}, files={"file": ("m.csv", bad, "text/csv")}
    )
    assert response.status_code == 422
    assert "row 3, mass_g" in soup(response.text).select_one("ul.errors").text
    assert client.get("/api/v1/parts/motors").json()["total"] == 0


def test_missions_page_adds_airframe_and_mission(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    client.post("/airframes", data={"csrf_token": token, "name": "Quad", "rotor_count": "4", "frame_mass_g": "1100"})
    page = soup(client.get("/missions").text)
    airframe_id = page.select_one("select[name=airframe_id] option")["value"]
    bad = client.post(
        "/missions", data={"csrf_token": token, "name": "Cruise", "airframe_id": airframe_id, "kind": "cruise"}
    )
    assert bad.status_code == 422 and "cruise_airspeed_m_s" in bad.text
    ok = client.post(
        "/missions",
        data={
            "csrf_token": token,
            "name": "Survey",
            "airframe_id": airframe_id,
            "kind": "hover",
            "payload_mass_g": "300",
        },
        follow_redirects=False,
    )
    assert ok.status_code == 303
    rows = soup(client.get("/missions").text).select("article.airframe tbody tr")
    assert "Survey" in rows[0].text
    assert client.get("/api/v1/missions").json()[0]["min_thrust_to_weight"] == 2.0


def test_team_page_creates_a_key_once_and_it_works(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    response = client.post(
        "/team/api-keys",
        data={"csrf_token": token, "name": "procurement", "scope": "read"},
        headers={"HX-Request": "true"},
    )
    key = soup(response.text).select_one("#new-key").text.strip()
    assert key.startswith("lm_")
    again = soup(client.get("/team").text)
    assert again.select_one("#new-key") is None and key not in client.get("/team").text
    assert client.get("/api/v1/parts/motors", headers={"Authorization": f"Bearer {key}"}).status_code == 200


def test_unknown_page_is_a_friendly_404(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    login(client, team.owner_email)
    response = client.get("/parts/gearboxes")
    assert response.status_code == 404
    assert "Unknown part kind" in soup(response.text).select_one("main").text


def test_owner_adds_a_member_who_can_log_in(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.owner_email)
    short = client.post("/team/members", data={"csrf_token": token, "email": "new@alpha.example", "role": "engineer",
                                               "password": "short"})
    assert "at least 8 characters" in soup(short.text).select_one("[role=alert]").text
    added = client.post("/team/members", data={"csrf_token": token, "email": "new@alpha.example",
                                               "role": "engineer", "password": "a-good-password"},
                        follow_redirects=False)
    assert added.status_code == 303
    assert "new@alpha.example" in soup(client.get("/team").text).select_one("#members").text
    client.cookies.clear()
    login(client, "new@alpha.example", "a-good-password")
    assert "engineer" in client.get("/").text


def test_only_owners_add_members(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    token = login(client, team.viewer_email)
    response = client.post("/team/members", data={"csrf_token": token, "email": "x@alpha.example",
                                                  "password": "a-good-password"})
    assert response.status_code == 403  # viewers cannot write at all


def test_airframe_edit_page_saves_and_reports_errors(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    airframe = client.post("/api/v1/airframes", json={"name": "Quad", "rotor_count": 4, "frame_mass_g": 1000},
                           headers=team.headers()).json()
    token = login(client, team.owner_email)
    page = soup(client.get(f"/airframes/{airframe['id']}/edit").text)
    form = {i["name"]: i.get("value", "") for i in page.select("form.grid-form input")}
    bad = client.post(f"/airframes/{airframe['id']}", data={**form, "csrf_token": token, "rotor_count": "40"})
    assert bad.status_code == 422 and "between 1 and 16 rotors" in bad.text
    ok = client.post(f"/airframes/{airframe['id']}", data={**form, "csrf_token": token, "frame_mass_g": "1250"},
                     follow_redirects=False)
    assert ok.status_code == 303
    assert client.get(f"/api/v1/airframes/{airframe['id']}").json()["frame_mass_g"] == 1250


def test_edit_form_keeps_empty_optional_numbers_empty(app: FastAPI, client: TestClient) -> None:
    """Regression: optional numbers were text inputs whose empty value failed validation on save."""
    team = make_team(app)
    part = client.post("/api/v1/parts/motors", json=part_payload("motors", max_current_a=None, max_cells=None),
                       headers=team.headers()).json()
    token = login(client, team.owner_email)
    page = soup(client.get(f"/parts/motors/{part['id']}/edit").text)
    assert page.select_one("input[name=max_current_a]")["type"] == "number"
    form = {i["name"]: i.get("value", "") for i in page.select("form.grid-form input")}
    saved = client.post(f"/parts/motors/{part['id']}", data={**form, "csrf_token": token, "mass_g": "61"},
                        follow_redirects=False)
    assert saved.status_code == 303
    motor = client.get(f"/api/v1/parts/motors/{part['id']}").json()
    assert motor["mass_g"] == 61 and motor["max_current_a"] is None
