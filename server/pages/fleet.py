"""Fleet plan pages: choose missions and weights, run with progress, assignments, stocked parts, trade-off."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import ValidationError

from server import jobs
from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import DomainError
from server.pages._render import PostedForm, error_lines, render
from server.schemas.fleet import FleetPlanCreate
from server.schemas.parts import KIND_LABELS
from server.services import bom as bom_service
from server.services import fleet as fleet_service
from server.services import missions as missions_service
from server.services import parts as parts_service

router = APIRouter(prefix="/fleet-plans")
KINDS = ("batteries", "escs", "motors", "propellers")


def _index(request: Request, session: Any, caller: Caller, status_code: int = 200, **extra: Any) -> HTMLResponse:
    ctx: dict[str, Any] = {"caller": caller, "nav": "fleet", "kinds": KINDS, "kind_labels": KIND_LABELS,
                           "missions": missions_service.list_missions(session, team_id=caller.team_id),
                           "plans": [fleet_service.status(p) for p in fleet_service.list_all(session,
                                                                                             team_id=caller.team_id)],
                           "errors": [], "values": {}}
    ctx.update(extra)
    return render(request, "pages/fleet_plans.html", ctx, status_code=status_code)


@router.get("", response_class=HTMLResponse)
def fleet_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _index(request, session, caller)


def build_request(values: dict[str, str]) -> dict[str, Any]:
    """Form fields → a FleetPlanCreate body (missions are the ticked ``use_<id>`` boxes)."""
    missions = []
    for key in values:
        if key.startswith("use_"):
            mid = key.removeprefix("use_")
            missions.append({"mission_id": mid, "weight": values.get(f"weight_{mid}") or 1,
                             "airframes": values.get(f"airframes_{mid}") or 1})
    return {"name": values.get("name") or "Fleet plan", "missions": missions,
            "one_battery": values.get("one_battery") == "1", "metric": values.get("metric", "cruise_energy"),
            "stocking_cost": values.get("stocking_cost") or 0,
            "candidates_per_mission": values.get("candidates_per_mission") or 300,
            "max_part_numbers": {k: values.get(f"max_{k}") or None for k in KINDS}}


@router.post("", response_class=HTMLResponse)
def start(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm) -> Response:
    try:
        data = FleetPlanCreate.model_validate(build_request(values))
        row = fleet_service.start(session, team_id=caller.team_id, user_id=caller.user_id, data=data)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        errors = error_lines(exc)
        return _index(request, session, caller, 422, errors=errors, values=values)
    jobs.submit(request.app.state, "fleet_plan", row.id, caller.team_id)
    return RedirectResponse(f"/fleet-plans/{row.id}", status_code=303)


def _names(session: Any, caller: Caller, plan: dict[str, Any]) -> dict[str, dict[int, Any]]:
    result = plan["result"] or {}
    ids: dict[str, set[int]] = {kind: set(result.get("stocked", {}).get(kind, [])) for kind in KINDS}
    for a in [*result.get("assignments", []), *(a for p in plan["tradeoff"] or [] for a in p["assignments"])]:
        for kind in KINDS:
            ids[kind].add(a[f"{bom_service.KIND_SINGULAR[kind]}_id"])
    return parts_service.by_ids(session, team_id=caller.team_id, ids=ids)


def _plan_context(session: Any, caller: Caller, plan_id: int) -> dict[str, Any]:
    doc = fleet_service.status(fleet_service.get(session, team_id=caller.team_id, plan_id=plan_id))
    return {"caller": caller, "nav": "fleet", "plan": doc, "kinds": KINDS, "announce": "",
            "parts": _names(session, caller, doc) if doc["status"] == "done" else {},
            "mission_names": {m["mission_id"]: m["name"] for m in doc["missions"]},
            "kind_labels": KIND_LABELS,
            "chart": {"axis": "fleet cruise energy [W × weight]" if doc["metric"] == "cruise_energy"
                      else "worst endurance margin [min]",
                      "points": [{"part_numbers": p["part_numbers"], "objective": p["objective"]}
                                 for p in (doc["tradeoff"] or [])]}}


@router.get("/{plan_id}", response_class=HTMLResponse)
def plan_page(request: Request, caller: PageCaller, session: SessionDep, plan_id: IdPath) -> HTMLResponse:
    return render(request, "pages/fleet_plan.html", _plan_context(session, caller, plan_id), block="job")


@router.get("/{plan_id}/progress", response_class=HTMLResponse)
def plan_progress(request: Request, caller: PageCaller, session: SessionDep, plan_id: IdPath) -> HTMLResponse:
    """The polled progress while the plan runs; once it ends, the whole job block (retargeted), announced."""
    ctx = _plan_context(session, caller, plan_id)
    plan = ctx["plan"]
    if plan["status"] in ("queued", "running"):
        return render(request, "pages/fleet_plan.html", ctx, block="progress")
    result = plan["result"] or {}
    ctx["announce"] = (f"Fleet plan finished: {result.get('part_numbers')} part numbers."
                       if plan["status"] == "done" and result.get("status") != "infeasible"
                       else f"Fleet plan {plan['status']}{': no shared plan exists' if result else ''}.")
    return render(request, "pages/fleet_plan.html", ctx, block="job",
                  headers={"HX-Retarget": "#fleet-job", "HX-Reswap": "outerHTML"})


@router.post("/{plan_id}/shortlist", response_class=HTMLResponse)
def to_shortlists(caller: PageWriter, session: SessionDep, plan_id: IdPath) -> Response:
    """One shortlist per mission holding the configuration the plan assigns to it."""
    fleet_service.to_shortlists(session, team_id=caller.team_id, user_id=caller.user_id, plan_id=plan_id)
    session.commit()
    return RedirectResponse("/shortlists", status_code=303)
