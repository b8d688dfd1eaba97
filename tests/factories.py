"""Small factory functions: teams with keys and users, valid part payloads per kind."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.services import teams

PASSWORD = "correct-horse-battery"


@dataclass
class TeamFixture:
    team_id: int
    name: str
    read_key: str
    write_key: str
    owner_email: str
    viewer_email: str

    def headers(self, scope: str = "write") -> dict[str, str]:
        return {"Authorization": f"Bearer {self.write_key if scope == 'write' else self.read_key}"}


def make_team(app: FastAPI, name: str = "Alpha") -> TeamFixture:
    """A team with an owner, a viewer, and one read and one write key."""
    slug = name.lower().replace(" ", "-")
    with transaction(app.state.sessionmaker) as session:
        team = teams.create_team(session, name=name)
        settings = app.state.settings
        teams.create_user(
            session, settings=settings, email=f"owner@{slug}.example", password=PASSWORD, team=team, role="owner"
        )
        teams.create_user(
            session, settings=settings, email=f"viewer@{slug}.example", password=PASSWORD, team=team, role="viewer"
        )
        _, read_key = teams.create_api_key(session, team_id=team.id, scope="read")
        _, write_key = teams.create_api_key(session, team_id=team.id, scope="write")
        return TeamFixture(team.id, name, read_key, write_key, f"owner@{slug}.example", f"viewer@{slug}.example")


def login(client: TestClient, email: str, password: str = PASSWORD) -> str:
    """Log in through the form; returns the session's CSRF token."""
    page = client.get("/login")
    token = page.text.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]
    response = client.post(
        "/login", data={"email": email, "password": password, "csrf_token": token, "next": "/"}, follow_redirects=False
    )
    assert response.status_code == 303, response.text
    home = client.get("/")
    return home.text.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]


def part_payload(kind: str, name: str = "Test part", **overrides: Any) -> dict[str, Any]:
    """A valid create body for ``kind`` (values are arbitrary but inside every bound)."""
    base: dict[str, dict[str, Any]] = {
        "batteries": {
            "cells_series": 4,
            "cells_parallel": 1,
            "capacity_mah": 5000,
            "cell_resistance_mohm": 5,
            "max_continuous_c": 25,
            "max_burst_c": 50,
            "chemistry": "lipo",
            "mass_g": 540,
        },
        "escs": {
            "continuous_current_a": 40,
            "burst_current_a": 50,
            "min_cells": 2,
            "max_cells": 6,
            "pwm_frequency_khz": 24,
            "mass_g": 30,
        },
        "motors": {
            "kv_rpm_per_v": 920,
            "winding_resistance_ohm": 0.1,
            "no_load_current_a": 0.5,
            "no_load_test_voltage_v": 10,
            "max_current_a": 25,
            "max_cells": 4,
            "mass_g": 60,
        },
        "propellers": {
            "diameter_in": 10,
            "pitch_in": 4.7,
            "blades": 2,
            "ct": 0.11,
            "cp": 0.045,
            "mass_g": 14,
            "static_table": [{"rpm": 3000, "ct": 0.108, "cp": 0.046}, {"rpm": 6000, "ct": 0.113, "cp": 0.045}],
        },
    }
    return {
        "name": name,
        "part_number": f"T-{kind[:3]}-1",
        "maker": "Test maker",
        "unit_cost": 10.0,
        **base[kind],
        **overrides,
    }


def make_library(client: TestClient, team: TeamFixture, rotors: int = 4) -> dict[str, int]:
    """One of each part (from part_payload), an airframe and a hover mission; returns their ids."""
    h = team.headers()
    ids = {kind: client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h).json()["id"]
           for kind in ("batteries", "escs", "motors", "propellers")}
    ids["airframe"] = client.post("/api/v1/airframes", headers=h, json={
        "name": "Test quad", "rotor_count": rotors, "frame_mass_g": 900}).json()["id"]
    ids["mission"] = client.post("/api/v1/missions", headers=h, json={
        "name": "Test hover", "airframe_id": ids["airframe"], "kind": "hover", "payload_mass_g": 200,
        "altitude_m": 500}).json()["id"]
    return ids


def demo_key(app: FastAPI) -> tuple[dict[str, str], dict[str, int]]:
    """A write key of the demo team (test marked ``demo_data``) and the demo missions' ids by name."""
    from sqlalchemy import select

    from server.models import Mission

    with transaction(app.state.sessionmaker) as session:
        team = teams.get_team_by_name(session, name="Northfold Survey")
        _, key = teams.create_api_key(session, team_id=team.id, scope="write")
        missions = {m.name: m.id for m in session.scalars(select(Mission).where(Mission.team_id == team.id))}
    return {"Authorization": f"Bearer {key}"}, missions
