"""Which runner a process uses: in-process threads on the embedded SQLite database, the PostgreSQL-backed queue
(``liftmatch worker`` processes run the jobs) on PostgreSQL."""

from __future__ import annotations

from sqlalchemy.orm import Session, sessionmaker

from server.config import Settings
from server.jobs import Runner
from server.jobs.inprocess import InProcessRunner


def runner_for(settings: Settings, factory: sessionmaker[Session]) -> Runner:
    if not settings.is_sqlite:
        from server.jobs.pgqueue import QueueRunner

        return QueueRunner(settings, factory)
    return InProcessRunner(factory, concurrency=settings.job_concurrency, team_limit=settings.job_team_limit,
                           time_limit_s=settings.job_time_limit_s,
                           shard_combinations=settings.ranking_shard_combinations)
