"""Rankings pages: start from the form, progress block while running, results equal the API, filters, Pareto."""

from __future__ import annotations

import time

import pytest
from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.services import seed
from tests.factories import login


@pytest.mark.demo_data
def test_rank_in_the_browser_and_read_the_results(app: FastAPI, client: TestClient) -> None:
    token = login(client, seed.DEMO_LOGIN[0], seed.DEMO_LOGIN[1])
    index = BeautifulSoup(client.get("/rankings").text, "html.parser")
    mission_id = next(o["value"] for o in index.select("#mission_id option") if o.text == "Q4 mapping survey")
    started = client.post("/rankings", data={"csrf_token": token, "mission_id": mission_id,
                                             "objective": "cruise_power", "top_n": "30"}, follow_redirects=False)
    assert started.status_code == 303
    url = started.headers["location"]
    ranking_id = int(url.rsplit("/", 1)[1])
    deadline = time.monotonic() + 60
    while True:
        block = client.get(url, headers={"HX-Request": "true", "HX-Target": "ranking-job"})
        fragment = BeautifulSoup(block.text, "html.parser")
        assert fragment.select_one("html") is None
        if fragment.select_one("#ranking-progress") is None:
            break
        assert fragment.select_one("[hx-trigger]") is not None  # keeps polling while running
        assert time.monotonic() < deadline
        time.sleep(0.05)
    page = BeautifulSoup(client.get(url).text, "html.parser")
    api = client.get(f"/api/v1/rankings/{ranking_id}/results").json()["items"]
    rows = page.select("#results tbody tr")
    assert len(rows) == len(api) == 30
    for row, item in zip(rows, api, strict=True):
        cells = row.select("td")
        assert cells[0].text.strip() == str(item["rank"])
        assert cells[7].text.strip() == f"{item['cruise']['electrical_power_w']:.3g}".replace(",", "")
    rejections = page.select_one("#rejections").text
    assert "thrust-to-weight below the mission's minimum 2.00" in rejections
    assert page.select_one("#pareto-chart-data") is not None
    filtered = BeautifulSoup(client.get(f"{url}?cells=4&sort=-endurance_min",
                                        headers={"HX-Request": "true", "HX-Target": "ranking-results"}).text,
                             "html.parser")
    assert filtered.select_one("#ranking-results") is not None and filtered.select_one("#ranking-summary") is None
    packs = [r.select("td")[1].text for r in filtered.select("#results tbody tr")]
    assert packs and all("4S" in p for p in packs)
    added = client.post(f"{url}/shortlist", data={"csrf_token": token, "rank": "1", "shortlist_id": ""},
                        headers={"HX-Request": "true"})
    assert "added" in added.text
    shortlists = client.get("/api/v1/shortlists").json()
    assert shortlists[0]["entries"][0]["ranking_id"] == ranking_id
