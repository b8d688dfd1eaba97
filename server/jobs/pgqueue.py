"""Jobs on PostgreSQL: web processes only enqueue; ``liftmatch worker`` processes run them, on any machine.

The queue is procrastinate (a PostgreSQL-backed task queue library; no broker besides the database). Why it: jobs are
fetched with ``FOR UPDATE SKIP LOCKED`` (each delivered to one worker), a job can be enqueued on a connection we hold,
workers send heartbeats and a stalled worker's jobs are found from them, sync job bodies run in worker threads with
a concurrency setting, and it is maintained and released regularly with a documented schema and migrations. See
docs/deployment.md.

Fairness comes from two of its own mechanisms: a job's *lock* (jobs sharing a lock never run at once) is one of
``LIFTMATCH_JOB_TEAM_LIMIT`` slots of its team, taken in turn by consecutive job rows, so a team runs at most
that many jobs together; and its *priority* is minus the number of unfinished jobs its team already had, so queued
jobs interleave between teams (round-robin) instead of one team's burst going first. (A team may run fewer than its
limit when the jobs still queued happen to share a slot: the limit is a ceiling, not a promise.)

Exactly once: our own conditional claim (:func:`server.jobs.execute`) still decides who runs a row, so a queue entry
delivered twice (a retry after a worker died) runs the job at most once more, and a job a dead worker left
``running`` is taken over by the retry (``reclaim_running``) or fails after :data:`server.jobs.MAX_ATTEMPTS`.
"""

from __future__ import annotations

import asyncio
import logging
import threading
from datetime import UTC, datetime, timedelta
from typing import Any

from procrastinate import App, PsycopgConnector, RetryStrategy, SyncPsycopgConnector
from procrastinate.exceptions import AlreadyEnqueued
from sqlalchemy import func, select, union_all
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

from server.config import Settings
from server.jobs import MAX_ATTEMPTS, execute, kinds

log = logging.getLogger("liftmatch.jobs")
QUEUE = "liftmatch"
TASK = "liftmatch.run_job"
PERIODIC = "* * * * * */5"  # every 5 s (croniter's sixth field is seconds)
ORPHAN_AFTER_S = 30.0
"""A row ``queued`` this long without a queue entry (the web process died between commit and enqueue) is enqueued."""


class Requeue(Exception):
    """The worker stopped mid-job: the queue runs it again (from its snapshot)."""


def conninfo(database_url: str) -> str:
    """libpq connection string from our SQLAlchemy URL (``postgresql+psycopg://`` → ``postgresql://``)."""
    return make_url(database_url).set(drivername="postgresql").render_as_string(hide_password=False)


class _Worker:
    """What the task needs inside a worker process."""

    factory: sessionmaker[Session] | None = None
    settings: Settings | None = None
    runner: QueueRunner | None = None


class _AbortFlag(threading.Event):
    """``JobContext.stopping`` for a queue job: set when the worker shuts down (procrastinate aborts the job)."""

    def __init__(self, context: Any) -> None:
        super().__init__()
        self._context = context

    def is_set(self) -> bool:
        return bool(self._context.should_abort())


def make_app(database_url: str, *, sync: bool) -> App:
    """The procrastinate app: a sync connector for web processes (they only enqueue), async for workers."""
    connector: Any = (SyncPsycopgConnector if sync else PsycopgConnector)(conninfo=conninfo(database_url))
    app = App(connector=connector)

    @app.task(name=TASK, queue=QUEUE, pass_context=True,
              retry=RetryStrategy(max_attempts=MAX_ATTEMPTS + 1, retry_exceptions={Requeue}))
    def run_job(context: Any, kind: str, job_id: int) -> None:
        factory, settings, runner = _Worker.factory, _Worker.settings, _Worker.runner
        assert factory is not None and settings is not None and runner is not None
        ended = execute(factory, kind, job_id, time_limit_s=settings.job_time_limit_s, stopping=_AbortFlag(context),
                        reclaim_running=context.job.attempts > 0, submit=runner.submit,
                        shard_combinations=settings.ranking_shard_combinations)
        if ended == "queued":
            raise Requeue(f"{kind} {job_id} interrupted")

    @app.periodic(cron=PERIODIC, periodic_id="housekeeping")
    @app.task(name="liftmatch.housekeeping", queue=QUEUE, pass_context=True)
    async def housekeeping(context: Any, timestamp: int) -> None:
        """Jobs of workers that stopped sending heartbeats (killed, lost) go back to the queue; rows queued without
        a queue entry get one."""
        stalled_after_s = _Worker.settings.job_stalled_after_s if _Worker.settings is not None else 20.0
        for job in await context.app.job_manager.get_stalled_jobs(seconds_since_heartbeat=stalled_after_s):
            log.warning("retrying %s job %s of a stalled worker", job.task_name, job.id)
            await context.app.job_manager.retry_job(job)
        if _Worker.runner is not None:
            await asyncio.to_thread(_Worker.runner.enqueue_orphans)

    return app


def _unfinished(session: Session, team_id: int) -> int:
    counts = [select(func.count()).select_from(k.model).where(k.model.team_id == team_id,
                                                              k.model.status.in_(("queued", "running")))
              for k in kinds().values()]
    return int(sum(session.execute(union_all(*counts)).scalars()))


class QueueRunner:
    """Enqueue jobs (web processes, and workers queueing a ranking's shards); never run, never recover."""

    def __init__(self, settings: Settings, factory: sessionmaker[Session]) -> None:
        self.settings = settings
        self.factory = factory
        self.app = make_app(settings.database_url, sync=True)

    def enqueue(self, session: Session, kind: str, job_id: int, team_id: int) -> None:
        """Put a job in the queue on ``session``'s connection (it commits with the caller's transaction)."""
        waiting = max(_unfinished(session, team_id) - 1, 0)  # this job's row is already in the session
        slot = job_id % self.settings.job_team_limit  # consecutive rows (a burst, a ranking's shards) take turns
        connection = session.connection().connection.driver_connection
        try:
            self.app.configure_task(TASK, lock=f"team:{team_id}:{slot}", queueing_lock=f"{kind}:{job_id}",
                                    priority=-waiting, connection=connection).defer(kind=kind, job_id=job_id)
        except AlreadyEnqueued:  # already waiting in the queue
            pass

    def submit(self, kind: str, job_id: int, team_id: int) -> None:
        with self.factory() as session, session.begin():
            self.enqueue(session, kind, job_id, team_id)

    def enqueue_orphans(self) -> int:
        """Queue rows left ``queued`` without a queue entry for a while (a web process died after its commit)."""
        before = datetime.now(UTC) - timedelta(seconds=ORPHAN_AFTER_S)
        found = 0
        for spec in kinds().values():
            model = spec.model
            stamp = getattr(model, "created_at", None)
            with self.factory() as s:
                query = select(model.id, model.team_id).where(model.status == "queued")
                rows = list(s.execute(query.where(stamp < before) if stamp is not None else query))
            for job_id, team_id in rows:
                self.submit(spec.name, job_id, team_id)  # AlreadyEnqueued when it is waiting already
                found += 1
        return found

    def start(self) -> None:
        self.app.open()

    def stop(self) -> None:
        self.app.close()


def install(database_url: str) -> None:
    """Create the queue's tables and functions once (``liftmatch migrate`` on PostgreSQL)."""
    from server.db import make_engine

    engine = make_engine(database_url)
    try:
        with engine.connect() as connection:
            found = connection.exec_driver_sql("SELECT to_regclass('procrastinate_jobs')").scalar()
    finally:
        engine.dispose()
    if found is None:
        app = make_app(database_url, sync=True)
        with app.open():
            app.schema_manager.apply_schema()


def run_worker(settings: Settings, factory: sessionmaker[Session], *, concurrency: int, name: str) -> None:
    """A worker process: runs queued jobs ``concurrency`` at a time until SIGINT/SIGTERM."""
    runner = QueueRunner(settings, factory)
    runner.start()
    from server.selection import fused_screen

    fused_screen.warm_up()  # the ranking's compiled loops, before the first job
    _Worker.factory, _Worker.settings, _Worker.runner = factory, settings, runner
    app = make_app(settings.database_url, sync=False)
    try:
        app.run_worker(queues=[QUEUE], concurrency=concurrency, name=name, fetch_job_polling_interval=1.0,
                       abort_job_polling_interval=1.0, shutdown_graceful_timeout=5.0,
                       update_heartbeat_interval=settings.job_stalled_after_s / 4,
                       stalled_worker_timeout=settings.job_stalled_after_s,
                       delete_jobs="successful")
    finally:
        runner.stop()
