"""Rankings page: start a ranking, watch its progress (htmx polling), then results, rejections and Pareto plot."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import ValidationError

from server import jobs
from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import DomainError
from server.models import Ranking
from server.pages._render import PostedForm, error_lines, render
from server.schemas.rankings import RankingCreate
from server.services import missions as missions_service
from server.services import rankings as rankings_service
from server.services import shortlists as shortlists_service

router = APIRouter(prefix="/rankings")
NEAR_LIMIT = 0.9  # common practice, no source: flag a part run at ≥ 90 % of its rating
OBJECTIVE_LABELS = {"cruise_power": "lowest cruise power", "endurance": "longest endurance",
                    "specific_thrust": "best specific thrust", "mass": "lowest mass", "cost": "lowest cost"}
REASON_LABELS = rankings_service.REASON_TEXT
GROUP_METRICS = {"cruise_power": "cruise power", "endurance": "endurance", "specific_thrust": "specific thrust",
                 "thrust_to_weight": "thrust-to-weight", "mass": "all-up mass (equal values)",
                 "cost": "cost (equal values)"}
"""What 'cannot be told apart from rank 1' compares, per objective (mass and cost carry no band)."""
SORTS = {"rank": "rank", "all_up_mass_g": "mass", "cruise_duty": "duty", "cruise_power_w": "cruise power",
         "specific_thrust_g_per_w": "g/W", "endurance_min": "endurance", "thrust_to_weight": "T/W", "cost": "cost"}


def _names(ranking: Ranking) -> dict[str, dict[int, dict[str, Any]]]:
    return {kind: {p["id"]: p for p in rows} for kind, rows in ranking.inputs["parts"].items()}


def _filters(q: dict[str, str]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, cast in (("cells", int), ("packs", int), ("esc_max_a", float), ("min_thrust_to_weight", float),
                      ("max_mass_g", float)):
        try:
            out[key] = cast(q[key]) if q.get(key) else None
        except ValueError:
            out[key] = None
    return out


def _near_limit(row: dict[str, Any], margin: float) -> list[str]:
    m = row.get("margins", {})
    notes = []
    if m.get("motor_current_ratio", 0) >= NEAR_LIMIT:
        notes.append(f"motor at {m['motor_current_ratio']:.0%} of its rating")
    if m.get("esc_rating_ratio", 99) < margin * 1.05:
        notes.append(f"ESC rating only {m['esc_rating_ratio']:.2f}× the motor current")
    if m.get("pack_current_ratio", 0) >= NEAR_LIMIT:
        notes.append(f"pack at {m['pack_current_ratio']:.0%} of its allowed current")
    return notes


def _index(request: Request, session: Any, caller: Caller, status_code: int = 200, **extra: Any) -> HTMLResponse:
    ctx: dict[str, Any] = {"caller": caller, "nav": "rankings", "objectives": OBJECTIVE_LABELS,
                           "missions": missions_service.list_missions(session, team_id=caller.team_id),
                           "rankings": [rankings_service.status(r)
                                        for r in rankings_service.list_all(session, team_id=caller.team_id)],
                           "errors": [], "values": {}}
    ctx.update(extra)
    return render(request, "pages/rankings.html", ctx, status_code=status_code)


@router.get("", response_class=HTMLResponse)
def rankings_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _index(request, session, caller, values=dict(request.query_params))


@router.post("", response_class=HTMLResponse)
def start(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm) -> Response:
    try:
        data = RankingCreate.model_validate(values)
        row = rankings_service.start(session, team_id=caller.team_id, user_id=caller.user_id,
                                     mission_id=data.mission_id, objective=data.objective, top_n=data.top_n)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        errors = error_lines(exc)
        return _index(request, session, caller, 422, errors=errors, values=values)
    jobs.submit(request.app.state, "ranking", row.id, caller.team_id)
    return RedirectResponse(f"/rankings/{row.id}", status_code=303)


@router.get("/{ranking_id}", response_class=HTMLResponse)
def ranking_page(
    request: Request, caller: PageCaller, session: SessionDep, ranking_id: IdPath,
    sort: Annotated[str, Query(max_length=40)] = "rank", page: Annotated[int, Query(ge=1, le=10_000)] = 1,
) -> HTMLResponse:
    ranking = rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id)
    status = rankings_service.status(ranking)
    q = dict(request.query_params)
    filters = _filters(q)
    if sort.lstrip("-") not in rankings_service.SORT_COLUMNS:
        sort = "rank"
    ctx: dict[str, Any] = {"caller": caller, "nav": "rankings", "ranking": status, "sort": sort, "q": q,
                           "filters": filters, "sorts": SORTS, "objectives": OBJECTIVE_LABELS,
                           "reason_labels": REASON_LABELS, "rows": [], "total": 0, "pareto": [], "shortlists": [],
                           "page": page, "page_size": 50, "cautions": [], "grouping": {"count": 0},
                           "assumptions": {"rows": 0}}
    if status["status"] == "done":
        rows, total = rankings_service.results(session, team_id=caller.team_id, ranking_id=ranking_id, sort=sort,
                                               page=page, page_size=50, filters=filters)
        pareto, _ = rankings_service.results(session, team_id=caller.team_id, ranking_id=ranking_id,
                                             sort="endurance_min", page_size=5000, pareto=True)
        margin = ranking.inputs["mission"]["esc_current_margin"]
        for row in rows:
            row["near_limit"] = _near_limit(row, margin)
        names = _names(ranking)
        ctx.update(rows=rows, total=total, names=names, mission=ranking.inputs["mission"],
                   pareto=[{"endurance_min": p["endurance_min"],
                            "thrust_to_weight": p["full_throttle"]["thrust_to_weight"],
                            "cells": p["cells_series"], "mass_g": p["all_up_mass_g"], "cost": p["cost"],
                            "label": f"{names['motors'][p['motor_id']]['name']} / "
                                     f"{names['propellers'][p['propeller_id']]['name']} / "
                                     f"{names['batteries'][p['battery_id']]['name']}"} for p in pareto],
                   shortlists=[s for s in shortlists_service.list_all(session, team_id=caller.team_id)
                               if s.mission_id == ranking.mission_id],
                   cautions=sorted({n for r in rows for n in r["near_limit"]}),
                   grouping={"count": sum(1 for r in rows if r.get("indistinguishable_from_best")),
                             "metric": GROUP_METRICS.get(ranking.objective, "the objective")},
                   assumptions={"rows": sum(1 for r in rows if any((r.get("assumed") or {}).values())),
                                "best_share": next((r.get("assumed_share") for r in rows if r.get("rank") == 1),
                                                   None)})
    block = "results" if request.headers.get("hx-target") == "ranking-results" else "job"
    return render(request, "pages/ranking.html", ctx, block=block)


@router.post("/{ranking_id}/cancel", response_class=HTMLResponse)
def cancel(caller: PageWriter, session: SessionDep, ranking_id: IdPath) -> Response:
    try:
        rankings_service.cancel(session, team_id=caller.team_id, ranking_id=ranking_id)
        session.commit()
    except DomainError:
        session.rollback()
    return RedirectResponse(f"/rankings/{ranking_id}", status_code=303)


@router.post("/{ranking_id}/shortlist", response_class=HTMLResponse)
def add_to_shortlist(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm,
                     ranking_id: IdPath) -> Response:
    """Add a ranked row to a shortlist of the same mission (a new one when none is chosen)."""
    ranking = rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id)
    try:
        shortlist_id = int(values.get("shortlist_id") or 0)
        if not shortlist_id:
            name = values.get("new_name") or f"{ranking.mission_name} shortlist"
            shortlist_id = shortlists_service.create(session, team_id=caller.team_id, user_id=caller.user_id,
                                                     name=name, mission_id=ranking.mission_id or 0).id
        from server.schemas.shortlists import EntryCreate

        shortlists_service.add_entry(session, team_id=caller.team_id, user_id=caller.user_id,
                                     shortlist_id=shortlist_id,
                                     data=EntryCreate(ranking_id=ranking_id, rank=int(values.get("rank", "0"))))
        session.commit()
    except (DomainError, ValueError, ValidationError) as exc:
        session.rollback()
        message = exc.detail if isinstance(exc, DomainError) else "choose a row and a shortlist"
        if request.headers.get("hx-request") == "true":  # htmx swaps only 2xx answers
            return HTMLResponse(f'<span class="error">Not added: {message}</span>')
        return Response(f"Not added: {message}", status_code=409 if isinstance(exc, DomainError) else 422,
                        media_type="text/plain")
    if request.headers.get("hx-request") == "true":
        return HTMLResponse(f'<span class="ok">added · <a href="/shortlists/{shortlist_id}">open</a></span>')
    return RedirectResponse(f"/shortlists/{shortlist_id}", status_code=303)
