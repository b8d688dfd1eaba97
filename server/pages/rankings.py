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
from server.schemas.shortlists import FromRanking
from server.services import missions as missions_service
from server.services import parts as parts_service
from server.services import rankings as rankings_service
from server.services import shortlists as shortlists_service
from server.services.cautions import near_limit
from server.services.cautions import summary as cautions_summary

router = APIRouter(prefix="/rankings")
OBJECTIVE_LABELS = {"cruise_power": "lowest hover/cruise power", "endurance": "longest endurance",
                    "specific_thrust": "best specific thrust", "mass": "lowest mass", "cost": "lowest cost"}
GROUP_METRICS = {"cruise_power": "cruise power", "endurance": "endurance", "specific_thrust": "specific thrust",
                 "thrust_to_weight": "thrust-to-weight", "mass": "all-up mass (equal values)",
                 "cost": "cost (equal values)"}
"""What 'cannot be told apart from rank 1' compares, per objective (mass and cost carry no band)."""
SORTS = {"rank": "rank", "all_up_mass_g": "mass", "cruise_duty": "duty", "cruise_power_w": "hover/cruise power",
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


def _pareto_point(p: dict[str, Any], names: dict[str, dict[int, dict[str, Any]]]) -> dict[str, Any]:
    """One Pareto candidate as the plot and its table show it: the four objectives and the four parts."""
    def part(kind: str, key: str) -> str:
        found = names[kind].get(p[key], {})
        return str(found.get("part_number") or found.get("name") or f"#{p[key]}")

    return {"id": p["result_id"], "rank": p["rank"], "endurance_min": p["endurance_min"],
            "thrust_to_weight": p["full_throttle"]["thrust_to_weight"], "all_up_mass_g": p["all_up_mass_g"],
            "cost": p["cost"], "cells": p["cells_series"], "packs": p["packs_in_parallel"],
            "power_w": p["cruise"]["electrical_power_w"],
            "parts": {"battery": part("batteries", "battery_id"), "esc": part("escs", "esc_id"),
                      "motor": part("motors", "motor_id"), "propeller": part("propellers", "propeller_id")}}


def _currencies(session: Any, team_id: int, rows: list[dict[str, Any]]) -> dict[int, str]:
    """Currency of each row's cost, by battery id (a candidate's cost is in its parts' currency)."""
    packs = parts_service.by_ids(session, team_id=team_id, ids={"batteries": {r["battery_id"] for r in rows}})
    return {pid: part.currency for pid, part in packs["batteries"].items()}


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


def _ranking_context(request: Request, session: Any, caller: Caller, ranking_id: int, sort: str,
                     page: int) -> dict[str, Any]:
    ranking = rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id)
    status = rankings_service.status(ranking)
    q = dict(request.query_params)
    filters = _filters(q)
    if sort.lstrip("-") not in rankings_service.SORT_COLUMNS:
        sort = "rank"
    point = rankings_service.point_word(ranking.inputs["mission"]["kind"])
    ctx: dict[str, Any] = {"caller": caller, "nav": "rankings", "ranking": status, "sort": sort, "q": q,
                           "filters": filters, "sorts": SORTS,
                           "objectives": OBJECTIVE_LABELS | {"cruise_power": f"lowest {point} power"},
                           "reason_labels": rankings_service.reason_text(ranking.inputs["mission"]["kind"]),
                           "rows": [], "total": 0, "pareto": [], "shortlists": [],
                           "page": page, "page_size": 50, "cautions": [], "currencies": [],
                           "point_label": point.capitalize(), "grouping": {"count": 0}, "assumptions": {"rows": 0},
                           "announce": ""}
    if status["status"] == "done":
        rows, total = rankings_service.results(session, team_id=caller.team_id, ranking_id=ranking_id, sort=sort,
                                               page=page, page_size=50, filters=filters)
        pareto, _ = rankings_service.results(session, team_id=caller.team_id, ranking_id=ranking_id,
                                             sort="endurance_min", page_size=5000, pareto=True)
        margin = ranking.inputs["mission"]["esc_current_margin"]
        currency = _currencies(session, caller.team_id, rows)
        per_row = [near_limit(row.get("margins", {}), margin) for row in rows]
        for row, found in zip(rows, per_row, strict=True):
            row["near_limit"] = [c.text for c in found]
            row["currency"] = currency.get(row["battery_id"], "")
        names = _names(ranking)
        ctx.update(rows=rows, total=total, names=names, mission=ranking.inputs["mission"],
                   pareto=[_pareto_point(p, names) for p in pareto],
                   shortlists=_mission_shortlists(session, caller.team_id, ranking.mission_id),
                   cautions=cautions_summary(per_row),
                   currencies=sorted({r["currency"] for r in rows if r["cost"] is not None}),
                   grouping={"count": sum(1 for r in rows if r.get("indistinguishable_from_best")),
                             "metric": GROUP_METRICS.get(ranking.objective, "the objective").replace("cruise", point)},
                   assumptions={"rows": sum(1 for r in rows if any((r.get("assumed") or {}).values())),
                                "best_share": next((r.get("assumed_share") for r in rows if r.get("rank") == 1),
                                                   None)})
    return ctx


@router.get("/{ranking_id}", response_class=HTMLResponse)
def ranking_page(
    request: Request, caller: PageCaller, session: SessionDep, ranking_id: IdPath,
    sort: Annotated[str, Query(max_length=40)] = "rank", page: Annotated[int, Query(ge=1, le=10_000)] = 1,
) -> HTMLResponse:
    ctx = _ranking_context(request, session, caller, ranking_id, sort, page)
    block = "results" if request.headers.get("hx-target") == "ranking-results" else "job"
    return render(request, "pages/ranking.html", ctx, block=block)


@router.get("/{ranking_id}/progress", response_class=HTMLResponse)
def ranking_progress(request: Request, caller: PageCaller, session: SessionDep, ranking_id: IdPath) -> HTMLResponse:
    """The polled progress while the job runs; once it ends, the whole job block (retargeted) and an announcement."""
    ctx = _ranking_context(request, session, caller, ranking_id, "rank", 1)
    status = ctx["ranking"]
    if status["status"] in ("queued", "running"):
        return render(request, "pages/ranking.html", ctx, block="progress")
    ctx["announce"] = (f"Ranking finished: {status['feasible']} feasible of {status['combinations']} combinations."
                       if status["status"] == "done" else f"Ranking {status['status']}.")
    return render(request, "pages/ranking.html", ctx, block="job",
                  headers={"HX-Retarget": "#ranking-job", "HX-Reswap": "outerHTML"})


@router.post("/{ranking_id}/cancel", response_class=HTMLResponse)
def cancel(caller: PageWriter, session: SessionDep, ranking_id: IdPath) -> Response:
    try:
        rankings_service.cancel(session, team_id=caller.team_id, ranking_id=ranking_id)
        session.commit()
    except DomainError:
        session.rollback()
    return RedirectResponse(f"/rankings/{ranking_id}", status_code=303)


def _mission_shortlists(session: Any, team_id: int, mission_id: int | None) -> list[dict[str, Any]]:
    return [{"id": s.id, "name": s.name, "entries": len(s.entries)}
            for s in shortlists_service.list_all(session, team_id=team_id) if s.mission_id == mission_id]


@router.post("/{ranking_id}/shortlist", response_class=HTMLResponse)
def add_to_shortlist(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm,
                     ranking_id: IdPath) -> Response:
    """Add a ranked row to a shortlist of the same mission (a new, automatically named one when none is chosen)."""
    ranking = rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id)
    htmx = request.headers.get("hx-request") == "true"
    try:
        data = FromRanking.model_validate({"rank": values.get("rank"),
                                           "shortlist_id": values.get("shortlist_id") or None})
        entry = shortlists_service.add_from_ranking(session, team_id=caller.team_id, user_id=caller.user_id,
                                                    ranking_id=ranking_id, rank=data.rank,
                                                    shortlist_id=data.shortlist_id)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        message = "; ".join(error_lines(exc)) if isinstance(exc, ValidationError) else exc.detail
        if not htmx:
            return Response(f"Not added: {message}", status_code=exc.status if isinstance(exc, DomainError) else 422,
                            media_type="text/plain")
        return render(request, "partials/_shortlist_added.html", {"error": message, "rank": values.get("rank")})
    if not htmx:
        return RedirectResponse(f"/shortlists/{entry.shortlist_id}", status_code=303)
    return render(request, "partials/_shortlist_added.html", {
        "error": None, "rank": data.rank, "shortlist": entry.shortlist, "created": data.shortlist_id is None,
        "shortlists": _mission_shortlists(session, caller.team_id, ranking.mission_id),
        "selected_id": entry.shortlist_id})
