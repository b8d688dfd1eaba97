"""The overview page: what is in the library and where to go next."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse
from sqlalchemy import func, select

from server.deps import PageCaller, SessionDep
from server.models import PART_MODELS, Airframe, Mission
from server.pages._render import render
from server.schemas.parts import KIND_LABELS

router = APIRouter()


@router.get("/", response_class=HTMLResponse)
def home(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    counts = {}
    for kind, model in PART_MODELS.items():
        stmt = select(func.count()).select_from(model).where(model.team_id == caller.team_id, model.archived.is_(False))
        counts[kind] = session.scalar(stmt) or 0
    airframes = session.scalar(select(func.count()).select_from(Airframe).where(Airframe.team_id == caller.team_id))
    missions = session.scalar(select(func.count()).select_from(Mission).where(Mission.team_id == caller.team_id))
    return render(
        request,
        "pages/home.html",
        {
            "caller": caller,
            "counts": counts,
            "labels": KIND_LABELS,
            "airframes": airframes or 0,
            "missions": missions or 0,
            "nav": "home",
        },
    )
