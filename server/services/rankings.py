"""Ranking jobs: start (snapshot + queue), run (engine, progress, cancel), read status, results and Pareto set."""

from __future__ import annotations

import copy
import logging
import time
from datetime import UTC, datetime
from typing import Any

from sqlalchemy import Select, func, select, update
from sqlalchemy import delete as sql_delete
from sqlalchemy.orm import Session, sessionmaker

from server.errors import Conflict, FieldError, InvalidInput, NotFound
from server.jobs import JobContext, request_cancel
from server.models import Ranking, RankingResult, RankingShard
from server.selection import ENGINE_VERSION, OBJECTIVES, CandidateRow, constraints, rank
from server.services import missions as missions_service
from server.services import ranking_bands, ranking_shards
from server.services.ranking_inputs import snapshot
from server.services.scopes import with_scopes

log = logging.getLogger("liftmatch.rankings")
REASON_TEXT = constraints.REASON_TEXT
"""A plain-language line per rejection reason, in the engine's order."""


POINT_WORDS = {"hover": "hover", "cruise": "cruise", "forward_flight": "forward-flight"}
"""What a mission kind calls its operating point (the checks, the objective, the compare group)."""


def point_word(kind: str) -> str:
    """The mission's point in words: hover, cruise or forward-flight."""
    return POINT_WORDS.get(kind, "hover")


def reason_text(kind: str) -> dict[str, str]:
    """:data:`REASON_TEXT` in the mission's own words: a hover mission's point is the hover point."""
    point = point_word(kind)
    return {k: v.replace("cruise thrust", f"{point} thrust").replace("cruise duty", f"{point} duty")
            for k, v in REASON_TEXT.items()}
SORT_COLUMNS = {
    "rank": RankingResult.rank,
    "all_up_mass_g": RankingResult.all_up_mass_g,
    "cruise_duty": RankingResult.cruise_duty,
    "cruise_power_w": RankingResult.cruise_power_w,
    "specific_thrust_g_per_w": RankingResult.specific_thrust_g_per_w,
    "thrust_to_weight": RankingResult.thrust_to_weight,
    "endurance_min": RankingResult.endurance_min,
    "esc_current_a": RankingResult.esc_current_a,
    "cost": RankingResult.cost,
    "cells_series": RankingResult.cells_series,
}


def start(
    session: Session, *, team_id: int, user_id: int | None, mission_id: int, objective: str, top_n: int
) -> Ranking:
    """Snapshot the inputs and store a queued ranking (the caller submits :func:`run` to a worker)."""
    if objective not in OBJECTIVES:
        raise InvalidInput("Unknown objective", [FieldError("objective", f"must be one of {', '.join(OBJECTIVES)}")])
    try:
        mission = missions_service.get_mission(session, team_id=team_id, mission_id=mission_id)
    except NotFound:
        raise InvalidInput("Unknown mission", [FieldError("mission_id", f"no mission with id {mission_id}")]) from None
    inputs = snapshot(session, team_id=team_id, mission=mission) | {"objective": objective, "top_n": top_n}
    row = Ranking(
        team_id=team_id,
        mission_id=mission.id,
        mission_name=mission.name,
        objective=objective,
        top_n=top_n,
        status="queued",
        inputs=inputs,
        engine_version=ENGINE_VERSION,
        created_by_id=user_id,
    )
    session.add(row)
    session.flush()
    return row


def _metric_columns(row: CandidateRow, escs: dict[int, float]) -> dict[str, Any]:
    return {
        "battery_id": int(row.battery_id),
        "esc_id": int(row.esc_id),
        "motor_id": int(row.motor_id),
        "propeller_id": int(row.propeller_id),
        "packs_in_parallel": row.packs_in_parallel,
        "cells_series": row.cells_series,
        "all_up_mass_g": row.all_up_mass_g,
        "cruise_duty": row.cruise["duty"],
        "cruise_power_w": row.cruise["electrical_power_w"],
        "specific_thrust_g_per_w": row.cruise["specific_thrust_g_per_w"],
        "thrust_to_weight": row.full_throttle["thrust_to_weight"],
        "endurance_min": row.endurance_min,
        "esc_current_a": escs[int(row.esc_id)],
        "cost": row.cost,
    }


def _candidate_key(row: CandidateRow) -> tuple[Any, ...]:
    """One power system: its four parts and how many packs fly in parallel."""
    return (row.battery_id, row.esc_id, row.motor_id, row.propeller_id, row.packs_in_parallel)


def run(factory: sessionmaker[Session], ranking_id: int) -> None:
    """Run a queued ranking now, in this thread (the CLI); the web queues it with ``server.jobs.submit``."""
    from server.jobs import execute

    execute(factory, "ranking", ranking_id, time_limit_s=float("inf"))


def run_job(factory: sessionmaker[Session], ranking_id: int, context: JobContext) -> None:
    """The job body: rank from the stored snapshot, then replace the stored results and mark it done at once."""
    with factory() as session:
        ranking = session.get(Ranking, ranking_id)
        assert ranking is not None
        inputs = ranking.inputs
    started = time.monotonic()
    library, mission, prepared, count = ranking_shards.shards_for(inputs, context.shard_combinations)
    if count > 1:
        outcome = ranking_shards.rank_sharded(factory, ranking, library, mission, prepared, count, context)
    else:
        outcome = rank(library, mission, objective=inputs["objective"], top_n=inputs["top_n"],
                       progress=context.progress, should_cancel=context.should_stop)
    if outcome.cancelled:
        context.check()
    escs = {int(i): float(c) for i, c in zip(library.escs.ids, library.escs.continuous_current_a, strict=True)}
    banded = time.monotonic()
    top = ranking_bands.with_bands(inputs, inputs["objective"], outcome.top)
    ranking_bands.mark_indistinguishable(top, inputs["objective"])
    keys = {_candidate_key(c) for c in outcome.top}
    extra = [c for c in outcome.pareto if _candidate_key(c) not in keys]
    pareto_only = ranking_bands.with_bands(inputs, inputs["objective"], extra,
                                           limit=max(0, ranking_bands.MAX_ROWS - len(top)))
    context.check()
    bands_s = time.monotonic() - banded
    stored: dict[tuple[Any, ...], RankingResult] = {}
    for candidate, metrics in zip(outcome.top, top, strict=True):
        stored[_candidate_key(candidate)] = RankingResult(
            ranking_id=ranking_id, rank=candidate.rank, pareto=False, metrics=metrics,
            **_metric_columns(candidate, escs))
    for candidate in outcome.pareto:
        key = _candidate_key(candidate)
        if key in stored:
            stored[key].pareto = True
    for candidate, metrics in zip(extra, pareto_only, strict=True):
        stored[_candidate_key(candidate)] = RankingResult(
            ranking_id=ranking_id, rank=None, pareto=True, metrics=metrics | {"rank": None,
                                                                              "indistinguishable_from_best": None},
            **_metric_columns(candidate, escs))
    with factory() as s, s.begin():
        s.execute(sql_delete(RankingResult).where(RankingResult.ranking_id == ranking_id))  # a rerun replaces them
        s.add_all(stored.values())
        s.execute(update(Ranking).where(Ranking.id == ranking_id, Ranking.status == "running").values(
            combinations=outcome.combinations, evaluated=outcome.evaluated, feasible=outcome.feasible,
            rejected=dict(outcome.rejected), rejected_examples=dict(outcome.rejected_examples), status="done",
            progress=1.0, finished_at=datetime.now(UTC),
            timings={**{k: float(v) for k, v in outcome.timings.items()}, "bands_s": bands_s,
                     "job_s": time.monotonic() - started}))


def get(session: Session, *, team_id: int, ranking_id: int) -> Ranking:
    row = session.scalar(select(Ranking).where(Ranking.id == ranking_id, Ranking.team_id == team_id))
    if row is None:
        raise NotFound(f"No ranking with id {ranking_id}")
    return row


def list_all(session: Session, *, team_id: int, mission_id: int | None = None, limit: int = 100) -> list[Ranking]:
    stmt = select(Ranking).where(Ranking.team_id == team_id)
    if mission_id is not None:
        stmt = stmt.where(Ranking.mission_id == mission_id)
    return list(session.scalars(stmt.order_by(Ranking.id.desc()).limit(limit)))


def cancel(session: Session, *, team_id: int, ranking_id: int) -> Ranking:
    row = get(session, team_id=team_id, ranking_id=ranking_id)
    request_cancel(row, "ranking")
    session.execute(update(RankingShard).where(RankingShard.ranking_id == row.id).values(cancel_requested=True))
    session.flush()
    return row


def delete(session: Session, *, team_id: int, ranking_id: int) -> None:
    row = get(session, team_id=team_id, ranking_id=ranking_id)
    if row.status in ("queued", "running"):
        raise Conflict("Cancel the ranking before deleting it")
    session.delete(row)
    session.flush()


def status(row: Ranking) -> dict[str, Any]:
    """The status document of the API (contract names) plus a few extras."""
    return {
        "id": row.id,
        "status": row.status,
        "progress": row.progress,
        "mission_id": row.mission_id,
        "mission_name": row.mission_name,
        "objective": row.objective,
        "top_n": row.top_n,
        "combinations": row.combinations,
        "evaluated": row.evaluated,
        "feasible": row.feasible,
        "rejected": {k: v for k, v in (row.rejected or {}).items() if v},
        "rejected_examples": row.rejected_examples or {},
        "engine_version": row.engine_version,
        "elapsed_s": _elapsed(row),
        "timings": row.timings or {},
        "error": row.error or None,
        "created_at": row.created_at,
        "finished_at": row.finished_at,
    }


def _elapsed(row: Ranking) -> float | None:
    if row.started_at is None:
        return None
    start = row.started_at if row.started_at.tzinfo else row.started_at.replace(tzinfo=UTC)
    end = row.finished_at or datetime.now(UTC)
    end = end if end.tzinfo else end.replace(tzinfo=UTC)
    return max(0.0, (end - start).total_seconds())


def _filtered(stmt: Select[Any], filters: dict[str, Any]) -> Select[Any]:
    if filters.get("cells") is not None:
        stmt = stmt.where(RankingResult.cells_series == filters["cells"])
    if filters.get("packs") is not None:
        stmt = stmt.where(RankingResult.packs_in_parallel == filters["packs"])
    if filters.get("esc_max_a") is not None:
        stmt = stmt.where(RankingResult.esc_current_a <= filters["esc_max_a"])
    if filters.get("min_thrust_to_weight") is not None:
        stmt = stmt.where(RankingResult.thrust_to_weight >= filters["min_thrust_to_weight"])
    if filters.get("max_mass_g") is not None:
        stmt = stmt.where(RankingResult.all_up_mass_g <= filters["max_mass_g"])
    return stmt


def results(
    session: Session,
    *,
    team_id: int,
    ranking_id: int,
    sort: str = "rank",
    page: int = 1,
    page_size: int = 50,
    filters: dict[str, Any] | None = None,
    pareto: bool = False,
) -> tuple[list[dict[str, Any]], int]:
    """Stored ranked rows (or the Pareto set), sorted by any stored metric, filtered, paged."""
    ranking = get(session, team_id=team_id, ranking_id=ranking_id)
    column = SORT_COLUMNS.get(sort.lstrip("-"))
    if column is None:
        raise InvalidInput("Unknown sort", [FieldError("sort", f"must be one of {', '.join(SORT_COLUMNS)}")])
    stmt = select(RankingResult).where(RankingResult.ranking_id == ranking.id)
    stmt = stmt.where(RankingResult.pareto.is_(True)) if pareto else stmt.where(RankingResult.rank.is_not(None))
    stmt = _filtered(stmt, filters or {})
    total = session.scalar(select(func.count()).select_from(stmt.subquery())) or 0
    order = column.desc() if sort.startswith("-") else column.asc()
    rows = session.scalars(
        stmt.order_by(order.nulls_last(), RankingResult.id).offset((page - 1) * page_size).limit(page_size)
    )
    return [with_scopes(copy.deepcopy(r.metrics) | {"rank": r.rank, "pareto": r.pareto, "result_id": r.id})
            for r in rows], int(total)
