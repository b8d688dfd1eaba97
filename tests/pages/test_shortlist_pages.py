"""Shortlist pages: list/create, compare table equals compare.json, best marks, cautions, notes, order."""

from __future__ import annotations

from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.pages._render import fmt_number
from tests.factories import login, make_library, make_team


def test_create_shortlist_and_add_entries_in_the_browser(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    ids = make_library(client, team)
    token = login(client, team.owner_email)
    bad = client.post("/shortlists", data={"csrf_token": token, "name": "", "mission_id": str(ids["mission"])})
    assert bad.status_code == 422 and "name" in BeautifulSoup(bad.text, "html.parser").select_one("ul.errors").text
    created = client.post("/shortlists", data={"csrf_token": token, "name": "Finalists",
                                               "mission_id": str(ids["mission"])}, follow_redirects=False)
    assert created.status_code == 303
    url = created.headers["location"]
    form = {"csrf_token": token, "battery_id": str(ids["batteries"]), "esc_id": str(ids["escs"]),
            "motor_id": str(ids["motors"]), "propeller_id": str(ids["propellers"]), "note": "first"}
    for packs in ("1", "2"):
        assert client.post(f"{url}/entries", data={**form, "packs_in_parallel": packs},
                           follow_redirects=False).status_code == 303
    page = BeautifulSoup(client.get(url).text, "html.parser")
    assert page.select_one("#shortlist-name").text == "Finalists"
    heads = page.select("#compare-table thead th.entry-head")
    assert len(heads) == 2
    assert "added by owner@alpha.example" in heads[0].select_one(".added").text
    assert "none (entered and default values)" in page.select_one('tr[data-key="calibrated"]').text
    compare = client.get(f"/api/v1{url}/compare.json").json()
    for row in compare["rows"]:
        cells = page.select(f'#compare-table tr[data-key="{row["key"]}"] td')
        assert len(cells) == 2
        for cell, value, index in zip(cells, row["values"], range(2), strict=True):
            text = cell.text.replace("◆", "").strip()
            if isinstance(value, float) and row["key"] != "cost":
                assert text.startswith(fmt_number(value)), (row["key"], text, value)
            assert ("best" in cell.get("class", [])) == (index in row["best"])
    assert page.select_one('tr[data-key="all_up_mass_g"] td.best .best-mark') is not None
    assert page.select_one('button[aria-label="Move candidate 2 left"]').text == "◂"  # named, not only titled
    assert page.select_one('button[aria-label="Move candidate 1 right"]').text == "▸"
    assert page.select_one("#compare-chart-data") is not None and page.select_one("#chart-discharge") is not None
    entry_ids = [e["entry_id"] for e in compare["entries"]]
    client.post(f"{url}/entries/{entry_ids[1]}/move", data={"csrf_token": token, "direction": "left"})
    assert [e["entry_id"] for e in client.get(f"/api/v1{url}/compare.json").json()["entries"]] == entry_ids[::-1]
    client.post(f"{url}/entries/{entry_ids[0]}/note", data={"csrf_token": token, "note": "lighter"})
    assert "lighter" in client.get(url).text
    listing = BeautifulSoup(client.get("/shortlists").text, "html.parser")
    assert "Finalists" in listing.select_one("#shortlist-list").text


def test_compare_page_cautions_when_a_part_runs_near_its_rating(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    ids = make_library(client, team)
    h = team.headers()
    # A 20 A ESC under a motor that draws more at full throttle.
    client.patch(f"/api/v1/parts/escs/{ids['escs']}", json={"continuous_current_a": 5, "burst_current_a": None},
                 headers={**h, "If-Match": '"1"'})
    sid = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h).json()["id"]
    client.post(f"/api/v1/shortlists/{sid}/entries", headers=h, json={
        "battery_id": ids["batteries"], "esc_id": ids["escs"], "motor_id": ids["motors"],
        "propeller_id": ids["propellers"]})
    ratio = client.get(f"/api/v1/shortlists/{sid}/compare.json", headers=h).json()["entries"][0]["metrics"][
        "margins"]["esc_rating_ratio"]
    login(client, team.viewer_email)
    page = BeautifulSoup(client.get(f"/shortlists/{sid}").text, "html.parser")
    caution = page.select_one(".caution").text
    # one rule (services.cautions): the motor current over the ESC's allowed current, rating ÷ the 1.2 margin
    assert f"Candidate 1: ESC above {1.2 / ratio:.0%} of its allowed current" in caution
    assert "local regulations" in caution
    assert page.select_one(".note-form") is None  # viewers read only
