"""Jobs in threads of the web process (the embedded SQLite default): fair between teams, prompt to stop.

Scheduling: a team runs at most ``team_limit`` jobs at once, and among the teams with work waiting the one served
longest ago goes first (round-robin), so one team's burst cannot starve another. Threads are daemons: on shutdown
they are told to stop, a running job sees it at its next check and goes back to the queue (it runs again at the
next start, from its snapshot), and the process does not wait for a long computation.
"""

from __future__ import annotations

import itertools
import logging
import threading
from collections import Counter, deque
from dataclasses import dataclass

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

from server.jobs import execute, kinds
from server.selection import fused_screen

log = logging.getLogger("liftmatch.jobs")


@dataclass(frozen=True)
class _Queued:
    kind: str
    job_id: int
    team_id: int


class InProcessRunner:
    def __init__(self, factory: sessionmaker[Session], *, concurrency: int, team_limit: int,
                 time_limit_s: float, shard_combinations: int = 0) -> None:
        self.factory = factory
        self.concurrency = max(1, concurrency)
        self.team_limit = max(1, team_limit)
        self.time_limit_s = time_limit_s
        self.shard_combinations = shard_combinations
        self._queues: dict[int, deque[_Queued]] = {}
        self._running: Counter[int] = Counter()
        self._served: dict[int, int] = {}
        self._turn = itertools.count()
        self._cond = threading.Condition()
        self._stopping = threading.Event()
        self._threads: list[threading.Thread] = []

    def submit(self, kind: str, job_id: int, team_id: int) -> None:
        with self._cond:
            self._queues.setdefault(team_id, deque()).append(_Queued(kind, job_id, team_id))
            self._cond.notify()

    def _next(self) -> _Queued | None:
        """The oldest job of the eligible team served longest ago (called with the lock held)."""
        eligible = [t for t, q in self._queues.items() if q and self._running[t] < self.team_limit]
        if not eligible:
            return None
        team = min(eligible, key=lambda t: (self._served.get(t, -1), self._queues[t][0].job_id))
        self._served[team] = next(self._turn)
        self._running[team] += 1
        return self._queues[team].popleft()

    def _work(self) -> None:
        while True:
            with self._cond:
                job = self._next()
                while job is None and not self._stopping.is_set():
                    self._cond.wait()
                    job = self._next()
                if job is None:
                    return
            try:
                execute(self.factory, job.kind, job.job_id, time_limit_s=self.time_limit_s, stopping=self._stopping,
                        submit=self.submit, shard_combinations=self.shard_combinations)
            except Exception:  # execute records failures itself; this is the database being unreachable
                log.exception("could not run %s %s", job.kind, job.job_id)
            finally:
                with self._cond:
                    self._running[job.team_id] -= 1
                    self._cond.notify_all()

    def recover(self) -> None:
        """At start-up (one process owns an embedded database): jobs a stopped process left running go back to the
        queue (a job interrupted too often fails with the reason), and every queued job is submitted again."""
        for spec in kinds().values():
            model = spec.model
            with self.factory() as s, s.begin():
                s.execute(update(model).where(model.status == "running").values(status="queued"))
                rows = list(s.execute(select(model.id, model.team_id).where(model.status == "queued")
                                      .order_by(model.id)))
            for job_id, team_id in rows:
                self.submit(spec.name, job_id, team_id)

    def start(self) -> None:
        self.recover()
        # The ranking's compiled loops are loaded (or compiled) now, before any request, not in the first ranking:
        # numba's compiler changes the process-wide warning filters while it works, which must not happen beside a
        # request thread (catch_warnings is not thread-safe). From its disk cache this takes about 0.3 s.
        fused_screen.warm_up()
        for i in range(self.concurrency):
            thread = threading.Thread(target=self._work, name=f"job-{i}", daemon=True)
            thread.start()
            self._threads.append(thread)

    def stop(self, wait_s: float = 5.0) -> None:
        """Ask running jobs to stop (they are requeued) and wait a little for them; never for a long computation."""
        self._stopping.set()
        with self._cond:
            self._cond.notify_all()
        for thread in self._threads:
            thread.join(timeout=wait_s / max(len(self._threads), 1))
