"""Airframes and missions: list, create, update (optimistic version), delete."""

from __future__ import annotations

from typing import Any, TypeVar

from pydantic import BaseModel
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server.errors import Conflict, FieldError, InvalidInput, NotFound, check_version
from server.models import Airframe, Mission, Shortlist
from server.schemas.missions import AirframeCreate, MissionCreate
from server.services._sorting import naturally
from server.services._validation import validate

Row = TypeVar("Row", Airframe, Mission)


def _get(session: Session, model: type[Row], *, team_id: int, row_id: int, label: str) -> Row:
    row = session.scalar(select(model).where(model.id == row_id, model.team_id == team_id))
    if row is None:
        raise NotFound(f"No {label} with id {row_id}")
    return row


def get_airframe(session: Session, *, team_id: int, airframe_id: int) -> Airframe:
    return _get(session, Airframe, team_id=team_id, row_id=airframe_id, label="airframe")


def get_mission(session: Session, *, team_id: int, mission_id: int) -> Mission:
    return _get(session, Mission, team_id=team_id, row_id=mission_id, label="mission")


def list_airframes(session: Session, *, team_id: int) -> list[Airframe]:
    return naturally(session.scalars(select(Airframe).where(Airframe.team_id == team_id).order_by(Airframe.id)),
                     lambda a: a.name)


def list_missions(session: Session, *, team_id: int, airframe_id: int | None = None) -> list[Mission]:
    stmt = select(Mission).where(Mission.team_id == team_id)
    if airframe_id is not None:
        stmt = stmt.where(Mission.airframe_id == airframe_id)
    return naturally(session.scalars(stmt.order_by(Mission.id)), lambda m: m.name)


def _check_airframe(session: Session, *, team_id: int, airframe_id: int) -> None:
    found = session.scalar(select(Airframe.id).where(Airframe.id == airframe_id, Airframe.team_id == team_id))
    if found is None:
        raise InvalidInput("Unknown airframe", [FieldError("airframe_id", f"no airframe with id {airframe_id}")])


def _apply(row: Airframe | Mission, data: BaseModel) -> None:
    for name, value in data.model_dump().items():
        setattr(row, name, value)


def create_airframe(session: Session, *, team_id: int, data: AirframeCreate) -> Airframe:
    row = Airframe(team_id=team_id)
    _apply(row, data)
    session.add(row)
    session.flush()
    return row


def create_mission(session: Session, *, team_id: int, data: MissionCreate) -> Mission:
    _check_airframe(session, team_id=team_id, airframe_id=data.airframe_id)
    row = Mission(team_id=team_id)
    _apply(row, data)
    session.add(row)
    session.flush()
    return row


def update_airframe(
    session: Session, *, team_id: int, airframe_id: int, changes: dict[str, Any], expected_version: int | None
) -> Airframe:
    row = get_airframe(session, team_id=team_id, airframe_id=airframe_id)
    check_version(row.version, expected_version, "airframe")
    merged = {name: getattr(row, name) for name in AirframeCreate.model_fields} | changes
    _apply(row, validate(AirframeCreate, merged, what="airframe"))
    session.flush()
    return row


def update_mission(
    session: Session, *, team_id: int, mission_id: int, changes: dict[str, Any], expected_version: int | None
) -> Mission:
    row = get_mission(session, team_id=team_id, mission_id=mission_id)
    check_version(row.version, expected_version, "mission")
    merged = {name: getattr(row, name) for name in MissionCreate.model_fields} | changes
    data = validate(MissionCreate, merged, what="mission")
    _check_airframe(session, team_id=team_id, airframe_id=data.airframe_id)
    _apply(row, data)
    session.flush()
    return row


def delete_airframe(session: Session, *, team_id: int, airframe_id: int) -> None:
    row = get_airframe(session, team_id=team_id, airframe_id=airframe_id)
    used = session.scalar(select(func.count()).select_from(Mission).where(Mission.airframe_id == row.id)) or 0
    if used:
        raise Conflict(f"This airframe has {used} mission(s); delete them first")
    session.delete(row)
    session.flush()


def delete_mission(session: Session, *, team_id: int, mission_id: int) -> None:
    """Delete a mission no shortlist is for (rankings keep their own snapshot of it)."""
    row = get_mission(session, team_id=team_id, mission_id=mission_id)
    used = session.scalar(select(func.count()).select_from(Shortlist).where(Shortlist.mission_id == row.id)) or 0
    if used:
        raise Conflict(f"{used} shortlist(s) are for this mission; delete them first")
    session.delete(row)
    session.flush()
