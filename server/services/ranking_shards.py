"""Large rankings across workers: the ranking job splits its screening into shard jobs and merges their results.

A ranking that screens more than ``LIFTMATCH_RANKING_SHARD_COMBINATIONS`` combinations stores one
:class:`RankingShard` row per shard and queues each as a ``ranking_shard`` job, which any free worker (thread or
process) runs. The ranking's own job does not sit idle meanwhile: it claims queued shards and screens them itself,
and only waits for shards another worker holds, so a single worker finishes the whole ranking alone. Every shard is
screened from the ranking's stored snapshot and merged with the others in whatever order they finished
(server.selection.shards), which gives exactly the unsharded result. Shards already done when a ranking runs again
(after an interruption) are kept.
"""

from __future__ import annotations

import time
from datetime import UTC, datetime
from typing import Any

from sqlalchemy import delete, select, update
from sqlalchemy.orm import Session, sessionmaker

from server.jobs import Cancelled, Interrupted, JobContext, JobStopped, execute
from server.models import Ranking, RankingShard
from server.selection import MissionSpec, PartsLibrary, RankingOutcome
from server.selection.rank import Prepared, prepare
from server.selection.shards import (
    dump_partial,
    load_partial,
    merge_shards,
    screen_shard,
    shard_chunking,
    shard_count,
)
from server.services.ranking_inputs import engine_inputs

WAIT_S = 0.25
"""How often a ranking looks at shards other workers run [s]."""


def _prepared(inputs: dict[str, Any]) -> tuple[PartsLibrary, MissionSpec, Prepared]:
    library, mission = engine_inputs(inputs)
    objective, top_n = str(inputs["objective"]), int(inputs["top_n"])
    return library, mission, prepare(library, mission, objective=objective, top_n=top_n)


def shards_for(inputs: dict[str, Any], combinations_per_shard: int) -> tuple[PartsLibrary, MissionSpec,
                                                                                  Prepared, int]:
    """The engine inputs of a ranking and how many shards it takes (1: run it whole)."""
    library, mission, prepared = _prepared(inputs)
    count = shard_count(prepared, combinations_per_shard) if combinations_per_shard > 0 else 1
    return library, mission, prepared, count


def _store_shards(factory: sessionmaker[Session], ranking: Ranking, count: int) -> list[int]:
    """Create the ranking's shard rows (keeping those a previous run finished); returns the ids still to run."""
    with factory() as s, s.begin():
        existing = list(s.scalars(select(RankingShard).where(RankingShard.ranking_id == ranking.id)))
        if any(shard.shard_count != count for shard in existing):
            s.execute(delete(RankingShard).where(RankingShard.ranking_id == ranking.id))
            existing = []
        have = {shard.shard_index for shard in existing}
        s.add_all(RankingShard(team_id=ranking.team_id, ranking_id=ranking.id, shard_index=i, shard_count=count)
                  for i in range(count) if i not in have)
        s.execute(update(RankingShard).where(RankingShard.ranking_id == ranking.id,
                                             RankingShard.status.in_(("failed", "cancelled")))
                  .values(status="queued", error="", cancel_requested=False, attempts=0, partial=None))
        s.flush()
        return list(s.scalars(select(RankingShard.id).where(RankingShard.ranking_id == ranking.id,
                                                            RankingShard.status == "queued")
                              .order_by(RankingShard.shard_index)))


def _stop_shards(factory: sessionmaker[Session], ranking_id: int) -> None:
    """The ranking stopped: queued shards end now, running ones at their next check."""
    with factory() as s, s.begin():
        s.execute(update(RankingShard).where(RankingShard.ranking_id == ranking_id,
                                             RankingShard.status == "queued")
                  .values(status="cancelled", cancel_requested=True, finished_at=datetime.now(UTC)))
        s.execute(update(RankingShard).where(RankingShard.ranking_id == ranking_id,
                                             RankingShard.status == "running").values(cancel_requested=True))


def rank_sharded(factory: sessionmaker[Session], ranking: Ranking, library: PartsLibrary, mission: MissionSpec,
                 prepared: Prepared, count: int, context: JobContext) -> RankingOutcome:
    """Run a ranking as ``count`` shards (queued for every worker, helped by this one) and merge them."""
    started = time.perf_counter()
    pending = _store_shards(factory, ranking, count)
    if context.submit is not None:
        for shard_id in pending:
            context.submit("ranking_shard", shard_id, ranking.team_id)
    try:
        while True:
            context.check()
            for shard_id in pending:  # any shard nobody has started yet, this job screens itself
                execute(factory, "ranking_shard", shard_id, time_limit_s=context.time_limit_s,
                        stopping=context.stopping)
                context.check()
            with factory() as s:
                states = list(s.execute(select(RankingShard.id, RankingShard.shard_index, RankingShard.status,
                                               RankingShard.error).where(RankingShard.ranking_id == ranking.id)))
            broken = [(i, status, error) for _, i, status, error in states if status in ("failed", "cancelled")]
            if broken:
                with factory() as s:
                    if s.scalar(select(Ranking.cancel_requested).where(Ranking.id == ranking.id)):
                        raise Cancelled("cancelled on request")
                index, status, error = min(broken)
                raise JobStopped(f"shard {index + 1} of {count} {status}: {error}")
            pending = [shard_id for shard_id, _, status, _ in states if status == "queued"]
            done = sum(status == "done" for _, _, status, _ in states)
            context.progress(0.9 * done / count)
            if done == count:
                break
            if not pending:
                time.sleep(WAIT_S)
    except JobStopped as stop:
        if not isinstance(stop, Interrupted):  # an interrupted ranking resumes with the shards it has
            _stop_shards(factory, ranking.id)
        raise
    with factory() as s:
        blobs = list(s.scalars(select(RankingShard.partial).where(RankingShard.ranking_id == ranking.id)))
    screened = time.perf_counter()
    outcome = merge_shards(library, mission, prepared, (load_partial(b, prepared) for b in blobs if b is not None),
                           timings={"screen_s": screened - started})
    outcome.timings["shards"] = float(count)
    return outcome


def run_shard_job(factory: sessionmaker[Session], shard_id: int, context: JobContext) -> None:
    """The ``ranking_shard`` job body: screen one shard from the ranking's snapshot and store its partial."""
    with factory() as s:
        shard = s.get(RankingShard, shard_id)
        assert shard is not None
        ranking = s.get(Ranking, shard.ranking_id)
        assert ranking is not None
        index, count, inputs, parent_status = shard.shard_index, shard.shard_count, ranking.inputs, ranking.status
    if parent_status not in ("queued", "running"):
        raise JobStopped(f"the ranking is {parent_status}")
    library, mission, whole = _prepared(inputs)
    prepared = shard_chunking(whole, count)
    partial = screen_shard(library, mission, prepared, index, count, should_cancel=context.should_stop,
                           progress=context.progress)
    if partial is None:
        context.check()
        raise JobStopped("stopped")  # should_stop() said so; check() raised its reason above
    with factory() as s, s.begin():
        s.execute(update(RankingShard).where(RankingShard.id == shard_id, RankingShard.status == "running").values(
            partial=dump_partial(partial), status="done", progress=1.0, finished_at=datetime.now(UTC)))
