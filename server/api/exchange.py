"""GET /api/v1/export and POST /api/v1/import: the whole team library as one JSON file."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Request

from server.deps import CallerDep, SessionDep, WriterDep
from server.limits import LIBRARY_BODY_BYTES
from server.schemas.exchange import LibraryFile, LibraryImported
from server.services import exchange
from server.services._validation import parse_json

router = APIRouter(tags=["export and import"])


@router.get("/export", response_model=LibraryFile)
def export_library(caller: CallerDep, session: SessionDep) -> dict[str, Any]:
    """The team's parts, airframes, missions, bench runs and calibrations (lossless; ids become refs)."""
    return exchange.export(session, team_id=caller.team_id, team_name=caller.team_name)


async def library_file(request: Request, caller: WriterDep) -> Any:
    """The JSON body, read only once the caller is known to be allowed to write (the body may be large)."""
    return parse_json(await request.body(), field="body")


LibraryBody = Annotated[Any, Depends(library_file)]


@router.post("/import", status_code=201, response_model=LibraryImported, max_body_size=LIBRARY_BODY_BYTES,
             openapi_extra={"requestBody": {"required": True, "description": "A library file as written by GET /export",
                                            "content": {"application/json": {"schema": {"type": "object"}}}}})
def import_library(caller: WriterDep, session: SessionDep, data: LibraryBody) -> dict[str, int]:
    """Add a library file's contents to the team (all or nothing); returns how many of each were created."""
    counts = exchange.import_library(session, team_id=caller.team_id, user_id=caller.user_id, data=data)
    session.commit()
    return counts
