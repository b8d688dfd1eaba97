"""Shortlist pages: list/create, compare table equals compare.json, best marks, cautions, notes, order."""

from __future__ import annotations

import pytest
from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.pages._render import fmt_number
from server.services import seed
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


@pytest.mark.demo_data
def test_compare_marks_assumed_parts_and_shows_bands(app: FastAPI, client: TestClient) -> None:
    """Untested ESCs rest on the team's pooled k_pwm: the compare page marks them 'assumed', says how much of the
    result rests on that, and shows the 80 % bands beside the numbers; the tested ESC's column assumes nothing."""
    from sqlalchemy import select

    from server.models import PART_MODELS, Mission
    from server.schemas.shortlists import EntryCreate
    from server.services import shortlists

    login(client, seed.DEMO_LOGIN[0], seed.DEMO_LOGIN[1])
    with app.state.sessionmaker() as s:
        m = s.scalars(select(Mission).where(Mission.name == "Q4 mapping survey")).one()

        def pid(kind: str, number: str) -> int:
            return int(s.scalars(select(PART_MODELS[kind].id).where(PART_MODELS[kind].part_number == number)).one())

        sl = shortlists.create(s, team_id=m.team_id, user_id=None, name="ESC choice", mission_id=m.id)
        for esc in ("NS-E30", "NS-E45"):
            shortlists.add_entry(s, team_id=m.team_id, user_id=None, shortlist_id=sl.id, data=EntryCreate(
                battery_id=pid("batteries", "NS-B4S-5200"), esc_id=pid("escs", esc),
                motor_id=pid("motors", "NS-M3508-460"), propeller_id=pid("propellers", "NS-P13x4.4")))
        s.commit()
        sid = sl.id
    page = BeautifulSoup(client.get(f"/shortlists/{sid}").text, "html.parser")
    table = page.select_one("#compare-table")
    assumed_row = table.select_one('tr[data-key="assumed"]').select("td")
    assert "k_pwm" in assumed_row[0].text and assumed_row[1].text.split()[0] == "none"
    assert table.select_one('tr[data-key="parts.escs"]').select("td")[0].select_one(".assumed") is not None
    assert table.select_one('tr[data-key="parts.escs"]').select("td")[1].select_one(".assumed") is None
    assert "1 of the 2 candidates" in page.select_one("#compare-assumptions").text
    power = table.select_one('tr[data-key="cruise.electrical_power_w"]').select("td")
    assert all(cell.select_one(".band") for cell in power)
