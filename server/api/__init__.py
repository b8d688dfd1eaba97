"""The JSON API under /api/v1 (thin routers: parse → service → schema)."""

from fastapi import APIRouter, Depends

from server.api import (
    bench_runs,
    calibrations,
    exchange,
    explain,
    fleet,
    missions,
    parts,
    predict,
    rankings,
    shortlists,
    teams,
)
from server.uploads import close_form  # noqa: E402

api_router = APIRouter(prefix="/api/v1", dependencies=[Depends(close_form)])
api_router.include_router(parts.router)
api_router.include_router(missions.router)
api_router.include_router(teams.router)
api_router.include_router(exchange.router)
api_router.include_router(bench_runs.router)
api_router.include_router(calibrations.router)
api_router.include_router(predict.router)
api_router.include_router(rankings.router)
api_router.include_router(explain.router)
api_router.include_router(shortlists.router)
api_router.include_router(fleet.router)
