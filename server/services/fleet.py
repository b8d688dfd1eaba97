"""Fleet plans: rank each mission, then choose the fewest shared parts that still fly every mission well."""

from __future__ import annotations

import logging
import math
import time
from datetime import UTC, datetime
from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

from server.errors import FieldError, InvalidInput, NotFound
from server.jobs import JobContext, request_cancel
from server.models import FleetPlan, Shortlist
from server.schemas.fleet import FleetPlanCreate
from server.schemas.shortlists import EntryCreate
from server.selection import ENGINE_VERSION, rank
from server.selection.fleet import FleetOptions, MissionCandidates, optimise, tradeoff
from server.services import missions as missions_service
from server.services import shortlists
from server.services.ranking_inputs import engine_inputs, snapshot

log = logging.getLogger("liftmatch.fleet")
SOLVE_TIME_LIMIT_S = 20.0  # per MILP; a point that hits it says so (status "limit_reached" and its gap)
OBJECTIVE_FOR_METRIC = {"cruise_energy": "cruise_power", "endurance_margin": "endurance"}


def start(session: Session, *, team_id: int, user_id: int | None, data: FleetPlanCreate) -> FleetPlan:
    """Snapshot every mission (and the team's parts) and store a queued plan."""
    errors = []
    snaps = []
    for i, m in enumerate(data.missions):
        try:
            mission = missions_service.get_mission(session, team_id=team_id, mission_id=m.mission_id)
        except NotFound:
            errors.append(FieldError(f"missions.{i}.mission_id", f"no mission with id {m.mission_id}"))
            continue
        snaps.append(snapshot(session, team_id=team_id, mission=mission) | m.model_dump())
    if errors:
        raise InvalidInput("Unknown missions", errors)
    inputs = {"missions": snaps, **data.model_dump(exclude={"missions", "name"})}
    row = FleetPlan(
        team_id=team_id,
        name=data.name,
        status="queued",
        inputs=inputs,
        engine_version=ENGINE_VERSION,
        created_by_id=user_id,
    )
    session.add(row)
    session.flush()
    return row


def _done(factory: sessionmaker[Session], plan_id: int, **values: Any) -> None:
    with factory() as s, s.begin():
        s.execute(update(FleetPlan).where(FleetPlan.id == plan_id, FleetPlan.status == "running").values(
            status="done", progress=1.0, finished_at=datetime.now(UTC), **values))


def run(factory: sessionmaker[Session], plan_id: int) -> None:
    """Run a queued plan now, in this thread (the CLI); the web queues it with ``server.jobs.submit``."""
    from server.jobs import execute

    execute(factory, "fleet_plan", plan_id, time_limit_s=float("inf"))


def run_job(factory: sessionmaker[Session], plan_id: int, context: JobContext) -> None:
    """The job body: rank every mission from its snapshot, then optimise the plan and its trade-off curve.

    Cancel and the time limit are honoured inside each mission's ranking and between the steps.
    """
    with factory() as session:
        plan = session.get(FleetPlan, plan_id)
        assert plan is not None
        inputs = plan.inputs
    started = time.monotonic()
    candidates, names, timings = [], {}, {}
    rows: dict[Any, list[dict[str, Any]]] = {}
    count = len(inputs["missions"])
    for i, snap in enumerate(inputs["missions"]):
        library, mission = engine_inputs(snap)
        outcome = rank(library, mission, objective=OBJECTIVE_FOR_METRIC[inputs["metric"]],
                       top_n=inputs["candidates_per_mission"], should_cancel=context.should_stop)
        if outcome.cancelled:
            context.check()
        names[snap["mission"]["id"]] = snap["mission"]["name"]
        if not outcome.top:
            _done(factory, plan_id, tradeoff=[], result={
                "status": "infeasible", "objective": None, "assignments": [], "stocked": {},
                "infeasibility": {
                    "message": f"mission {snap['mission']['name']!r} has no feasible power system in the library; "
                               "see its ranking for the reasons",
                    "conflicting_missions": [snap["mission"]["id"]], "binding": ["mission"]}})
            return
        rows[snap["mission"]["id"]] = [r.as_dict() for r in outcome.top]
        candidates.append(MissionCandidates.from_rows(snap["mission"]["id"], snap["weight"],
                                                      rows[snap["mission"]["id"]],
                                                      min_endurance_min=snap["mission"]["min_endurance_min"]))
        context.progress(0.7 * (i + 1) / count)
    timings["rank_s"] = time.monotonic() - started
    options = FleetOptions(metric=inputs["metric"], one_battery=inputs["one_battery"],
                           max_part_numbers={k: v for k, v in inputs["max_part_numbers"].items() if v},
                           stocking_cost=inputs["stocking_cost"], time_limit_s=SOLVE_TIME_LIMIT_S)
    context.check()
    t = time.monotonic()
    result = optimise(candidates, options).as_dict()
    timings["optimise_s"] = time.monotonic() - t
    context.progress(0.8)
    context.check()
    t = time.monotonic()
    curve = [p.as_dict() for p in tradeoff(candidates, options)] if result["status"] != "infeasible" else []
    timings["tradeoff_s"] = time.monotonic() - t
    context.check()
    timings["job_s"] = time.monotonic() - started
    result["mission_names"] = {str(k): v for k, v in names.items()}
    for assignment in [*result["assignments"], *(a for point in curve for a in point["assignments"])]:
        assignment.update(_flight(rows[assignment["mission_id"]][assignment["candidate_index"]]))
    _done(factory, plan_id, result=_json(result), tradeoff=_json(curve), timings=timings)


def cancel(session: Session, *, team_id: int, plan_id: int) -> FleetPlan:
    """Ask a queued or running plan to stop (a queued one ends at once)."""
    row = get(session, team_id=team_id, plan_id=plan_id)
    request_cancel(row, "fleet plan")
    session.flush()
    return row


def _flight(row: dict[str, Any]) -> dict[str, Any]:
    """What an assignment's flight looks like (from its ranking row): endurance, headroom, mass, duty, cost."""
    return {
        "endurance_min": row["endurance_min"],
        "thrust_to_weight": row["full_throttle"]["thrust_to_weight"],
        "all_up_mass_g": row["all_up_mass_g"],
        "cruise_duty": row["cruise"]["duty"],
        "cost": row["cost"],
    }


def _json(value: Any) -> Any:
    """Plain JSON (NaN/inf become null; numpy scalars become numbers; keys become strings)."""
    if isinstance(value, dict):
        return {str(k): _json(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json(v) for v in value]
    if hasattr(value, "item"):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def get(session: Session, *, team_id: int, plan_id: int) -> FleetPlan:
    row = session.scalar(select(FleetPlan).where(FleetPlan.id == plan_id, FleetPlan.team_id == team_id))
    if row is None:
        raise NotFound(f"No fleet plan with id {plan_id}")
    return row


def list_all(session: Session, *, team_id: int) -> list[FleetPlan]:
    return list(
        session.scalars(select(FleetPlan).where(FleetPlan.team_id == team_id).order_by(FleetPlan.id.desc()).limit(100))
    )


def status(row: FleetPlan) -> dict[str, Any]:
    """The API document: status, result {objective, assignments, stocked}, trade-off [{part_numbers, objective}]."""
    return {
        "id": row.id,
        "name": row.name,
        "status": row.status,
        "progress": row.progress,
        "metric": row.inputs["metric"],
        "engine_version": row.engine_version,
        "result": row.result,
        "tradeoff": row.tradeoff,
        "timings": row.timings or {},
        "error": row.error or None,
        "missions": [
            {
                "mission_id": m["mission"]["id"],
                "name": m["mission"]["name"],
                "weight": m["weight"],
                "airframes": m["airframes"],
            }
            for m in row.inputs["missions"]
        ],
        "created_at": row.created_at,
        "finished_at": row.finished_at,
    }


def to_shortlists(session: Session, *, team_id: int, user_id: int | None, plan_id: int) -> list[Shortlist]:
    """One new shortlist per mission of a finished plan, holding the configuration the plan assigns to it
    (named "<plan>: <mission>", with the next free number when that name is taken)."""
    plan = get(session, team_id=team_id, plan_id=plan_id)
    if plan.status != "done" or not plan.result or not plan.result.get("assignments"):
        raise InvalidInput("No plan yet", [FieldError("status", f"the plan is {plan.status} without an assignment")])
    names = {m["mission"]["id"]: m["mission"]["name"] for m in plan.inputs["missions"]}
    created = []
    for a in plan.result["assignments"]:
        name = shortlists.free_name(session, team_id=team_id, base=f"{plan.name}: {names[a['mission_id']]}")
        shortlist = shortlists.create(session, team_id=team_id, user_id=user_id, name=name,
                                      mission_id=a["mission_id"])
        shortlists.add_entry(session, team_id=team_id, user_id=user_id, shortlist_id=shortlist.id, data=EntryCreate(
            battery_id=a["battery_id"], esc_id=a["esc_id"], motor_id=a["motor_id"], propeller_id=a["propeller_id"],
            packs_in_parallel=a["packs_in_parallel"], note=f"from fleet plan {plan.id} ({plan.name})"))
        created.append(shortlist)
    return created
