"""Why this verdict: every rejection reason of the ranking for one power system and one mission.

The candidate goes through the ranking's own inputs and engine (:func:`ranking_inputs.snapshot` →
:func:`ranking_inputs.engine_inputs` → :func:`server.selection.explain.explain`), so the reason it is counted
under and every number are the ranking's. Given a ranking, its stored snapshot is used (the parts and
calibrations as they were when it ran); otherwise the parts as they are now.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput, NotFound
from server.selection.explain import explain as explain_candidate
from server.services import missions as missions_service
from server.services import parts as parts_service
from server.services import ranking_bands
from server.services import rankings as rankings_service
from server.services.ranking_inputs import engine_inputs, snapshot

KIND_OF = {"battery_id": "batteries", "esc_id": "escs", "motor_id": "motors", "propeller_id": "propellers"}


def explain(session: Session, *, team_id: int, mission_id: int | None, battery_id: int, esc_id: int,
            motor_id: int, propeller_id: int, packs_in_parallel: int = 1,
            ranking_id: int | None = None) -> dict[str, Any]:
    """Every check of the ranking for the candidate, its first failed reason, its numbers and their sources."""
    ids = {"battery_id": battery_id, "esc_id": esc_id, "motor_id": motor_id, "propeller_id": propeller_id}
    if ranking_id is not None:
        ranking = rankings_service.get(session, team_id=team_id, ranking_id=ranking_id)
        if mission_id is not None and ranking.mission_id != mission_id:
            raise InvalidInput("Mission and ranking differ", [FieldError(
                "mission_id", f"ranking {ranking_id} ranks mission {ranking.mission_id}")])
        snap = dict(ranking.inputs)
        known = {kind: {p["id"] for p in snap["parts"][kind]} for kind in KIND_OF.values()}
        missing = [FieldError(field, f"part {ids[field]} was not in ranking {ranking_id}'s library")
                   for field, kind in KIND_OF.items() if ids[field] not in known[kind]]
        if missing:
            raise InvalidInput("Not in the ranking", missing)
        snap["parts"] = {kind: [p for p in rows if p["id"] == ids[_field(kind)]]
                         for kind, rows in snap["parts"].items()}
        mission_id = ranking.mission_id
    else:
        if mission_id is None:
            raise InvalidInput("No mission", [FieldError("mission_id", "give a mission (or a ranking)")])
        try:
            mission = missions_service.get_mission(session, team_id=team_id, mission_id=mission_id)
        except NotFound:
            raise InvalidInput("Unknown mission", [FieldError("mission_id", f"no mission with id {mission_id}")]) \
                from None
        errors = []
        for field, kind in KIND_OF.items():
            try:
                parts_service.get_part(session, team_id=team_id, kind=kind, part_id=ids[field])
            except NotFound as exc:
                errors.append(FieldError(field, exc.detail))
        if errors:
            raise InvalidInput("Unknown parts", errors)
        snap = snapshot(session, team_id=team_id, mission=mission, only={k: [ids[_field(k)]] for k in KIND_OF.values()})
    library, spec = engine_inputs(snap)
    if not 1 <= packs_in_parallel <= spec.max_packs_in_parallel:
        raise InvalidInput("Bad pack configuration", [FieldError(
            "packs_in_parallel", f"this airframe flies 1 to {spec.max_packs_in_parallel} packs in parallel")])
    verdict = explain_candidate(library, spec, pack=0, packs_in_parallel=packs_in_parallel, esc=0, motor=0, prop=0)
    row = verdict.row.as_dict() if verdict.row is not None else None
    if row is not None and verdict.row is not None and ranking_bands.has_uncertainty(snap):
        (b,) = ranking_bands.rows_bands(snap, [verdict.row])
        ranking_bands.merge(row, b)
    return {
        "mission_id": mission_id, "ranking_id": ranking_id, **ids, "packs_in_parallel": packs_in_parallel,
        "feasible": verdict.feasible, "first_failed": verdict.first_failed,
        "checks": [c.as_dict() for c in verdict.checks],
        "cruise": row["cruise"] if row else None, "full_throttle": row["full_throttle"] if row else None,
        "endurance_min": row["endurance_min"] if row else None,
        "all_up_mass_g": row["all_up_mass_g"] if row else None, "cost": row["cost"] if row else None,
        "margins": row["margins"] if row else None,
        "profile": row.get("profile") if row else None,
        "endurance_min_band": row.get("endurance_min_band") if row else None,
        "feasible_share": row.get("feasible_share") if row else None,
        "assumed_share": row.get("assumed_share") if row else None,
        "assumed": row.get("assumed") if row else None,
        "sources": {kind: rows[0].get("sources", {}) for kind, rows in snap["parts"].items() if rows},
        "notes": verdict.notes,
        "flight": verdict.flight,
    }


def _field(kind: str) -> str:
    return next(f for f, k in KIND_OF.items() if k == kind)
