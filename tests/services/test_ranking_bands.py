"""Ranking bands come from the ranking engine's own physics: with nothing uncertain they collapse onto the row.

The demo scenario (invented data) is only the library the engine runs on here; the check is an identity between
two code paths, not a check value.
"""

from __future__ import annotations

from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.models import Mission, Team
from server.selection import rank
from server.services import bands, ranking_bands
from server.services.ranking_inputs import engine_inputs, snapshot

pytestmark = pytest.mark.demo_data


def _snapshot(app: FastAPI, kind: str) -> dict[str, Any]:
    with app.state.sessionmaker() as session:
        team = session.scalars(select(Team)).first()
        assert team is not None
        mission = session.scalars(select(Mission).where(Mission.team_id == team.id, Mission.kind == kind)).first()
        assert mission is not None
        return snapshot(session, team_id=team.id, mission=mission)


@pytest.mark.parametrize("kind", ["hover", "cruise"])
def test_bands_without_uncertainty_are_the_rows_own_numbers(app: FastAPI, client: TestClient,
                                                             monkeypatch: pytest.MonkeyPatch, kind: str) -> None:
    snap = _snapshot(app, kind)
    library, mission = engine_inputs(snap)
    rows = rank(library, mission, objective="cruise_power", top_n=6).top
    assert rows
    exact = bands.drawn_values
    monkeypatch.setattr(bands, "drawn_values", lambda system, samples, **_: exact(system, samples, vary=()))
    monkeypatch.setattr(ranking_bands, "DRAW_SOC_STEP", 0.01)  # the row's own discharge step: the same path
    for row, banded in zip(rows, ranking_bands.with_bands(snap, "cruise_power", rows), strict=True):
        for got, want in ((banded["cruise"]["electrical_power_w_band"], row.cruise["electrical_power_w"]),
                          (banded["cruise"]["specific_thrust_g_per_w_band"], row.cruise["specific_thrust_g_per_w"]),
                          (banded["full_throttle"]["thrust_to_weight_band"], row.full_throttle["thrust_to_weight"]),
                          (banded["endurance_min_band"], row.endurance_min)):
            assert got == pytest.approx([want, want], rel=1e-9)
        assert banded["feasible_share"] == 1.0


def test_bands_hold_the_row_and_mark_the_rows_the_data_cannot_separate(app: FastAPI, client: TestClient) -> None:
    snap = _snapshot(app, "hover")
    library, mission = engine_inputs(snap)
    rows = rank(library, mission, objective="cruise_power", top_n=12).top
    banded = ranking_bands.with_bands(snap, "cruise_power", rows)
    ranking_bands.mark_indistinguishable(banded, "cruise_power")
    best = banded[0]
    assert best["indistinguishable_from_best"] is True
    lo, hi = best["cruise"]["electrical_power_w_band"]
    assert lo < best["cruise"]["electrical_power_w"] < hi
    for r in banded[1:]:
        overlap = r["cruise"]["electrical_power_w_band"][0] <= hi
        assert r["indistinguishable_from_best"] is overlap
    assert any(r["assumed_share"] for r in banded)  # the demo's untested ESCs rest on the team's pooled k_pwm


def test_objectives_without_a_band_compare_values() -> None:
    a = {"rank": 1, "all_up_mass_g": 900.0, "cost": 100.0}
    b = {"rank": 2, "all_up_mass_g": 900.0, "cost": 120.0}
    assert ranking_bands.indistinguishable(a, b, "mass") is True
    assert ranking_bands.indistinguishable(a, b, "cost") is False
    c = {"rank": 2, "cruise": {"electrical_power_w_band": [10.0, 12.0]}}
    d = {"rank": 3, "cruise": {"electrical_power_w_band": [12.5, 13.0]}}
    best = {"rank": 1, "cruise": {"electrical_power_w_band": [9.0, 11.0]}}
    assert ranking_bands.indistinguishable(best, c, "cruise_power") is True
    assert ranking_bands.indistinguishable(best, d, "cruise_power") is False
    assert ranking_bands.indistinguishable(best, {"rank": 4, "cruise": {}}, "cruise_power") is None


def test_the_coarser_discharge_step_of_the_draws_moves_the_endurance_band_far_less_than_its_width(
        app: FastAPI, client: TestClient, monkeypatch: pytest.MonkeyPatch) -> None:
    snap = _snapshot(app, "hover")
    library, mission = engine_inputs(snap)
    rows = rank(library, mission, objective="cruise_power", top_n=8).top
    coarse = ranking_bands.with_bands(snap, "cruise_power", rows)
    monkeypatch.setattr(ranking_bands, "DRAW_SOC_STEP", 0.01)
    fine = ranking_bands.with_bands(snap, "cruise_power", rows)
    for c, f in zip(coarse, fine, strict=True):
        (lo_c, hi_c), (lo_f, hi_f) = c["endurance_min_band"], f["endurance_min_band"]
        assert max(abs(lo_c - lo_f), abs(hi_c - hi_f)) < 0.02 * (hi_f - lo_f)
        assert c["cruise"]["electrical_power_w_band"] == f["cruise"]["electrical_power_w_band"]
