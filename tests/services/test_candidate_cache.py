"""Compare evaluations are cached by the versions of everything they depend on: a repeat is served from the cache,
any edit of a part, the mission or a calibration switch is evaluated afresh (never a stale number)."""

from __future__ import annotations

import shutil
from collections import OrderedDict
from dataclasses import replace
from pathlib import Path
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import make_engine, make_sessionmaker, transaction
from server.models import PART_MODELS, Calibration, Mission
from server.services import calibrations, candidate, missions
from server.services import parts as parts_service

pytestmark = pytest.mark.demo_data
SYSTEM = {"batteries": "NS-B4S-5200", "escs": "NS-E45", "motors": "NS-M3508-460", "propellers": "NS-P13x4.4"}


def _ids(session: Any) -> tuple[Mission, candidate.CandidateIds]:
    mission = session.scalars(select(Mission).where(Mission.name == "Q4 mapping survey")).one()
    ids = {k: session.scalars(select(PART_MODELS[k].id).where(PART_MODELS[k].part_number == n)).one()
           for k, n in SYSTEM.items()}
    return mission, candidate.CandidateIds(ids["batteries"], ids["escs"], ids["motors"], ids["propellers"])


def test_repeat_is_cached_and_every_change_is_seen(app: FastAPI, client: TestClient,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    calls = []
    real = candidate._evaluate
    monkeypatch.setattr(candidate, "_evaluate", lambda *a, **k: calls.append(1) or real(*a, **k))
    monkeypatch.setattr(candidate, "_cache", OrderedDict())  # other tests may have evaluated the same demo system
    factory = app.state.sessionmaker

    def power() -> float:
        with factory() as session:
            mission, ids = _ids(session)
            value = candidate.evaluate(session, team_id=mission.team_id, mission=mission, ids=ids)
            return float(value["cruise"]["electrical_power_w"])

    first = power()
    assert power() == first and len(calls) == 1  # served from the cache
    with transaction(factory) as session:
        mission, ids = _ids(session)
        motor = parts_service.get_part(session, team_id=mission.team_id, kind="motors", part_id=ids.motor_id)
        parts_service.update_part(session, team_id=mission.team_id, user_id=None, kind="motors", part_id=motor.id,
                                  changes={"mass_g": motor.mass_g + 100}, expected_version=motor.version)
    heavier = power()
    assert len(calls) == 2 and heavier > first  # the edit is seen
    with transaction(factory) as session:
        mission, _ = _ids(session)
        missions.update_mission(session, team_id=mission.team_id, mission_id=mission.id,
                                changes={"payload_mass_g": mission.payload_mass_g + 200},
                                expected_version=mission.version)
    assert power() > heavier and len(calls) == 3
    with transaction(factory) as session:
        mission, ids = _ids(session)
        active = session.scalars(select(Calibration).where(Calibration.part_kind == "escs",
                                                           Calibration.part_id == ids.esc_id,
                                                           Calibration.active.is_(True))).first()
        assert active is not None  # the demo's sweeps calibrate NS-E45
        calibrations.set_active(session, team_id=mission.team_id, calibration_id=active.id, active=False)
    before = len(calls)
    power()
    assert len(calls) == before + 1  # a calibration switch is a new key


def test_two_databases_with_the_same_ids_never_share_an_evaluation(app: FastAPI, client: TestClient,
                                                                   demo_template: Path, tmp_path: Path) -> None:
    """Copies of one database hold the same ids and versions (tests, restored backups): an edit in one copy must not
    be answered from the other's cached evaluation."""
    path = tmp_path / "copy.db"
    shutil.copy(demo_template, path)
    engine = make_engine(f"sqlite:///{path}")
    try:
        factories = {"app": app.state.sessionmaker, "copy": make_sessionmaker(engine)}
        with transaction(factories["copy"]) as session:  # the same edit count in both: equal versions
            mission, ids = _ids(session)
            motor = parts_service.get_part(session, team_id=mission.team_id, kind="motors", part_id=ids.motor_id)
            parts_service.update_part(session, team_id=mission.team_id, user_id=None, kind="motors",
                                      part_id=motor.id, changes={"mass_g": motor.mass_g + 100},
                                      expected_version=motor.version)
        with transaction(factories["app"]) as session:
            mission, ids = _ids(session)
            motor = parts_service.get_part(session, team_id=mission.team_id, kind="motors", part_id=ids.motor_id)
            parts_service.update_part(session, team_id=mission.team_id, user_id=None, kind="motors",
                                      part_id=motor.id, changes={"notes": "same version, other data"},
                                      expected_version=motor.version)
        mass = {}
        for name, factory in factories.items():
            with factory() as session:
                mission, ids = _ids(session)
                mass[name] = candidate.evaluate(session, team_id=mission.team_id, mission=mission,
                                                ids=ids)["all_up_mass_g"]
        assert mass["copy"] == pytest.approx(mass["app"] + 4 * 100)  # four motors, each 100 g heavier
    finally:
        engine.dispose()


def test_preloaded_rows_give_the_same_key_as_loading_them(app: FastAPI, client: TestClient) -> None:
    """The compare view loads every entry's parts and the calibrations once (candidate.preload); the cache key it
    builds from them must be the key a lone evaluation builds from its own queries, or a change could be missed."""
    with app.state.sessionmaker() as session:
        mission, ids = _ids(session)
        loaded = candidate.preload(session, team_id=mission.team_id, candidates=[ids])
        alone = candidate._cache_key(session, team_id=mission.team_id, mission=mission, ids=ids)
        shared = candidate._cache_key(session, team_id=mission.team_id, mission=mission, ids=ids, preloaded=loaded)
        assert shared == alone
        assert loaded.calibrations  # the demo has active calibrations, so they are part of the key


def test_a_cached_evaluation_equals_a_fresh_one_and_belongs_to_its_caller(app: FastAPI, client: TestClient,
                                                                          monkeypatch: pytest.MonkeyPatch) -> None:
    """A hit (unpickled from the cache) holds exactly the numbers of a fresh evaluation, curves included, and is the
    caller's own copy: changing it (as with_scopes does) never changes what the next caller gets."""
    monkeypatch.setattr(candidate, "_cache", OrderedDict())
    with app.state.sessionmaker() as session:
        mission, ids = _ids(session)
        kw: dict[str, Any] = {"team_id": mission.team_id, "mission": mission, "ids": ids, "with_curves": True}
        first = candidate.evaluate(session, **kw)
        assert len(candidate._cache) == 1
        hit = candidate.evaluate(session, **kw)
        assert hit == first == candidate._evaluate(session, **kw)
        assert hit["curves"]["thrust_n"] and hit is not first
        hit["cruise"]["electrical_power_w"] = -1.0
        hit["curves"]["thrust_n"].clear()
        first["margins"].clear()
        again = candidate.evaluate(session, **kw)
        assert again["cruise"]["electrical_power_w"] > 0 and again["curves"]["thrust_n"] and again["margins"]
        assert again == candidate._evaluate(session, **kw)


def test_one_evaluation_serves_with_and_without_curves(app: FastAPI, client: TestClient,
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    """The snapshot of an added entry (no curves) and the compare view (curves) share one cached evaluation: the
    first call computes it with its curves, and either answer equals a fresh evaluation of its own kind exactly,
    key order included (the snapshot is stored as JSON)."""
    calls = []
    real = candidate._evaluate
    monkeypatch.setattr(candidate, "_evaluate", lambda *a, **k: calls.append(k["with_curves"]) or real(*a, **k))
    monkeypatch.setattr(candidate, "_cache", OrderedDict())
    with app.state.sessionmaker() as session:
        mission, ids = _ids(session)
        kw: dict[str, Any] = {"team_id": mission.team_id, "mission": mission, "ids": ids}
        plain = candidate.evaluate(session, **kw)
        drawn = candidate.evaluate(session, **kw, with_curves=True)
        assert calls == [True]
        assert "curves" not in plain and drawn["curves"]["discharge_time_min"]
        fresh_plain, fresh_drawn = real(session, **kw), real(session, **kw, with_curves=True)
        assert list(plain) == list(fresh_plain) and plain == fresh_plain
        assert list(drawn) == list(fresh_drawn) and drawn == fresh_drawn
        assert candidate.evaluate(session, **kw) == fresh_plain and calls == [True]


def test_one_preload_for_several_candidates_gives_each_its_own_key(app: FastAPI, client: TestClient) -> None:
    """The compare view digests each preloaded row once for all its entries: every entry's key is still the key it
    gets alone, and entries that differ in one part (or in the packs in parallel) get different keys."""
    with app.state.sessionmaker() as session:
        mission, ids = _ids(session)
        other_esc = session.scalars(select(PART_MODELS["escs"].id).where(PART_MODELS["escs"].part_number == "NS-E20")
                                    ).one()
        entries = [ids, replace(ids, esc_id=other_esc), replace(ids, packs_in_parallel=2), ids]
        loaded = candidate.preload(session, team_id=mission.team_id, candidates=entries)
        shared = [candidate._cache_key(session, team_id=mission.team_id, mission=mission, ids=e, preloaded=loaded)
                  for e in entries]
        alone = [candidate._cache_key(session, team_id=mission.team_id, mission=mission, ids=e) for e in entries]
        assert shared == alone
        assert len(set(shared)) == 3 and shared[0] == shared[3]
