"""HTML pages (thin: service → template or htmx block)."""

from fastapi import APIRouter, Depends

from server.pages import bench_runs, explain, fleet, home, missions, parts, predict, rankings, shortlists, teams
from server.uploads import close_form  # noqa: E402

page_router = APIRouter(include_in_schema=False, dependencies=[Depends(close_form)])
page_router.include_router(home.router)
page_router.include_router(parts.router)
page_router.include_router(missions.router)
page_router.include_router(bench_runs.router)
page_router.include_router(predict.router)
page_router.include_router(rankings.router)
page_router.include_router(explain.router)
page_router.include_router(shortlists.router)
page_router.include_router(fleet.router)
page_router.include_router(teams.router)
