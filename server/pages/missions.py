"""Airframes & missions page: list, add and edit (forms validated by the same schemas as the API)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import BaseModel, ValidationError

from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import InvalidInput
from server.pages._edit import edit_conflict, expected_version, save_edit
from server.pages._forms import form_fields, form_to_data, unplaced, values_of
from server.pages._render import PostedForm, render
from server.schemas.missions import AirframeCreate, MissionCreate
from server.services import missions as missions_service
from server.services._validation import field_errors

router = APIRouter()
AIRFRAME_FIELDS = form_fields(AirframeCreate)
MISSION_FIELDS = [f for f in form_fields(MissionCreate) if f.name != "airframe_id"]


def _page(request: Request, session: Any, caller: Caller, status_code: int = 200, **extra: Any) -> HTMLResponse:
    ctx: dict[str, Any] = {
        "caller": caller,
        "nav": "missions",
        "airframes": missions_service.list_airframes(session, team_id=caller.team_id),
        "missions": missions_service.list_missions(session, team_id=caller.team_id),
        "airframe_fields": AIRFRAME_FIELDS,
        "mission_fields": MISSION_FIELDS,
        "airframe_values": {},
        "airframe_errors": {},
        "mission_values": {"kind": "hover"},
        "mission_errors": {},
        "message": "",
    }
    ctx.update(extra)
    return render(request, "pages/missions.html", ctx, status_code=status_code)


def _validate(schema: type[BaseModel], fields: Any, values: dict[str, str]) -> tuple[Any, dict[str, str]]:
    data, errors = form_to_data(fields, values)
    if "airframe_id" in values:
        data["airframe_id"] = values["airframe_id"]
    try:
        model = schema.model_validate(data)
    except ValidationError as exc:
        for err in field_errors(exc):
            errors.setdefault(err.field, err.message)
        return None, errors
    return model, errors


@router.get("/missions", response_class=HTMLResponse)
def missions_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _page(request, session, caller)


@router.post("/airframes", response_class=HTMLResponse)
def add_airframe(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm) -> Response:
    model, errors = _validate(AirframeCreate, AIRFRAME_FIELDS, values)
    if model is None:
        return _page(
            request,
            session,
            caller,
            422,
            airframe_values=values,
            airframe_errors=errors,
            message=" ".join(["Airframe not saved: fix the fields marked below.", *unplaced(errors, AIRFRAME_FIELDS)]),
        )
    missions_service.create_airframe(session, team_id=caller.team_id, data=model)
    session.commit()
    return RedirectResponse("/missions", status_code=303)


@router.post("/missions", response_class=HTMLResponse)
def add_mission(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm) -> Response:
    model, errors = _validate(MissionCreate, MISSION_FIELDS, values)
    if model is not None:
        try:
            missions_service.create_mission(session, team_id=caller.team_id, data=model)
            session.commit()
            return RedirectResponse("/missions", status_code=303)
        except InvalidInput as exc:
            session.rollback()
            errors = {e.field: e.message for e in exc.errors}
    return _page(
        request,
        session,
        caller,
        422,
        mission_values=values,
        mission_errors=errors,
        message=" ".join(["Mission not saved: fix the fields marked below.",
                          *unplaced(errors, MISSION_FIELDS, "airframe_id")]),
    )


@router.get("/missions/{mission_id}/edit", response_class=HTMLResponse)
def edit_mission_page(request: Request, caller: PageCaller, session: SessionDep, mission_id: IdPath) -> HTMLResponse:
    mission = missions_service.get_mission(session, team_id=caller.team_id, mission_id=mission_id)
    values = values_of(mission, MISSION_FIELDS) | {"airframe_id": str(mission.airframe_id)}
    return render(
        request,
        "pages/mission_edit.html",
        {
            "caller": caller,
            "nav": "missions",
            "mission": mission,
            "fields": MISSION_FIELDS,
            "values": values,
            "errors": {},
            "message": "",
            "airframes": missions_service.list_airframes(session, team_id=caller.team_id),
        },
    )


@router.post("/missions/{mission_id}", response_class=HTMLResponse)
def update_mission(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm,
                   mission_id: IdPath) -> Response:
    data, errors = form_to_data(MISSION_FIELDS, values)
    data["airframe_id"] = values.get("airframe_id")
    outcome = save_edit(session, errors, lambda: missions_service.update_mission(
        session, team_id=caller.team_id, mission_id=mission_id, changes=data,
        expected_version=expected_version(values)))
    if outcome is None:
        return RedirectResponse("/missions", status_code=303)
    mission = missions_service.get_mission(session, team_id=caller.team_id, mission_id=mission_id)
    return render(
        request,
        "pages/mission_edit.html",
        {
            "caller": caller,
            "nav": "missions",
            "mission": mission,
            "fields": MISSION_FIELDS,
            "values": values,
            "errors": outcome.errors,
            "message": outcome.message or " ".join(["Not saved: fix the fields marked below.",
                                                    *unplaced(outcome.errors, MISSION_FIELDS, "airframe_id")]),
            "conflict": edit_conflict(MISSION_FIELDS, values, mission, ("airframe_id",)) if outcome.conflict else None,
            "airframes": missions_service.list_airframes(session, team_id=caller.team_id),
        },
        status_code=outcome.status,
    )


@router.get("/airframes/{airframe_id}/edit", response_class=HTMLResponse)
def edit_airframe_page(request: Request, caller: PageCaller, session: SessionDep, airframe_id: IdPath) -> HTMLResponse:
    airframe = missions_service.get_airframe(session, team_id=caller.team_id, airframe_id=airframe_id)
    return render(request, "pages/airframe_edit.html", {
        "caller": caller, "nav": "missions", "airframe": airframe, "fields": AIRFRAME_FIELDS,
        "values": values_of(airframe, AIRFRAME_FIELDS), "errors": {}, "message": "",
    })


@router.post("/airframes/{airframe_id}", response_class=HTMLResponse)
def update_airframe(
    request: Request, caller: PageWriter, session: SessionDep, values: PostedForm, airframe_id: IdPath
) -> Response:
    data, errors = form_to_data(AIRFRAME_FIELDS, values)
    outcome = save_edit(session, errors, lambda: missions_service.update_airframe(
        session, team_id=caller.team_id, airframe_id=airframe_id, changes=data,
        expected_version=expected_version(values)))
    if outcome is None:
        return RedirectResponse("/missions", status_code=303)
    airframe = missions_service.get_airframe(session, team_id=caller.team_id, airframe_id=airframe_id)
    return render(request, "pages/airframe_edit.html", {
        "caller": caller, "nav": "missions", "airframe": airframe, "fields": AIRFRAME_FIELDS, "values": values,
        "errors": outcome.errors, "message": outcome.message or "Not saved: fix the fields marked below.",
        "conflict": edit_conflict(AIRFRAME_FIELDS, values, airframe) if outcome.conflict else None,
    }, status_code=outcome.status)
