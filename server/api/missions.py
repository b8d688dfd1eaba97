"""JSON routes for airframes and missions."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Header, Query, Response

from server.api._http import parse_if_match, set_etag
from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.models import Airframe, Mission
from server.schemas.missions import (
    AirframeCreate,
    AirframeRead,
    AirframeUpdate,
    MissionCreate,
    MissionRead,
    MissionUpdate,
)
from server.services import missions as missions_service

router = APIRouter(tags=["airframes and missions"])
IfMatch = Annotated[str | None, Header(max_length=40)]
VersionQuery = Annotated[int | None, Query(ge=1, le=2**31, description="Alternative to If-Match")]


@router.get("/airframes", response_model=list[AirframeRead])
def list_airframes(caller: CallerDep, session: SessionDep) -> list[Airframe]:
    """List the team's airframes."""
    return missions_service.list_airframes(session, team_id=caller.team_id)


@router.post("/airframes", status_code=201, response_model=AirframeRead)
def create_airframe(caller: WriterDep, session: SessionDep, data: AirframeCreate, response: Response) -> Airframe:
    """Create an airframe."""
    row = missions_service.create_airframe(session, team_id=caller.team_id, data=data)
    session.commit()
    set_etag(response, row.version)
    return row


@router.get("/airframes/{airframe_id}", response_model=AirframeRead)
def read_airframe(caller: CallerDep, session: SessionDep, airframe_id: IdPath, response: Response) -> Airframe:
    """Read one airframe."""
    row = missions_service.get_airframe(session, team_id=caller.team_id, airframe_id=airframe_id)
    set_etag(response, row.version)
    return row


@router.patch("/airframes/{airframe_id}", response_model=AirframeRead)
def update_airframe(
    caller: WriterDep,
    session: SessionDep,
    airframe_id: IdPath,
    response: Response,
    changes: Annotated[AirframeUpdate, Body()],
    if_match: IfMatch = None,
    version: VersionQuery = None,
) -> Airframe:
    """Update an airframe (If-Match: its version)."""
    row = missions_service.update_airframe(
        session,
        team_id=caller.team_id,
        airframe_id=airframe_id,
        changes=changes.model_dump(exclude_unset=True),
        expected_version=parse_if_match(if_match, version),
    )
    session.commit()
    set_etag(response, row.version)
    return row


@router.delete("/airframes/{airframe_id}", status_code=204)
def delete_airframe(caller: WriterDep, session: SessionDep, airframe_id: IdPath) -> Response:
    """Delete an airframe that has no missions."""
    missions_service.delete_airframe(session, team_id=caller.team_id, airframe_id=airframe_id)
    session.commit()
    return Response(status_code=204)


@router.get("/missions", response_model=list[MissionRead])
def list_missions(
    caller: CallerDep,
    session: SessionDep,
    airframe_id: Annotated[int | None, Query(ge=1, le=2**63 - 1)] = None,
) -> list[Mission]:
    """List the team's missions (optionally of one airframe)."""
    return missions_service.list_missions(session, team_id=caller.team_id, airframe_id=airframe_id)


@router.post("/missions", status_code=201, response_model=MissionRead)
def create_mission(caller: WriterDep, session: SessionDep, data: MissionCreate, response: Response) -> Mission:
    """Create a mission; limits not given take their common-practice defaults."""
    row = missions_service.create_mission(session, team_id=caller.team_id, data=data)
    session.commit()
    set_etag(response, row.version)
    return row


@router.get("/missions/{mission_id}", response_model=MissionRead)
def read_mission(caller: CallerDep, session: SessionDep, mission_id: IdPath, response: Response) -> Mission:
    """Read one mission."""
    row = missions_service.get_mission(session, team_id=caller.team_id, mission_id=mission_id)
    set_etag(response, row.version)
    return row


@router.patch("/missions/{mission_id}", response_model=MissionRead)
def update_mission(
    caller: WriterDep,
    session: SessionDep,
    mission_id: IdPath,
    response: Response,
    changes: Annotated[MissionUpdate, Body()],
    if_match: IfMatch = None,
    version: VersionQuery = None,
) -> Mission:
    """Update a mission (If-Match: its version)."""
    row = missions_service.update_mission(
        session,
        team_id=caller.team_id,
        mission_id=mission_id,
        changes=changes.model_dump(exclude_unset=True),
        expected_version=parse_if_match(if_match, version),
    )
    session.commit()
    set_etag(response, row.version)
    return row


@router.delete("/missions/{mission_id}", status_code=204)
def delete_mission(caller: WriterDep, session: SessionDep, mission_id: IdPath) -> Response:
    """Delete a mission."""
    missions_service.delete_mission(session, team_id=caller.team_id, mission_id=mission_id)
    session.commit()
    return Response(status_code=204)
