"""Bench-run pages: preview stores nothing, upload redirects to the detail with the fit, flags and charts."""

from __future__ import annotations

import json
import time

import pytest
from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.api.test_bench_runs import FOUR_SWEEPS, calibration_of, csv_of, upload, upload_sweeps
from tests.api.test_bench_runs import stand as stand  # noqa: F401 (a fixture)
from tests.factories import TeamFixture, login, make_team, part_payload


def stand_form(app: FastAPI, client: TestClient, name: str) -> tuple[TeamFixture, dict[str, str]]:
    """A new team with an ESC, a motor and a propeller, its owner logged in; the upload form's fields."""
    team = make_team(app)
    ids = {kind: client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=team.headers()).json()["id"]
           for kind in ("escs", "motors", "propellers")}
    return team, {"csrf_token": login(client, team.owner_email), "motor_id": str(ids["motors"]),
                  "propeller_id": str(ids["propellers"]), "esc_id": str(ids["escs"]), "supply_voltage_v": "11.1",
                  "name": name}


def test_preview_upload_and_detail(app: FastAPI, client: TestClient) -> None:
    _, form = stand_form(app, client, "Stand test 1")
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
    client.post(switch["action"], data={"csrf_token": form["csrf_token"], "active": "0"})
    again = BeautifulSoup(client.get(uploaded.headers["location"]).text, "html.parser")
    assert "Use this calibration: off" in again.select_one("#calibration-motors").text


def test_the_upload_form_names_a_reversed_load_cell_and_flips_it(app: FastAPI, client: TestClient) -> None:
    # m_m_p_8_v11p1: a published 5-inch sweep whose thrust reads negative throughout (PROVENANCE.md, bench-5in)
    team, form = stand_form(app, client, "Reversed cell")
    upload_page = BeautifulSoup(client.get("/bench-runs").text, "html.parser")
    assert [o["value"] for o in upload_page.select("#thrust_sign option")] == ["1", "-1"]
    sweep = csv_of("m_m_p_8_v11p1")
    rejected = client.post("/bench-runs", data=form, files={"file": ("s.csv", sweep, "text/csv")})
    assert rejected.status_code == 422
    errors = BeautifulSoup(rejected.text, "html.parser").select_one("ul.errors").text
    assert "load cell looks reversed" in errors
    kept = BeautifulSoup(rejected.text, "html.parser")
    assert kept.select_one("#thrust_sign option[selected]") is None  # the form keeps what was sent (1)
    uploaded = client.post("/bench-runs", data=form | {"thrust_sign": "-1"},
                           files={"file": ("s.csv", sweep, "text/csv")}, follow_redirects=False)
    assert uploaded.status_code == 303
    page = BeautifulSoup(client.get(uploaded.headers["location"]).text, "html.parser")
    assert "flipped on import" in page.select_one("#thrust-flipped").text
    run = client.get("/api/v1/bench-runs", headers=team.headers()).json()[0]
    assert run["thrust_sign"] == -1


def test_calibration_page_names_entered_against_fitted_and_what_a_refit_moved(
        app: FastAPI, client: TestClient, stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    upload_sweeps(client, team, ids, FOUR_SWEEPS[:3])
    response = upload_sweeps(client, team, ids, FOUR_SWEEPS[3:])
    last, refit = response.json(), calibration_of(client, team, response)
    changes = refit["changes"]
    # The fourth upload re-fits the whole pool: the ESC's k_pwm moves although that run is about propeller 2.
    esc_moves = [c for c in changes if c["part_kind"] == "escs" and c["parameter"] == "k_pwm"]
    assert len(esc_moves) == 1 and esc_moves[0]["before"] != esc_moves[0]["after"]
    assert esc_moves[0]["change"] == pytest.approx(esc_moves[0]["after"] / esc_moves[0]["before"] - 1)
    login(client, team.owner_email)
    page = BeautifulSoup(client.get(f"/bench-runs/{last['id']}").text, "html.parser")
    header = page.select_one("main section p.muted").text
    assert "2205 2600" in header and "5x4.5x3" in header  # names, not ids
    motor = page.select_one("#calibration-motors")
    assert "kv_rpm_per_v" not in motor.text and "winding_resistance_ohm" not in motor.text
    kv = motor.select_one("tr[data-param=kv_rpm_per_v]")
    cells = ["".join(td.text.split()) for td in kv.select("td")]  # without spaces (thin spaces group digits)
    fitted = next(c for c in refit["calibrations"] if c["part_kind"] == "motors")["parameters"]["kv_rpm_per_v"]
    assert cells[0] == "2600rpm/Ventered"  # the part's own Kv, entered
    assert cells[1].startswith(f"{fitted['value']:.0f}rpm/V±")
    assert cells[2] == f"{(fitted['value'] / 2600 - 1) * 100:+.1f}%"
    esc_notes = (page.select_one("#calibration-escs .note") or BeautifulSoup("", "html.parser")).text
    assert "No-load current" not in esc_notes and "Kv" not in esc_notes  # each part shows its own notes only
    assert page.select_one("#calibration-propellers canvas#prop-coefficients") is not None
    chart = json.loads(page.select_one("#bench-chart-data").text)
    assert len(chart["prop_table"]["rows"]) >= 2
    rows = page.select("#changes-table tbody tr")
    assert any("k_pwm" in r.text and "ESC" not in r.select("td")[0].text for r in rows)  # named by the ESC's name
    assert len(rows) == len(client.get(f"/api/v1/bench-runs/{last['id']}", headers=team.headers()).json()[
        "calibration_changes"])


def test_a_run_on_a_pack_names_the_pack(app: FastAPI, client: TestClient,
                                        stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    pack = client.post("/api/v1/parts/batteries", json=part_payload("batteries", name="Field pack 2S",
                                                                    cells_series=2), headers=team.headers()).json()
    response = upload(client, team, ids, csv_of("m_a_p_1_v7p4"), pack_id=pack["id"])
    run = response.json()
    calibration_of(client, team, response)
    login(client, team.owner_email)
    page = BeautifulSoup(client.get(f"/bench-runs/{run['id']}").text, "html.parser")
    assert "pack Field pack 2S" in page.select_one("main section p.muted").text
