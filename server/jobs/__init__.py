"""One job runner for every background job kind (rankings, fleet plans, bench-run refits).

Lifecycle, the same for every kind: ``queued`` → ``running`` → ``done`` | ``failed`` | ``cancelled``. A job's row
(``Ranking``, ``FleetPlan``, ``Refit``) holds its status, progress, error, ``cancel_requested`` and ``attempts``; the
body of a job reads its stored snapshot, so running it again gives the same result (results are replaced, never
appended). :func:`execute` claims a queued row atomically (one runner wins), gives the body a
:class:`JobContext` (progress, cancel, a time limit, the runner stopping) and records how it ended.

Runners: :mod:`server.jobs.inprocess` (threads in the web process: the embedded SQLite default) and
:mod:`server.jobs.pgqueue` (worker processes on a PostgreSQL-backed queue). Web code queues a committed job with
:func:`submit` only.
"""

from __future__ import annotations

import logging
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any, Protocol

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

log = logging.getLogger("liftmatch.jobs")
CHECK_INTERVAL_S = 0.25
MAX_ATTEMPTS = 3


class JobStopped(Exception):
    """The body must stop now; ``status`` and ``error`` say how the job ends."""

    status = "failed"

    def __init__(self, error: str = "") -> None:
        super().__init__(error)
        self.error = error


class Cancelled(JobStopped):
    status = "cancelled"


class TimeLimitExceeded(JobStopped):
    status = "failed"


class Interrupted(JobStopped):
    """The runner is stopping (SIGTERM): the job goes back to the queue and runs again later from its snapshot."""

    status = "queued"


Submit = Callable[[str, int, int], None]
"""Queue a stored job: ``submit(kind, job_id, team_id)``."""


@dataclass
class JobContext:
    """What a job body gets: report progress, and ask whether it must stop (cancel, time limit, shutdown)."""

    factory: sessionmaker[Session]
    model: Any
    job_id: int
    time_limit_s: float
    stopping: threading.Event
    submit: Submit | None = None
    """Queue another job with the runner that runs this one (None: run it in this thread), e.g. a ranking's shards."""
    shard_combinations: int = 0
    """A ranking screening more combinations than this is split into shards (0: never)."""
    started: float = field(default_factory=time.monotonic)
    _last_progress: float = 0.0
    _last_check: float = 0.0
    stop: JobStopped | None = None

    def progress(self, fraction: float) -> None:
        """Store progress 0–1 (at most every 0.25 s)."""
        now = time.monotonic()
        if now - self._last_progress >= CHECK_INTERVAL_S or fraction >= 1.0:
            self._last_progress = now
            with self.factory() as s, s.begin():
                s.execute(update(self.model).where(self.model.id == self.job_id)
                          .values(progress=min(float(fraction), 0.999)))

    def should_stop(self) -> bool:
        """True when the job must stop (the reason is kept in ``stop``); polled by long computations."""
        if self.stop is not None:
            return True
        if self.stopping.is_set():
            self.stop = Interrupted("interrupted: the worker stopped; the job runs again from its snapshot")
        elif time.monotonic() - self.started > self.time_limit_s:
            self.stop = TimeLimitExceeded(f"stopped: the time limit of {self.time_limit_s:g} s per job was "
                                          "exceeded (LIFTMATCH_JOB_TIME_LIMIT_S)")
        else:
            now = time.monotonic()
            if now - self._last_check >= CHECK_INTERVAL_S:
                self._last_check = now
                with self.factory() as s:
                    if s.scalar(select(self.model.cancel_requested).where(self.model.id == self.job_id)):
                        self.stop = Cancelled("cancelled on request")
        return self.stop is not None

    def check(self) -> None:
        """Raise the reason to stop, if there is one (call between the steps of a job)."""
        if self.should_stop():
            assert self.stop is not None
            raise self.stop


Body = Callable[[sessionmaker[Session], int, JobContext], None]


@dataclass(frozen=True)
class Kind:
    name: str
    model: Any
    body: Body


def kinds() -> dict[str, Kind]:
    """Every job kind: the model holding its lifecycle and the body that runs one."""
    from server.models import FleetPlan, Ranking, RankingShard, Refit
    from server.services import fleet, ranking_shards, rankings, refits

    return {"ranking": Kind("ranking", Ranking, rankings.run_job),
            "ranking_shard": Kind("ranking_shard", RankingShard, ranking_shards.run_shard_job),
            "fleet_plan": Kind("fleet_plan", FleetPlan, fleet.run_job),
            "refit": Kind("refit", Refit, refits.run_job)}


def kind_of(model: Any) -> str:
    return next(k.name for k in kinds().values() if k.model is model)


def _end(factory: sessionmaker[Session], model: Any, job_id: int, **values: Any) -> None:
    with factory() as s, s.begin():
        s.execute(update(model).where(model.id == job_id, model.status == "running").values(**values))


def execute(factory: sessionmaker[Session], kind: str, job_id: int, *, time_limit_s: float,
            stopping: threading.Event | None = None, reclaim_running: bool = False, submit: Submit | None = None,
            shard_combinations: int = 0) -> str | None:
    """Claim and run one job; returns how it ended (None when another runner had it, or it was not queued).

    ``reclaim_running``: the queue delivered this job again after its worker died mid-job (a retry of the same
    queue entry), so a ``running`` row is taken over rather than skipped.
    """
    spec = kinds()[kind]
    model = spec.model
    with factory() as s, s.begin():
        states = ("queued", "running") if reclaim_running else ("queued",)
        row = s.execute(update(model).where(model.id == job_id, model.status.in_(states)).values(
            status="running", started_at=datetime.now(UTC), finished_at=None, error="",
            attempts=model.attempts + 1).returning(model.attempts, model.cancel_requested)).first()
        if row is None:
            return None
        attempts, cancel = row
    if cancel:
        _end(factory, model, job_id, status="cancelled", error="cancelled on request", finished_at=datetime.now(UTC))
        return "cancelled"
    if attempts > MAX_ATTEMPTS:
        _end(factory, model, job_id, status="failed", finished_at=datetime.now(UTC),
             error=f"failed: interrupted {attempts - 1} times (a worker stopped or died while running it)")
        return "failed"
    context = JobContext(factory, model, job_id, time_limit_s, stopping or threading.Event(), submit,
                         shard_combinations)
    try:
        spec.body(factory, job_id, context)
    except JobStopped as stop:
        values: dict[str, Any] = {"status": stop.status, "error": stop.error}
        if stop.status != "queued":
            values["finished_at"] = datetime.now(UTC)
        _end(factory, model, job_id, **values)
        return stop.status
    except Exception as exc:  # a failed job records why; it never takes the runner down
        log.exception("%s %s failed", kind, job_id)
        _end(factory, model, job_id, status="failed", error=f"{type(exc).__name__}: {exc}",
             finished_at=datetime.now(UTC))
        return "failed"
    return "done"


def request_cancel(row: Any, label: str) -> None:
    """Ask a job to stop: a queued one ends at once, a running one at its next check; a finished one is a 409."""
    from server.errors import Conflict

    if row.status in ("done", "failed", "cancelled"):
        raise Conflict(f"This {label} is already {row.status}")
    row.cancel_requested = True
    if row.status == "queued":
        row.status, row.finished_at = "cancelled", datetime.now(UTC)


class Runner(Protocol):
    def submit(self, kind: str, job_id: int, team_id: int) -> None: ...
    def start(self) -> None: ...
    def stop(self) -> None: ...


def submit(state: Any, kind: str, job_id: int, team_id: int) -> None:
    """Queue a stored job (its row says ``queued``) once its transaction has committed: the one way web code
    starts background work."""
    runner: Runner = state.runner
    runner.submit(kind, job_id, team_id)
