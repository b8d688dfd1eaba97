"""Which runner a process uses: in-process threads on the embedded SQLite database."""

from __future__ import annotations

from sqlalchemy.orm import Session, sessionmaker

from server.config import Settings
from server.jobs import Runner
from server.jobs.inprocess import InProcessRunner


def runner_for(settings: Settings, factory: sessionmaker[Session]) -> Runner:
    return InProcessRunner(factory, concurrency=settings.job_concurrency, team_limit=settings.job_team_limit,
                           time_limit_s=settings.job_time_limit_s,
                           shard_combinations=settings.ranking_shard_combinations)
