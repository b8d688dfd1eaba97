"""Shortlists pages: list and create; compare (one column per entry, curves, cautions), notes, order, BOM."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import ValidationError

from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import DomainError
from server.pages._render import PostedForm, error_lines, render
from server.schemas.parts import KIND_WORDS
from server.schemas.shortlists import EntryCreate, ShortlistCreate
from server.services import missions as missions_service
from server.services import parts as parts_service
from server.services import rankings as rankings_service
from server.services import shortlist_compare
from server.services import shortlists as shortlists_service

router = APIRouter(prefix="/shortlists")


def _list_page(request: Request, session: Any, caller: Caller, status_code: int = 200, **extra: Any) -> HTMLResponse:
    ctx = {"caller": caller, "nav": "shortlists",
           "shortlists": [shortlists_service.read(session, s)
                          for s in shortlists_service.list_all(session, team_id=caller.team_id)],
           "missions": missions_service.list_missions(session, team_id=caller.team_id), "errors": [], "values": {}}
    ctx.update(extra)
    return render(request, "pages/shortlists.html", ctx, status_code=status_code)


@router.get("", response_class=HTMLResponse)
def shortlists_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _list_page(request, session, caller)


@router.post("", response_class=HTMLResponse)
def create_shortlist(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm) -> Response:
    try:
        data = ShortlistCreate.model_validate(values)
        row = shortlists_service.create(session, team_id=caller.team_id, user_id=caller.user_id, name=data.name,
                                        mission_id=data.mission_id)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        return _list_page(request, session, caller, 422, errors=error_lines(exc), values=values)
    return RedirectResponse(f"/shortlists/{row.id}", status_code=303)


def cautions(compare: dict[str, Any]) -> list[str]:
    """Plain cautions for entries that run a part near or past what the mission allows (services.cautions)."""
    return [f"Candidate {i}: {c['text']}." for i, entry in enumerate(compare["entries"], start=1)
            for c in entry["cautions"]]


def _compare_page(request: Request, session: Any, caller: Caller, shortlist_id: int, status_code: int = 200,
                  **extra: Any) -> HTMLResponse:
    compare = shortlist_compare.compare(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    charts = {
        "required_thrust_n": compare["required_thrust_per_rotor_n"],
        "series": [{"label": f"{i + 1}: {e['parts']['motors']['name']} / {e['parts']['propellers']['name']}",
                    "curves": e["metrics"]["curves"],
                    "cruise": {"thrust_n": e["metrics"]["cruise"]["thrust_n"],
                               "electrical_power_w": e["metrics"]["cruise"]["electrical_power_per_rotor_w"],
                               "specific_thrust_g_per_w": e["metrics"]["cruise"]["specific_thrust_g_per_w"]},
                    "full_throttle": {"thrust_n": e["metrics"]["full_throttle"]["thrust_n"]}}
                   for i, e in enumerate(compare["entries"])],
    }
    options = parts_service.choices(session, team_id=caller.team_id,
                                    kinds=[kind for kind, _ in shortlist_compare.PART_KINDS])
    point = rankings_service.point_word(compare["mission"]["kind"]).capitalize()
    ctx = {"caller": caller, "nav": "shortlists", "shortlist": compare["shortlist"],
           "compare": compare, "charts": charts, "cautions": cautions(compare), "options": options, "errors": [],
           "changes": None, "values": {}, "point_label": point, "kind_words": {k: w[0] for k, w in KIND_WORDS.items()},
           "currencies": sorted({e["metrics"]["currency"] for e in compare["entries"]
                                 if e["metrics"]["cost"] is not None}),
           "change_labels": {"cruise.electrical_power_w": f"{point.lower()} power [W]",
                             "full_throttle.thrust_to_weight": "thrust-to-weight", "endurance_min": "endurance [min]",
                             "all_up_mass_g": "all-up mass [g]"}}
    ctx.update(extra)
    return render(request, "pages/shortlist_compare.html", ctx, status_code=status_code)


@router.get("/{shortlist_id}", response_class=HTMLResponse)
def compare_page(request: Request, caller: PageCaller, session: SessionDep, shortlist_id: IdPath) -> HTMLResponse:
    return _compare_page(request, session, caller, shortlist_id)


@router.post("/{shortlist_id}/entries", response_class=HTMLResponse)
def add_entry(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm,
              shortlist_id: IdPath) -> Response:
    try:
        data = EntryCreate.model_validate({k: v for k, v in values.items() if v != ""})
        shortlists_service.add_entry(session, team_id=caller.team_id, user_id=caller.user_id,
                                     shortlist_id=shortlist_id, data=data)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        return _compare_page(request, session, caller, shortlist_id, 422, errors=error_lines(exc), values=values)
    return RedirectResponse(request.headers.get("x-return-to") or f"/shortlists/{shortlist_id}", status_code=303)


@router.post("/{shortlist_id}/entries/{entry_id}/note", response_class=HTMLResponse)
def edit_note(request: Request, caller: PageWriter, session: SessionDep, shortlist_id: IdPath, entry_id: IdPath,
              note: Annotated[str, Form(max_length=4000)] = "") -> Response:
    shortlists_service.update_entry(session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_id=entry_id,
                                    note=note.strip())
    session.commit()
    return RedirectResponse(f"/shortlists/{shortlist_id}", status_code=303)


@router.post("/{shortlist_id}/entries/{entry_id}/remove", response_class=HTMLResponse)
def remove_entry(caller: PageWriter, session: SessionDep, shortlist_id: IdPath, entry_id: IdPath) -> Response:
    shortlists_service.remove_entry(session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_id=entry_id)
    session.commit()
    return RedirectResponse(f"/shortlists/{shortlist_id}", status_code=303)


@router.post("/{shortlist_id}/entries/{entry_id}/move", response_class=HTMLResponse)
def move_entry(caller: PageWriter, session: SessionDep, shortlist_id: IdPath, entry_id: IdPath,
               direction: Annotated[str, Form(pattern="^(left|right)$")] = "left") -> Response:
    shortlist = shortlists_service.get(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    order = [e.id for e in shortlist.entries]
    if entry_id in order:
        i = order.index(entry_id)
        j = i - 1 if direction == "left" else i + 1
        if 0 <= j < len(order):
            order[i], order[j] = order[j], order[i]
            shortlists_service.reorder(session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_ids=order)
            session.commit()
    return RedirectResponse(f"/shortlists/{shortlist_id}", status_code=303)


@router.post("/{shortlist_id}/rename", response_class=HTMLResponse)
def rename(request: Request, caller: PageWriter, session: SessionDep, shortlist_id: IdPath,
           name: Annotated[str, Form(min_length=1, max_length=120)]) -> Response:
    try:
        shortlists_service.rename(session, team_id=caller.team_id, shortlist_id=shortlist_id, name=name.strip())
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _compare_page(request, session, caller, shortlist_id, exc.status, errors=error_lines(exc))
    return RedirectResponse(f"/shortlists/{shortlist_id}", status_code=303)


@router.post("/{shortlist_id}/re-evaluate", response_class=HTMLResponse)
def re_evaluate(request: Request, caller: PageWriter, session: SessionDep, shortlist_id: IdPath) -> HTMLResponse:
    changes = shortlists_service.re_evaluate(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    session.commit()
    return _compare_page(request, session, caller, shortlist_id, changes=changes)


@router.post("/{shortlist_id}/delete", response_class=HTMLResponse)
def delete(caller: PageWriter, session: SessionDep, shortlist_id: IdPath) -> Response:
    shortlists_service.delete(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    session.commit()
    return RedirectResponse("/shortlists", status_code=303)
