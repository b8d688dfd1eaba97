"""Why this verdict: one power system against every limit of a mission, as the ranking decides it.

Reached from each ranking row ("why"), from each rejection count's examples, and from the "why not this one?"
form on a ranking page (or on its own, for any mission). The numbers come from :mod:`server.services.explain`,
which runs the ranking's own engine on the ranking's snapshot.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from server.deps import PageCaller, SessionDep
from server.errors import DomainError
from server.pages._render import error_lines, render
from server.services import explain as explain_service
from server.services import missions as missions_service
from server.services import parts as parts_service
from server.services import rankings as rankings_service
from server.services._sorting import naturally

router = APIRouter()
FIELDS = ("battery_id", "esc_id", "motor_id", "propeller_id")
KINDS = {"battery_id": "batteries", "esc_id": "escs", "motor_id": "motors", "propeller_id": "propellers"}
LABELS = {"battery_id": "Battery pack", "esc_id": "ESC", "motor_id": "Motor", "propeller_id": "Propeller"}


def _int(value: str | None) -> int | None:
    try:
        number = int(value) if value else None
    except ValueError:
        return None
    return number if number is not None and 1 <= number < 2**63 else None


def _options(session: Any, team_id: int, ranking: Any) -> dict[str, list[dict[str, Any]]]:
    """The parts to choose from: the ranking's library when there is one, else the team's active parts."""
    if ranking is not None:
        return {field: naturally(ranking.inputs["parts"][kind], lambda p: p["name"])
                for field, kind in KINDS.items()}
    out = {}
    for field, kind in KINDS.items():
        rows, _ = parts_service.list_parts(session, team_id=team_id, kind=kind, page_size=5000)
        out[field] = [{"id": p.id, "name": p.name, "part_number": p.part_number} for p in rows]
    return out


def _kind(session: Any, team_id: int, ranking: Any, mission_id: int | None) -> str:
    """The mission's kind (hover or cruise), for the words of the checks."""
    if ranking is not None:
        return str(ranking.inputs["mission"]["kind"])
    try:
        return missions_service.get_mission(session, team_id=team_id, mission_id=mission_id).kind \
            if mission_id is not None else "hover"
    except DomainError:
        return "hover"


@router.get("/explain", response_class=HTMLResponse)
def explain_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    q = dict(request.query_params)
    ranking_id, mission_id = _int(q.get("ranking_id")), _int(q.get("mission_id"))
    ranking = None
    errors: list[str] = []
    if ranking_id is not None:
        try:
            ranking = rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id)
        except DomainError as exc:
            errors += error_lines(exc)
    ids = {f: _int(q.get(f)) for f in FIELDS}
    packs = _int(q.get("packs_in_parallel")) or 1
    result = None
    if all(ids.values()) and (ranking is not None or mission_id is not None):
        try:
            result = explain_service.explain(
                session, team_id=caller.team_id, mission_id=None if ranking is not None else mission_id,
                ranking_id=ranking.id if ranking is not None else None, packs_in_parallel=packs,
                **{f: int(v) for f, v in ids.items() if v is not None})
        except DomainError as exc:
            errors += error_lines(exc)
    elif any(q.get(f) for f in FIELDS):
        errors.append("Choose a pack, an ESC, a motor and a propeller" + ("" if ranking or mission_id else
                                                                          ", and a mission"))
    names = {field: {p["id"]: p for p in opts} for field, opts in _options(session, caller.team_id, ranking).items()}
    ctx: dict[str, Any] = {
        "caller": caller, "nav": "rankings", "ranking": ranking, "mission_id": mission_id, "values": q,
        "options": {f: list(v.values()) for f, v in names.items()}, "names": names, "labels": LABELS,
        "missions": missions_service.list_missions(session, team_id=caller.team_id), "result": result,
        "errors": errors, "reason_labels": rankings_service.reason_text(_kind(session, caller.team_id, ranking,
                                                                               mission_id)), "packs": packs,
    }
    return render(request, "pages/explain.html", ctx, status_code=422 if errors else 200)
