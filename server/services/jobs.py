"""Background jobs (rankings, fleet plans): one worker pool, the same start-up recovery for every kind."""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from functools import partial
from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

Submit = Callable[[Callable[[], None]], object]


def recover(factory: sessionmaker[Session], model: Any, run: Callable[[sessionmaker[Session], int], None],
            submit: Submit) -> None:
    """At start-up: requeue jobs that never started; fail those a stopped process left running."""
    with factory() as s, s.begin():
        s.execute(update(model).where(model.status == "running")
                  .values(status="failed", error="interrupted by a server restart", finished_at=datetime.now(UTC)))
        queued = list(s.scalars(select(model.id).where(model.status == "queued")))
    for job_id in queued:
        submit(partial(run, factory, job_id))
