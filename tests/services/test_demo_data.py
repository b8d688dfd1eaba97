"""The invented demo scenario stays believable to a practitioner: every synthetic sweep point inside its parts'
ratings, every demo propeller's static figure of merit inside the range of published measurements, every forward
table below the momentum (Froude) limit with a realistic peak efficiency, and every demo mission still finds
feasible systems.

The demo values are invented (seed_data/README.md): here they are what is checked, never a check value. The
published ranges come from the UIUC Propeller Database (J. B. Brandt, R. W. Deters, G. K. Ananda, O. D. Dantsker,
M. S. Selig, University of Illinois at Urbana-Champaign; Vol. 1: Brandt & Selig, "Propeller Performance Data at
Low Reynolds Numbers", AIAA Paper 2011-1255; Vol. 2: Deters, Ananda & Selig, "Reynolds Number Effects on the
Performance of Small-Scale Propellers", AIAA Paper 2014-2151): the rows in tests/data/reference/propellers
(PROVENANCE.md), read here and reduced to their range.
"""

from __future__ import annotations

import csv
import math
import time
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.bench_runs.csv_format import parse_bench_csv
from server.physics.battery import DEFAULT_CUTOFF_V_PER_CELL, full_voltage_per_cell_v
from server.services import seed
from tests.factories import demo_key

UIUC_DIR = Path(__file__).resolve().parents[1] / "data" / "reference" / "propellers"
DEMO = seed.read_demo()
PROPS = {p["part_number"]: p for p in DEMO["propellers"]}
PARTS = {p["part_number"]: p for kind in ("batteries", "escs", "motors", "propellers") for p in DEMO[kind]}


def figure_of_merit(ct: float, cp: float) -> float:
    """FM = sqrt(2/pi) CT^1.5 / CP in the propeller convention (docs/model-reference.md#propeller-equations;
    momentum theory as in J. G. Leishman, Principles of Helicopter Aerodynamics, 2006)."""
    return math.sqrt(2.0 / math.pi) * ct**1.5 / cp


def froude_efficiency(j: float, ct: float) -> float:
    """The momentum (actuator-disk) limit on propeller efficiency at advance ratio J and thrust coefficient CT:
    2 / (1 + sqrt(1 + 8 CT / (pi J^2))) (docs/model-reference.md#propeller-equations; Leishman 2006)."""
    return 2.0 / (1.0 + math.sqrt(1.0 + 8.0 * ct / (math.pi * j * j)))


def _rows(path: Path) -> list[dict[str, float]]:
    with path.open(newline="") as fh:
        return [{k: float(v) for k, v in row.items()} for row in csv.DictReader(fh)]


def uiuc_static_fm_range() -> tuple[float, float]:
    """Lowest and highest FM over every row of every UIUC static file in the repository."""
    fms = [figure_of_merit(r["ct"], r["cp"]) for f in sorted((UIUC_DIR / "static").glob("*.csv")) for r in _rows(f)]
    return min(fms), max(fms)


def uiuc_forward_peak_range() -> tuple[float, float]:
    """Lowest and highest peak efficiency J CT / CP over the UIUC forward runs in the repository."""
    peaks = [max(r["j"] * r["ct"] / r["cp"] for r in _rows(f)) for f in sorted((UIUC_DIR / "forward").glob("*.csv"))]
    return min(peaks), max(peaks)


def static_points(prop: dict[str, Any]) -> list[tuple[float, float]]:
    """Every static point of a demo propeller: its table rows, or its constant (ct, cp) pair."""
    return [(r["ct"], r["cp"]) for r in prop.get("static_table") or [{"ct": prop["ct"], "cp": prop["cp"]}]]


def test_the_published_ranges_are_what_the_data_say() -> None:
    # 12 static files (Vols. 1-2) and 11 forward runs; the extremes are a stalled 17x12 (FM 0.379) and a
    # slow-flyer 11x4.7 at 6021 rpm (0.725); forward peaks run from 0.571 (DA4022, 4 blades) to 0.692 (10x7)
    assert len(list((UIUC_DIR / "static").glob("*.csv"))) == 12
    assert uiuc_static_fm_range() == pytest.approx((0.3787, 0.7247), abs=1e-4)
    assert uiuc_forward_peak_range() == pytest.approx((0.571, 0.692), abs=2e-3)


@pytest.mark.parametrize("part_number", sorted(PROPS))
def test_every_demo_propeller_has_a_published_static_figure_of_merit(part_number: str) -> None:
    lo, hi = uiuc_static_fm_range()
    fms = [figure_of_merit(ct, cp) for ct, cp in static_points(PROPS[part_number])]
    assert all(lo <= fm <= hi for fm in fms), (part_number, fms, (lo, hi))
    middle = PROPS[part_number]
    assert lo <= figure_of_merit(middle["ct"], middle["cp"]) <= hi


@pytest.mark.parametrize("part_number", sorted(p for p, v in PROPS.items() if v.get("forward_table")))
def test_demo_forward_tables_respect_the_momentum_limit_and_peak_like_measured_props(part_number: str) -> None:
    prop = PROPS[part_number]
    rows = prop["forward_table"]
    efficiencies = []
    for r in rows:
        eta = r["j"] * r["ct"] / r["cp"]
        efficiencies.append(eta)
        assert r["cp"] > 0 and eta < 1.0, r
        if r["j"] > 0 and r["ct"] > 0:
            assert eta <= froude_efficiency(r["j"], r["ct"]), (r, froude_efficiency(r["j"], r["ct"]))
        else:
            assert eta <= 0.0, r  # static row or past the windmill point: no useful work
    lo, hi = uiuc_forward_peak_range()
    assert lo <= max(efficiencies) <= hi, (max(efficiencies), (lo, hi))
    # the J = 0 row is the static point at the table's rpm (the same propeller, measured twice)
    static = prop.get("static_table") or [{"rpm": 0.0, "ct": prop["ct"], "cp": prop["cp"]}]
    rpms = [s["rpm"] for s in static]
    assert rows[0]["j"] == 0.0
    assert rows[0]["ct"] == pytest.approx(np.interp(prop["forward_table_rpm"], rpms, [s["ct"] for s in static]),
                                          rel=2e-3)
    assert rows[0]["cp"] == pytest.approx(np.interp(prop["forward_table_rpm"], rpms, [s["cp"] for s in static]),
                                          rel=2e-3)


@pytest.mark.parametrize("run", DEMO["bench_runs"], ids=lambda r: r["file"])
def test_every_demo_sweep_point_is_inside_its_parts_ratings(run: dict[str, Any]) -> None:
    motor, esc, pack = PARTS[run["motor"]], PARTS[run["esc"]], PARTS[run["pack"]]
    assert "(synthetic)" in run["name"] and "Synthetic" in run["notes"] and "invented" in run["notes"]
    cells = pack["cells_series"]
    assert esc["min_cells"] <= cells <= esc["max_cells"] and cells <= motor["max_cells"]
    s = parse_bench_csv((seed.DEMO_FILE.parent / run["file"]).read_bytes())
    # the bus stays between the pack's full charge and its under-load cut-off (docs/model-reference.md#battery-pack)
    assert np.all(s.bus_voltage_v <= cells * full_voltage_per_cell_v(pack["chemistry"]))
    assert np.all(s.bus_voltage_v >= cells * DEFAULT_CUTOFF_V_PER_CELL)
    # one motor on the stand: the bus current is the pack current (C-rating on the pack capacity)
    assert np.all(s.bus_current_a <= pack["max_continuous_c"] * pack["capacity_mah"] / 1000.0)
    # electrical input power bounds the motor's input power (the ESC loses some)
    assert np.all(s.bus_voltage_v * s.bus_current_a <= motor["max_power_w"])
    # energy balance at the ESC, V I_bus = d V I + P_extra with P_extra >= 0 (docs/model-reference.md#esc), so
    # I_bus / d bounds the motor current, which also flows through the ESC's switches
    duty = run.get("throttle_offset", 0.0) + run.get("throttle_scale", 1.0) * s.throttle
    running = duty > 0
    motor_current_bound = s.bus_current_a[running] / duty[running]
    assert np.all(motor_current_bound <= motor["max_current_a"]), motor_current_bound.max()
    assert np.all(motor_current_bound <= esc["continuous_current_a"]), motor_current_bound.max()
    assert np.all(s.bus_current_a[~running] < 0.5)  # idle: only the ESC's own draw


@pytest.mark.demo_data
def test_every_demo_mission_ranks_feasible_systems(app: FastAPI, client: TestClient) -> None:
    headers, missions = demo_key(app)
    assert len(missions) == len(DEMO["missions"])
    for name, mission_id in missions.items():
        rid = client.post("/api/v1/rankings", json={"mission_id": mission_id, "top_n": 5}, headers=headers).json()["id"]
        deadline = time.monotonic() + 60
        while (status := client.get(f"/api/v1/rankings/{rid}", headers=headers).json())["status"] not in (
                "done", "failed"):
            assert time.monotonic() < deadline, name
            time.sleep(0.05)
        assert status["status"] == "done" and status["feasible"] > 0, (name, status)
