"""candidate._evaluate solves the points that hold the required thrust in one call, and both full-throttle points in
one: each element must come out exactly as a call of its own gives it (the stored snapshots compare for equality)."""

from __future__ import annotations

from dataclasses import fields

import numpy as np
import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.models import PART_MODELS, Mission
from server.physics import drive, fast
from server.physics.operating_point import OperatingPoint
from server.services import candidate

pytestmark = pytest.mark.demo_data
SYSTEM = {"batteries": "NS-B4S-5200", "escs": "NS-E30", "motors": "NS-M3508-460", "propellers": "NS-P13x4.4"}


def _arrays(op: OperatingPoint) -> dict[str, np.ndarray]:
    out = {f.name: np.asarray(getattr(op, f.name)) for f in fields(op) if f.name != "esc_terms"}
    out |= {f"esc_terms.{f.name}": np.asarray(getattr(op.esc_terms, f.name)) for f in fields(op.esc_terms)}
    return out


def _same(a: OperatingPoint, b: OperatingPoint) -> None:
    x, y = _arrays(a), _arrays(b)
    for name in x:
        assert x[name].shape == y[name].shape and np.array_equal(x[name], y[name], equal_nan=True), name


@pytest.mark.parametrize("mission_name", ["Q4 mapping survey", "Q4 mapping survey, 40 °C day"])
def test_one_solve_gives_each_point_of_separate_solves(app: FastAPI, client: TestClient, mission_name: str) -> None:
    with app.state.sessionmaker() as session:
        mission = session.scalars(select(Mission).where(Mission.name == mission_name)).one()
        ids = {k: session.scalars(select(PART_MODELS[k].id).where(PART_MODELS[k].part_number == n)).one()
               for k, n in SYSTEM.items()}
        c = candidate.load(session, team_id=mission.team_id, mission=mission, ids=candidate.CandidateIds(
            ids["batteries"], ids["escs"], ids["motors"], ids["propellers"]))
        candidate._temperatures(c)  # the hot motor and warm pack of the 40 °C day, as _evaluate uses them
        soc = mission.cruise_state_of_charge
        nodes = fast.constant_thrust_nodes(1.0, c.pack, ())
        socs = np.linspace(1.0, 1.0 - mission.usable_fraction, candidate.CURVE_SOCS)
        cruise, at_nodes, held = candidate._held(c, [np.array([soc]), nodes, socs])
        _same(cruise, drive.for_thrust(c.thrust_required_n, **c.point_at_soc(soc), flight=c.flight))
        for got, at in ((at_nodes, nodes), (held, socs)):
            _same(got, drive.for_thrust(np.full(at.shape, c.thrust_required_n), **{
                **c.kwargs, "open_circuit_voltage_v": c.pack.open_circuit_voltage_v(at),
                "pack_resistance_ohm": float(c.pack.resistance_ohm)}, flight=c.flight))
        full = {} if c.full_motor is None else {"motor": c.full_motor}
        pair = candidate._points(drive.full_throttle(**c.point_at_soc(np.array([1 - mission.usable_fraction, 1.0]),
                                                                      **full)), 2)
        for got, at in zip(pair, (1 - mission.usable_fraction, 1.0), strict=True):
            _same(got, drive.full_throttle(**c.point_at_soc(at, **full)))
        assert mission_name == "Q4 mapping survey" or c.full_motor is not None  # the hot case is exercised
