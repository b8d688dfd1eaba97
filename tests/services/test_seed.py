"""The invented demo scenario: loads through the same validation as the API and meets the demo brief."""

from __future__ import annotations

from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import transaction
from server.models import Battery, BenchRun, Calibration, Motor, Propeller
from server.services import seed


def test_demo_scenario_loads_and_covers_the_brief(app: FastAPI, client: TestClient) -> None:
    with transaction(app.state.sessionmaker) as session:
        summary = seed.load_demo(session, settings=app.state.settings)
    assert "invented" in summary
    with app.state.sessionmaker() as session:
        packs = list(session.scalars(select(Battery)))
        motors = list(session.scalars(select(Motor)))
        props = list(session.scalars(select(Propeller)))
    assert len(packs) >= 8 and all(3 <= p.cells_series <= 12 for p in packs)
    assert min(p.capacity_mah for p in packs) >= 1500 and max(p.capacity_mah for p in packs) <= 22000
    assert len(motors) >= 12 and all(100 <= m.kv_rpm_per_v <= 1400 for m in motors)
    assert len(props) >= 12 and min(p.diameter_in for p in props) >= 5 and max(p.diameter_in for p in props) <= 30
    assert any(p.forward_table for p in props)
    with app.state.sessionmaker() as session:
        runs = list(session.scalars(select(BenchRun)))
        calibrations = list(session.scalars(select(Calibration)))
    assert len(runs) == len(seed.read_demo()["bench_runs"]) >= 2 and all(r.sample_count > 5 for r in runs)
    assert {c.part_kind for c in calibrations} == {"escs", "motors", "propellers"}
    assert all("synthetic" in r.name for r in runs)
    demo = seed.read_demo()
    assert "invented" in demo["_note"].lower()
    assert len(demo["airframes"]) == 3


def test_demo_login_works(app: FastAPI, client: TestClient) -> None:
    with transaction(app.state.sessionmaker) as session:
        seed.load_demo(session, settings=app.state.settings)
    page = client.get("/login").text
    token = page.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]
    email, password = seed.DEMO_LOGIN
    response = client.post(
        "/login", data={"email": email, "password": password, "csrf_token": token}, follow_redirects=False
    )
    assert response.status_code == 303
    assert "Northfold Survey" in client.get("/").text
