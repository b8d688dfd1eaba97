"""``liftmatch worker``: run queued jobs (rankings, fleet plans, refits) from the PostgreSQL queue."""

from __future__ import annotations

import argparse
import os
import socket
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings


def cmd_worker(args: argparse.Namespace, settings: Settings) -> int:
    if settings.is_sqlite:
        raise CliError("liftmatch worker needs PostgreSQL (LIFTMATCH_DATABASE_URL=postgresql+psycopg://…); on the "
                       "embedded SQLite database the web process runs the jobs itself")
    from server.jobs.pgqueue import run_worker

    concurrency = args.concurrency or settings.job_concurrency
    name = args.name or f"{socket.gethostname()}-{os.getpid()}"
    print(f"liftmatch worker {name}: running jobs {concurrency} at a time (Ctrl+C or SIGTERM stops it; a job "
          "interrupted goes back to the queue)", file=sys.stderr)
    run_worker(settings, session_factory(settings), concurrency=concurrency, name=name)
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("worker", cmd_worker, "run queued jobs from the PostgreSQL queue (on any machine reaching the database)")
    p.add_argument("--concurrency", type=int, default=None,
                   help="jobs at once (default LIFTMATCH_JOB_CONCURRENCY); each uses about one core")
    p.add_argument("--name", default=None, help="worker name in logs (default host-pid)")
