"""The overview page: what is in the library and where to go next."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse
from sqlalchemy import func, select

from server.deps import PageCaller, SessionDep
from server.models import PART_MODELS, Airframe, BenchRun, Mission
from server.pages._render import render
from server.schemas.parts import KIND_LABELS
from server.services import rankings as rankings_service
from server.services import shortlists as shortlists_service

router = APIRouter()


@router.get("/", response_class=HTMLResponse)
def home(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    counts = {}
    for kind, model in PART_MODELS.items():
        stmt = select(func.count()).select_from(model).where(model.team_id == caller.team_id, model.archived.is_(False))
        counts[kind] = session.scalar(stmt) or 0
    def count(model: Any) -> int:
        return session.scalar(select(func.count()).select_from(model).where(model.team_id == caller.team_id)) or 0

    context = {
        "caller": caller, "nav": "home", "counts": counts, "labels": KIND_LABELS,
        "airframes": count(Airframe), "missions": count(Mission), "bench_runs": count(BenchRun),
        "rankings": [rankings_service.status(r)
                     for r in rankings_service.list_all(session, team_id=caller.team_id, limit=5)],
        "shortlists": shortlists_service.list_all(session, team_id=caller.team_id)[:5],
    }
    return render(request, "pages/home.html", context)
