"""JSON routes for fleet plans: start (202), status with result and trade-off curve, bill of materials."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query, Request, Response

from server import jobs
from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.schemas.fleet import FleetPlanCreate, FleetPlanStarted, FleetPlanStatus
from server.schemas.shortlists import ShortlistRead
from server.services import bom as bom_service
from server.services import fleet as fleet_service
from server.services import shortlists as shortlists_service

router = APIRouter(prefix="/fleet-plans", tags=["fleet plans"])


@router.post("", status_code=202, response_model=FleetPlanStarted)
def start_plan(
    caller: WriterDep, session: SessionDep, request: Request, data: FleetPlanCreate, response: Response
) -> dict[str, Any]:
    """Start a fleet plan over several missions; poll the returned id."""
    row = fleet_service.start(session, team_id=caller.team_id, user_id=caller.user_id, data=data)
    session.commit()
    jobs.submit(request.app.state, "fleet_plan", row.id, caller.team_id)
    response.headers["Location"] = f"/api/v1/fleet-plans/{row.id}"
    return {"id": row.id, "status": row.status}


@router.get("", response_model=list[FleetPlanStatus])
def list_plans(caller: CallerDep, session: SessionDep) -> list[dict[str, Any]]:
    """The team's fleet plans (newest first)."""
    return [fleet_service.status(p) for p in fleet_service.list_all(session, team_id=caller.team_id)]


@router.post("/{plan_id}/cancel", response_model=FleetPlanStatus)
def cancel_plan(caller: WriterDep, session: SessionDep, plan_id: IdPath) -> dict[str, Any]:
    """Ask a queued or running fleet plan to stop."""
    row = fleet_service.cancel(session, team_id=caller.team_id, plan_id=plan_id)
    session.commit()
    return fleet_service.status(row)


@router.get("/{plan_id}", response_model=FleetPlanStatus)
def read_plan(caller: CallerDep, session: SessionDep, plan_id: IdPath) -> dict[str, Any]:
    """Status, the optimal plan (objective, assignments, stocked part ids) and the trade-off curve."""
    return fleet_service.status(fleet_service.get(session, team_id=caller.team_id, plan_id=plan_id))


@router.get("/{plan_id}/bom.csv", response_class=Response, responses={200: {"content": {"text/csv": {}}}})
def plan_bom(
    caller: CallerDep,
    session: SessionDep,
    plan_id: IdPath,
    spares_percent: Annotated[
        float, Query(ge=0, le=200, description="Spares per line, % of the quantity (rounded up) [%]")
    ] = 0,
) -> Response:
    """Every part number the fleet needs, with quantities over each mission's airframes (propellers split into CW
    and CCW), spares and costs."""
    text = bom_service.fleet_csv(session, team_id=caller.team_id, plan_id=plan_id, spares_percent=spares_percent)
    return Response(
        text,
        media_type="text/csv; charset=utf-8",
        headers={"Content-Disposition": f'attachment; filename="fleet-plan-{plan_id}-bom.csv"'},
    )


@router.post("/{plan_id}/shortlists", status_code=201, response_model=list[ShortlistRead])
def plan_to_shortlists(caller: WriterDep, session: SessionDep, plan_id: IdPath) -> list[dict[str, Any]]:
    """Turn a finished plan into shortlists: one new shortlist per mission holding its assigned configuration."""
    created = fleet_service.to_shortlists(session, team_id=caller.team_id, user_id=caller.user_id, plan_id=plan_id)
    session.commit()
    return [shortlists_service.read(session, s) for s in created]
