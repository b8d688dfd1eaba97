"""The demo's forward-flight mission: ranked, explained and compared with the same numbers (engine vs reference)."""

from __future__ import annotations

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import transaction
from server.models import Mission
from server.schemas.predict import PredictRequest
from server.services import candidate, explain, predict, rankings

pytestmark = pytest.mark.demo_data
REL = 1e-6


def test_forward_flight_winner_is_explained_and_compared_alike(app: FastAPI, client: TestClient) -> None:
    factory = app.state.sessionmaker
    with factory() as session:
        mission = session.scalars(select(Mission).where(Mission.name == "Q4 mapping transit, 12 m/s")).one()
        assert mission.kind == "forward_flight" and mission.airframe.drag_area_m2 == 0.03
        team_id, mission_id = mission.team_id, mission.id
    with transaction(factory) as session:
        ranking_id = rankings.start(session, team_id=team_id, user_id=None, mission_id=mission_id,
                                    objective="cruise_power", top_n=5).id
    rankings.run(factory, ranking_id)
    with factory() as session:
        rows, _ = rankings.results(session, team_id=team_id, ranking_id=ranking_id, page_size=1)
        assert rows, "the demo forward-flight mission must find feasible systems"
        top = rows[0]
        ids = {k: top[k] for k in ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel")}
        verdict = explain.explain(session, team_id=team_id, mission_id=mission_id, **ids)
        mission = session.get(Mission, mission_id)
        assert mission is not None
        mission_soc = mission.cruise_state_of_charge
        evaluated = candidate.evaluate(session, team_id=team_id, mission=mission, ids=candidate.CandidateIds(**ids))
    assert verdict["feasible"]
    engine, reference = verdict["flight"], evaluated["flight"]
    assert engine is not None and reference is not None
    for key in ("tilt_deg", "thrust_per_rotor_n", "induced_velocity_m_s", "ideal_power_per_rotor_w",
                "edgewise_advance_ratio", "electrical_power_w", "hover_electrical_power_w", "power_vs_hover"):
        assert engine[key] == pytest.approx(reference[key], rel=REL), key
    assert top["cruise"]["electrical_power_w"] == pytest.approx(reference["electrical_power_w"], rel=REL)
    assert 0.5 < engine["power_vs_hover"] < 1.0  # 12 m/s with C_D A 0.03 m^2: below hover for a 2.4 kg quad
    assert 3.0 < engine["tilt_deg"] < 10.0
    # Predict at the same thrust per rotor, airspeed, drag area and state of charge reports the same numbers (the
    # craft's weight follows from the thrust: N T = hypot(D, W)).
    request = PredictRequest.model_validate({
        "battery": {"id": ids["battery_id"], "state_of_charge": mission_soc, "packs_in_parallel": 1},
        "esc": {"id": ids["esc_id"]}, "motor": {"id": ids["motor_id"]}, "propeller": {"id": ids["propeller_id"]},
        "rotor_count": 4, "conditions": {"altitude_m": 300, "forward_airspeed_m_s": 12.0, "drag_area_m2": 0.03},
        "points": [{"thrust_n": evaluated["thrust_required_n"]}, {"throttle": 0.5}]})
    with factory() as session:
        predicted = predict.predict(session, team_id, request)
    point = predicted["points"][0]
    assert point["flight"]["tilt_deg"] == pytest.approx(reference["tilt_deg"], rel=1e-9)
    assert point["flight"]["power_vs_hover"] == pytest.approx(reference["power_vs_hover"], rel=1e-9)
    assert point["craft"]["electrical_power_w"] == pytest.approx(reference["electrical_power_w"], rel=1e-9)
    assert predicted["points"][1].get("flight") is None
    assert any("static rotor" in w for w in predicted["points"][1]["warnings"])
