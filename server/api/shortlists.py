"""JSON routes for shortlists: CRUD, entries, re-evaluation, compare.json and bom.csv."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query, Response

from server.deps import MAX_ID, CallerDep, IdPath, SessionDep, WriterDep
from server.errors import FieldError, InvalidInput
from server.schemas.shortlists import (
    CompareRead,
    EntryCreate,
    EntryRead,
    EntryUpdate,
    ReEvaluation,
    Reorder,
    ShortlistCreate,
    ShortlistRead,
    ShortlistRename,
)
from server.services import bom as bom_service
from server.services import shortlist_compare
from server.services import shortlists as shortlists_service

router = APIRouter(prefix="/shortlists", tags=["shortlists"])


@router.get("", response_model=list[ShortlistRead])
def list_shortlists(caller: CallerDep, session: SessionDep) -> list[dict[str, Any]]:
    """List the team's shortlists with their entries."""
    return [shortlists_service.read(session, s) for s in shortlists_service.list_all(session, team_id=caller.team_id)]


@router.post("", status_code=201, response_model=ShortlistRead)
def create_shortlist(caller: WriterDep, session: SessionDep, data: ShortlistCreate) -> dict[str, Any]:
    """Create a named shortlist for a mission."""
    row = shortlists_service.create(
        session, team_id=caller.team_id, user_id=caller.user_id, name=data.name, mission_id=data.mission_id
    )
    session.commit()
    return shortlists_service.read(session, row)


@router.get("/{shortlist_id}", response_model=ShortlistRead)
def read_shortlist(caller: CallerDep, session: SessionDep, shortlist_id: IdPath) -> dict[str, Any]:
    """Read a shortlist with its entries (metrics as snapshotted)."""
    return shortlists_service.read(
        session, shortlists_service.get(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    )


@router.patch("/{shortlist_id}", response_model=ShortlistRead)
def rename_shortlist(
    caller: WriterDep, session: SessionDep, shortlist_id: IdPath, data: ShortlistRename
) -> dict[str, Any]:
    """Rename a shortlist."""
    row = shortlists_service.rename(session, team_id=caller.team_id, shortlist_id=shortlist_id, name=data.name)
    session.commit()
    return shortlists_service.read(session, row)


@router.delete("/{shortlist_id}", status_code=204)
def delete_shortlist(caller: WriterDep, session: SessionDep, shortlist_id: IdPath) -> Response:
    """Delete a shortlist and its entries."""
    shortlists_service.delete(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    session.commit()
    return Response(status_code=204)


@router.post("/{shortlist_id}/entries", status_code=201, response_model=EntryRead)
def add_entry(caller: WriterDep, session: SessionDep, shortlist_id: IdPath, data: EntryCreate) -> dict[str, Any]:
    """Add a candidate: four part ids and packs in parallel, or a ranking row (ranking_id + rank)."""
    entry = shortlists_service.add_entry(
        session, team_id=caller.team_id, user_id=caller.user_id, shortlist_id=shortlist_id, data=data
    )
    session.commit()
    return next(e for e in shortlists_service.read(session, entry.shortlist)["entries"] if e["id"] == entry.id)


@router.patch("/{shortlist_id}/entries/{entry_id}", response_model=EntryRead)
def update_entry(
    caller: WriterDep, session: SessionDep, shortlist_id: IdPath, entry_id: IdPath, data: EntryUpdate
) -> dict[str, Any]:
    """Change an entry's note."""
    entry = shortlists_service.update_entry(
        session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_id=entry_id, note=data.note or ""
    )
    session.commit()
    return next(e for e in shortlists_service.read(session, entry.shortlist)["entries"] if e["id"] == entry.id)


@router.delete("/{shortlist_id}/entries/{entry_id}", status_code=204)
def remove_entry(caller: WriterDep, session: SessionDep, shortlist_id: IdPath, entry_id: IdPath) -> Response:
    """Remove an entry."""
    shortlists_service.remove_entry(session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_id=entry_id)
    session.commit()
    return Response(status_code=204)


@router.post("/{shortlist_id}/reorder", response_model=ShortlistRead)
def reorder(caller: WriterDep, session: SessionDep, shortlist_id: IdPath, data: Reorder) -> dict[str, Any]:
    """Put the entries in the given order."""
    row = shortlists_service.reorder(
        session, team_id=caller.team_id, shortlist_id=shortlist_id, entry_ids=data.entry_ids
    )
    session.commit()
    return shortlists_service.read(session, row)


@router.post("/{shortlist_id}/re-evaluate", response_model=ReEvaluation)
def re_evaluate(caller: WriterDep, session: SessionDep, shortlist_id: IdPath) -> dict[str, Any]:
    """Recompute every entry with the current engine and calibrations; says what changed."""
    changes = shortlists_service.re_evaluate(session, team_id=caller.team_id, shortlist_id=shortlist_id)
    session.commit()
    return {"changes": changes}


@router.get("/{shortlist_id}/compare.json", response_model=CompareRead)
def compare(caller: CallerDep, session: SessionDep, shortlist_id: IdPath) -> dict[str, Any]:
    """Every number of the compare page, freshly evaluated, with the best value per row."""
    return shortlist_compare.compare(session, team_id=caller.team_id, shortlist_id=shortlist_id)


def entry_ids(raw: list[str] | None) -> list[int] | None:
    """``entries=12,15`` (or ``entries=12&entries=15``, as an HTML form sends it) → [12, 15]; None when not given."""
    text = ",".join(raw or [])
    if not text.strip():
        return None
    try:
        ids = [int(part) for part in text.split(",") if part.strip()]
    except ValueError:
        ids = []
    if not ids or any(not 1 <= i <= MAX_ID for i in ids):
        raise InvalidInput("Bad entries", [FieldError("entries", "a comma-separated list of entry ids, e.g. 12,15")])
    return ids


@router.get("/{shortlist_id}/bom.csv", response_class=Response, responses={200: {"content": {"text/csv": {}}}})
def bom(
    caller: CallerDep,
    session: SessionDep,
    shortlist_id: IdPath,
    airframes: Annotated[int, Query(ge=1, le=100_000, description="Airframes to equip")] = 1,
    entries: Annotated[
        list[str] | None,
        Query(max_length=20, description="Entry ids to order: 12,15 or repeated (default: every entry)"),
    ] = None,
    spares_percent: Annotated[
        float, Query(ge=0, le=200, description="Spares per line, % of the quantity (rounded up) [%]")
    ] = 0,
) -> Response:
    """Bill of materials for N airframes of the chosen entries: part numbers, makers, quantities (propellers split
    into CW and CCW), spares, unit and total cost."""
    text = bom_service.shortlist_csv(session, team_id=caller.team_id, shortlist_id=shortlist_id, airframes=airframes,
                                     entries=entry_ids(entries), spares_percent=spares_percent)
    return Response(
        text,
        media_type="text/csv; charset=utf-8",
        headers={"Content-Disposition": f'attachment; filename="shortlist-{shortlist_id}-bom.csv"'},
    )
