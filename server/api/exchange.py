"""GET /api/v1/export and POST /api/v1/import: the whole team library as one JSON file."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Body

from server.deps import CallerDep, SessionDep, WriterDep
from server.schemas.exchange import LibraryFile, LibraryImported
from server.services import exchange

router = APIRouter(tags=["export and import"])


@router.get("/export", response_model=LibraryFile)
def export_library(caller: CallerDep, session: SessionDep) -> dict[str, Any]:
    """The team's parts, airframes, missions, bench runs and calibrations (lossless; ids become refs)."""
    return exchange.export(session, team_id=caller.team_id, team_name=caller.team_name)


@router.post("/import", status_code=201, response_model=LibraryImported)
def import_library(caller: WriterDep, session: SessionDep, data: dict[str, Any] = Body(...)) -> dict[str, int]:  # noqa: B008
    """Add a library file's contents to the team (all or nothing); returns how many of each were created."""
    counts = exchange.import_library(session, team_id=caller.team_id, user_id=caller.user_id, data=data)
    session.commit()
    return counts
