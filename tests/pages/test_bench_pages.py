"""Bench-run pages: preview stores nothing, upload redirects to the detail with the fit, flags and charts."""

from __future__ import annotations

import time

from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.api.test_bench_runs import csv_of
from tests.factories import login, make_team, part_payload


def test_preview_upload_and_detail(app: FastAPI, client: TestClient) -> None:
    team = make_team(app)
    h = team.headers()
    ids = {kind: client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h).json()["id"]
           for kind in ("escs", "motors", "propellers")}
    token = login(client, team.owner_email)
    form = {"csrf_token": token, "motor_id": str(ids["motors"]), "propeller_id": str(ids["propellers"]),
            "esc_id": str(ids["escs"]), "supply_voltage_v": "11.1", "name": "Stand test 1"}
    sweep = csv_of("m_a_p_1_v11p1")
    preview = client.post("/bench-runs/preview", data=form, files={"file": ("s.csv", sweep, "text/csv")},
                          headers={"HX-Request": "true"})
    fragment = BeautifulSoup(preview.text, "html.parser")
    assert fragment.select_one("#preview-table") is not None and fragment.select_one("html") is None
    assert client.get("/api/v1/bench-runs").json() == []  # a preview stores nothing
    bad = client.post("/bench-runs", data=form, files={"file": ("s.csv", "throttle,rpm\n0.5,100\n", "text/csv")})
    assert bad.status_code == 422 and "thrust_n" in BeautifulSoup(bad.text, "html.parser").select_one("ul.errors").text
    uploaded = client.post("/bench-runs", data=form, files={"file": ("s.csv", sweep, "text/csv")},
                           follow_redirects=False)
    assert uploaded.status_code == 303
    page = BeautifulSoup(client.get(uploaded.headers["location"]).text, "html.parser")
    assert page.select_one("h1").text == "Stand test 1"
    deadline = time.monotonic() + 60
    while page.select_one("#refit-status") is not None:  # the re-fit runs as a job after the upload
        assert time.monotonic() < deadline and "failed" not in page.select_one("#refit-status").text
        time.sleep(0.1)
        page = BeautifulSoup(client.get(uploaded.headers["location"]).text, "html.parser")
    assert page.select_one("#calibration-escs table") is not None
    assert "k_pwm" in page.select_one("#calibration-escs").text
    assert page.select_one("#bench-chart-data") is not None
    assert len(page.select("#samples tbody tr")) == len(sweep.strip().splitlines()) - 1
    switch = page.select_one("#calibration-motors form")
    client.post(switch["action"], data={"csrf_token": token, "active": "0"})
    again = BeautifulSoup(client.get(uploaded.headers["location"]).text, "html.parser")
    assert "Use this calibration: off" in again.select_one("#calibration-motors").text
