"""Background jobs (rankings, fleet plans, refits): one pool, submitted from one place, one start-up recovery."""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from functools import partial
from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

Runner = Callable[[sessionmaker[Session], int], None]
Submit = Callable[[Callable[[], None]], object]


def kinds() -> dict[str, tuple[Any, Runner]]:
    """Every job kind: its model (with status/progress/error columns) and the function that runs one."""
    from server.models import FleetPlan, Ranking, Refit
    from server.services import fleet, rankings, refits

    return {"ranking": (Ranking, rankings.run), "fleet_plan": (FleetPlan, fleet.run), "refit": (Refit, refits.run)}


def submit(state: Any, kind: str, job_id: int) -> None:
    """Queue a stored job (its row says ``queued``) on the app's job pool; call after the row is committed."""
    _, run = kinds()[kind]
    state.jobs.submit(run, state.sessionmaker, job_id)


def recover(factory: sessionmaker[Session], model: Any, run: Runner, submit: Submit) -> None:
    """At start-up: requeue jobs that never started; fail those a stopped process left running."""
    with factory() as s, s.begin():
        s.execute(update(model).where(model.status == "running")
                  .values(status="failed", error="interrupted by a server restart", finished_at=datetime.now(UTC)))
        queued = list(s.scalars(select(model.id).where(model.status == "queued")))
    for job_id in queued:
        submit(partial(run, factory, job_id))


def recover_all(state: Any) -> None:
    for model, run in kinds().values():
        recover(state.sessionmaker, model, run, lambda job: state.jobs.submit(job))
