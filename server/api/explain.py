"""POST /api/v1/explain: why a power system passes or fails each of the ranking's limits."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from server.deps import CallerDep, SessionDep
from server.schemas.rankings import ExplainRequest, Explanation
from server.services import explain as explain_service

router = APIRouter(tags=["rankings"])


@router.post("/explain", response_model=Explanation)
def explain(caller: CallerDep, session: SessionDep, data: ExplainRequest) -> dict[str, Any]:
    """Every rejection reason checked in the ranking's order with the value, limit and margin it used."""
    return explain_service.explain(session, team_id=caller.team_id, **data.model_dump())
