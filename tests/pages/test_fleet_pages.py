"""Fleet plan pages: start from the form, progress block, assignments and trade-off, shortlists from the plan."""

from __future__ import annotations

import time

import pytest
from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.services import seed
from tests.factories import login


@pytest.mark.demo_data
def test_demo_fleet_plan_in_the_browser(app: FastAPI, client: TestClient) -> None:
    token = login(client, *seed.DEMO_LOGIN)
    index = BeautifulSoup(client.get("/fleet-plans").text, "html.parser")
    boxes = {row.select("td")[1].text: row.select_one("input[type=checkbox]")["name"]
             for row in index.select("#fleet-missions tbody tr")}
    form = {"csrf_token": token, "name": "Three airframes", "candidates_per_mission": "40"}
    for name in ("Q4 mapping survey", "H6 structure inspection", "V1 corridor cruise"):
        form[boxes[name]] = "1"
    none = client.post("/fleet-plans", data={"csrf_token": token})
    assert none.status_code == 422 and "missions" in none.text
    started = client.post("/fleet-plans", data=form, follow_redirects=False)
    assert started.status_code == 303
    url = started.headers["location"]
    deadline = time.monotonic() + 120
    while True:
        block = BeautifulSoup(client.get(url, headers={"HX-Request": "true"}).text, "html.parser")
        if block.select_one("#fleet-progress") is None:
            break
        assert time.monotonic() < deadline
        time.sleep(0.05)
    page = BeautifulSoup(client.get(url).text, "html.parser")
    rows = page.select("#assignments tbody tr")
    assert len(rows) == 3 and page.select_one("#stocked") is not None
    assert page.select_one("#tradeoff-chart-data") is not None and page.select(".tradeoff-point")
    assert client.post(f"{url}/shortlist", data={"csrf_token": token}, follow_redirects=False).status_code == 303
    names = [s["name"] for s in client.get("/api/v1/shortlists").json()]
    assert sum(n.startswith("Three airframes:") for n in names) == 3
