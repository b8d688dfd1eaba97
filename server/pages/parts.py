"""Parts pages: one tab per kind, sortable table, add/edit forms with inline errors, archive, CSV."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Annotated, Any

from fastapi import APIRouter, File, Query, Request, UploadFile
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import ValidationError

from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import InvalidInput
from server.limits import UPLOAD_BODY_BYTES
from server.pages._edit import edit_conflict, expected_version, save_edit
from server.pages._forms import FormField, form_fields, form_to_data, values_of
from server.pages._render import PostedForm, render
from server.schemas.parts import CREATE_SCHEMAS, KIND_LABELS, KIND_WORDS
from server.services import parts as parts_service
from server.services._validation import field_errors
from server.uploads import read_upload

router = APIRouter(prefix="/parts")
KindPath = Annotated[str, "kind"]

# Columns shown in each kind's table (besides name, part number, maker, mass and cost).
SPEC_COLUMNS: dict[str, list[str]] = {
    "batteries": [
        "chemistry",
        "cells_series",
        "cells_parallel",
        "capacity_mah",
        "max_continuous_c",
        "cell_resistance_mohm",
    ],
    "escs": ["continuous_current_a", "burst_current_a", "min_cells", "max_cells", "pwm_frequency_khz"],
    "motors": ["kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a", "max_current_a", "max_cells"],
    "propellers": ["diameter_in", "pitch_in", "blades", "application", "ct", "cp"],
}
SHORT_HEADINGS = {
    "cells_series": "S",
    "cells_parallel": "P",
    "capacity_mah": "Capacity",
    "max_continuous_c": "Cont.",
    "cell_resistance_mohm": "Cell R",
    "continuous_current_a": "Cont.",
    "burst_current_a": "Burst",
    "min_cells": "Min cells",
    "max_cells": "Max cells",
    "pwm_frequency_khz": "PWM",
    "kv_rpm_per_v": "Kv",
    "winding_resistance_ohm": "R",
    "no_load_current_a": "I0",
    "max_current_a": "Max I",
    "diameter_in": "Diameter",
    "pitch_in": "Pitch",
    "blades": "Blades",
    "ct": "CT",
    "cp": "CP",
    "chemistry": "Chemistry",
    "application": "For",
}


@dataclass
class PartsPageContext:
    """What the parts page shows."""

    kind: str
    label: str
    labels: dict[str, tuple[str, str]]
    words: tuple[str, str, str]
    parts: list[Any]
    total: int
    q: str
    archived: str
    sort: str
    columns: list[tuple[str, str, str]]
    fields: list[FormField]
    values: dict[str, str] = field(default_factory=dict)
    errors: dict[str, str] = field(default_factory=dict)
    form_message: str = ""
    import_errors: list[str] = field(default_factory=list)
    import_message: str = ""
    caller: Caller | None = None
    nav: str = "parts"


def _kind(kind: str) -> str:
    parts_service.model_for(kind)  # raises NotFound for an unknown kind
    return kind


def _context(
    session: Any, caller: Caller, kind: str, q: str = "", archived: str = "false", sort: str = "name", **extra: Any
) -> PartsPageContext:
    items, total = parts_service.list_parts(
        session, team_id=caller.team_id, kind=kind, q=q or None, archived=archived, sort=sort, page_size=500
    )
    schema = CREATE_SCHEMAS[kind]
    fields = form_fields(schema)
    units = {f.name: f.unit for f in fields}
    columns = [(c, SHORT_HEADINGS.get(c, c), units.get(c, "")) for c in SPEC_COLUMNS[kind]]
    return PartsPageContext(
        kind=kind,
        label=KIND_LABELS[kind][1],
        labels=KIND_LABELS,
        words=KIND_WORDS[kind],
        parts=items,
        total=total,
        q=q,
        archived=archived,
        sort=sort,
        columns=columns,
        fields=fields,
        caller=caller,
        **extra,
    )


def _ctx(c: PartsPageContext) -> dict[str, Any]:
    return {"page": c, "caller": c.caller, "nav": c.nav}


@router.get("", response_class=HTMLResponse)
def parts_root() -> Response:
    return RedirectResponse("/parts/batteries", status_code=303)


@router.get("/{kind}", response_class=HTMLResponse)
def parts_page(
    request: Request,
    caller: PageCaller,
    session: SessionDep,
    kind: str,
    q: Annotated[str, Query(max_length=120)] = "",
    archived: Annotated[str, Query(pattern="^(false|true|all)$")] = "false",
    sort: Annotated[str, Query(max_length=64)] = "name",
) -> HTMLResponse:
    ctx = _context(session, caller, _kind(kind), q, archived, sort)
    return render(request, "pages/parts.html", _ctx(ctx), block="table")


def _validate_form(kind: str, values: dict[str, str]) -> tuple[Any, dict[str, str]]:
    fields = form_fields(CREATE_SCHEMAS[kind])
    data, errors = form_to_data(fields, values)
    try:
        model = CREATE_SCHEMAS[kind].model_validate(data)
    except ValidationError as exc:
        for err in field_errors(exc):
            errors.setdefault(err.field, err.message)
        return None, errors
    return (model if not errors else None), errors


@router.post("/{kind}", response_class=HTMLResponse)
def create_from_form(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm,
                     kind: str) -> Response:
    kind = _kind(kind)
    model, errors = _validate_form(kind, values)
    htmx = request.headers.get("hx-request") == "true"
    if model is None:
        ctx = _context(
            session, caller, kind, values=values, errors=errors, form_message="Not saved: fix the fields marked below."
        )
        return render(request, "pages/parts.html", _ctx(ctx), block="add_form", status_code=200 if htmx else 422)
    part = parts_service.create_part(session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, data=model)
    session.commit()
    if htmx:
        ctx = _context(session, caller, kind, form_message=f"Saved “{part.name}”.")
        return render(request, "pages/parts.html", _ctx(ctx), block="add_form", headers={"HX-Trigger": "parts-changed"})
    return RedirectResponse(f"/parts/{kind}", status_code=303)


@router.get("/{kind}/{part_id:int}/edit", response_class=HTMLResponse)
def edit_page(request: Request, caller: PageCaller, session: SessionDep, kind: str, part_id: IdPath) -> HTMLResponse:
    kind = _kind(kind)
    part = parts_service.get_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
    fields = form_fields(CREATE_SCHEMAS[kind])
    return render(
        request,
        "pages/part_edit.html",
        {
            "caller": caller,
            "nav": "parts",
            "kind": kind,
            "label": KIND_LABELS[kind][0],
            "label_many": KIND_LABELS[kind][1],
            "what": KIND_WORDS[kind][0],
            "part": part,
            "fields": fields,
            "values": values_of(part, fields),
            "errors": {},
            "message": "",
        },
    )


@router.post("/{kind}/{part_id:int}", response_class=HTMLResponse)
def update_from_form(
    request: Request, caller: PageWriter, session: SessionDep, form: PostedForm, kind: str, part_id: IdPath
) -> Response:
    kind = _kind(kind)
    parts_service.get_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)  # another team: 404
    fields = form_fields(CREATE_SCHEMAS[kind])
    data, errors = form_to_data(fields, form)
    outcome = save_edit(session, errors, lambda: parts_service.update_part(
        session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, part_id=part_id, changes=data,
        expected_version=expected_version(form)))
    if outcome is None:
        return RedirectResponse(f"/parts/{kind}", status_code=303)
    part = parts_service.get_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
    return render(
        request,
        "pages/part_edit.html",
        {
            "caller": caller,
            "nav": "parts",
            "kind": kind,
            "label": KIND_LABELS[kind][0],
            "label_many": KIND_LABELS[kind][1],
            "what": KIND_WORDS[kind][0],
            "part": part,
            "fields": fields,
            "values": form,
            "errors": outcome.errors,
            "message": outcome.message or "Not saved: fix the fields marked below.",
            "conflict": edit_conflict(fields, form, part) if outcome.conflict else None,
        },
        status_code=outcome.status,
    )


@router.post("/{kind}/{part_id:int}/archive", response_class=HTMLResponse)
def archive(request: Request, caller: PageWriter, session: SessionDep, form: PostedForm, kind: str,
            part_id: IdPath) -> Response:
    kind = _kind(kind)
    restore = form.get("restore") == "1"
    parts_service.set_archived(
        session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, part_id=part_id, archived=not restore
    )
    session.commit()
    if request.headers.get("hx-request") == "true":
        return Response(status_code=200, headers={"HX-Trigger": "parts-changed"})
    return RedirectResponse(f"/parts/{kind}", status_code=303)


@router.post("/{kind}/import", response_class=HTMLResponse, max_body_size=UPLOAD_BODY_BYTES)
def import_csv(
    request: Request,
    caller: PageWriter,
    session: SessionDep,
    kind: str,
    file: Annotated[UploadFile, File()],
) -> Response:
    kind = _kind(kind)
    raw = read_upload(file, parts_service.MAX_IMPORT_BYTES)
    try:
        created = parts_service.import_csv(session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, raw=raw)
        session.commit()
    except InvalidInput as exc:
        session.rollback()
        lines = [f"{'row ' + str(e.row) + ', ' if e.row else ''}{e.field}: {e.message}" for e in exc.errors]
        ctx = _context(session, caller, kind, import_errors=lines, import_message=exc.detail)
        return render(request, "pages/parts.html", _ctx(ctx), status_code=422)
    ctx = _context(session, caller, kind, import_message=f"Imported {len(created)} {KIND_WORDS[kind][2]}.")
    return render(request, "pages/parts.html", _ctx(ctx))


@router.get("/{kind}/export.csv")
def export_csv(caller: PageCaller, session: SessionDep, kind: str) -> Response:
    kind = _kind(kind)
    text = parts_service.export_csv(session, team_id=caller.team_id, kind=kind)
    return Response(
        text,
        media_type="text/csv; charset=utf-8",
        headers={"Content-Disposition": f'attachment; filename="{kind}.csv"'},
    )
