"""JSON routes for rankings: start (202), status with progress, results (paged, sortable), Pareto set, cancel."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query, Request, Response

from server import jobs
from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.schemas.rankings import ParetoSet, RankingCreate, RankingResultsPage, RankingStarted, RankingStatus
from server.schemas.shortlists import AddedToShortlist, FromRanking
from server.services import rankings as rankings_service
from server.services import shortlists as shortlists_service

router = APIRouter(prefix="/rankings", tags=["rankings"])
SortQuery = Annotated[str, Query(max_length=40, description="Stored metric, '-' prefix for descending")]


@router.post("", status_code=202, response_model=RankingStarted)
def start_ranking(
    caller: WriterDep, session: SessionDep, request: Request, data: RankingCreate, response: Response
) -> dict[str, Any]:
    """Start ranking every power system of the team's library for a mission; poll the returned id."""
    row = rankings_service.start(
        session,
        team_id=caller.team_id,
        user_id=caller.user_id,
        mission_id=data.mission_id,
        objective=data.objective,
        top_n=data.top_n,
    )
    session.commit()
    jobs.submit(request.app.state, "ranking", row.id, caller.team_id)
    response.headers["Location"] = f"/api/v1/rankings/{row.id}"
    return {"id": row.id, "status": row.status}


@router.get("", response_model=list[RankingStatus])
def list_rankings(
    caller: CallerDep, session: SessionDep, mission_id: Annotated[int | None, Query(ge=1, le=2**63 - 1)] = None
) -> list[dict[str, Any]]:
    """The team's latest rankings (newest first)."""
    return [
        rankings_service.status(r)
        for r in rankings_service.list_all(session, team_id=caller.team_id, mission_id=mission_id)
    ]


@router.get("/{ranking_id}", response_model=RankingStatus)
def ranking_status(caller: CallerDep, session: SessionDep, ranking_id: IdPath) -> dict[str, Any]:
    """Status, progress 0–1, counts per rejection reason, engine version and elapsed time."""
    return rankings_service.status(rankings_service.get(session, team_id=caller.team_id, ranking_id=ranking_id))


def _filters(
    cells: int | None,
    packs: int | None,
    esc_max_a: float | None,
    min_thrust_to_weight: float | None,
    max_mass_g: float | None,
) -> dict[str, Any]:
    return {
        "cells": cells,
        "packs": packs,
        "esc_max_a": esc_max_a,
        "min_thrust_to_weight": min_thrust_to_weight,
        "max_mass_g": max_mass_g,
    }


@router.get("/{ranking_id}/results", response_model=RankingResultsPage)
def ranking_results(
    caller: CallerDep,
    session: SessionDep,
    ranking_id: IdPath,
    sort: SortQuery = "rank",
    page: Annotated[int, Query(ge=1, le=100_000)] = 1,
    page_size: Annotated[int, Query(ge=1, le=500)] = 50,
    cells: Annotated[int | None, Query(ge=1, le=24, description="Only packs with this many cells in series")] = None,
    packs: Annotated[int | None, Query(ge=1, le=4, description="Only this many packs in parallel")] = None,
    esc_max_a: Annotated[float | None, Query(ge=0, le=10_000, description="Only ESCs rated at most this")] = None,
    min_thrust_to_weight: Annotated[float | None, Query(ge=0, le=100)] = None,
    max_mass_g: Annotated[float | None, Query(ge=0, le=10_000_000)] = None,
) -> dict[str, Any]:
    """Ranked candidates (craft totals unless named per rotor), sortable by any stored metric, filtered, paged."""
    items, total = rankings_service.results(
        session,
        team_id=caller.team_id,
        ranking_id=ranking_id,
        sort=sort,
        page=page,
        page_size=page_size,
        filters=_filters(cells, packs, esc_max_a, min_thrust_to_weight, max_mass_g),
    )
    return {"items": items, "total": total, "page": page, "page_size": page_size}


@router.get("/{ranking_id}/pareto", response_model=ParetoSet)
def ranking_pareto(
    caller: CallerDep, session: SessionDep, ranking_id: IdPath, sort: SortQuery = "endurance_min"
) -> dict[str, Any]:
    """The non-dominated set over endurance, thrust-to-weight, all-up mass and cost."""
    items, total = rankings_service.results(
        session, team_id=caller.team_id, ranking_id=ranking_id, sort=sort, page=1, page_size=100_000, pareto=True
    )
    return {"items": items, "total": total}


@router.post("/{ranking_id}/cancel", response_model=RankingStatus)
def cancel_ranking(caller: WriterDep, session: SessionDep, ranking_id: IdPath) -> dict[str, Any]:
    """Ask a queued or running ranking to stop."""
    row = rankings_service.cancel(session, team_id=caller.team_id, ranking_id=ranking_id)
    session.commit()
    return rankings_service.status(row)


@router.delete("/{ranking_id}", status_code=204)
def delete_ranking(caller: WriterDep, session: SessionDep, ranking_id: IdPath) -> Response:
    """Delete a finished ranking and its stored results."""
    rankings_service.delete(session, team_id=caller.team_id, ranking_id=ranking_id)
    session.commit()
    return Response(status_code=204)


@router.post("/{ranking_id}/shortlist", status_code=201, response_model=AddedToShortlist)
def add_to_shortlist(caller: WriterDep, session: SessionDep, ranking_id: IdPath, data: FromRanking) -> dict[str, Any]:
    """Add a ranked row to a shortlist of the ranking's mission: an existing one (``shortlist_id``) or a new one."""
    entry = shortlists_service.add_from_ranking(
        session, team_id=caller.team_id, user_id=caller.user_id, ranking_id=ranking_id, rank=data.rank,
        shortlist_id=data.shortlist_id, name=data.name, note=data.note)
    session.commit()
    doc = shortlists_service.read(session, entry.shortlist)
    return {"shortlist": doc, "entry": next(e for e in doc["entries"] if e["id"] == entry.id),
            "created_shortlist": data.shortlist_id is None}
