"""Large rankings in shards: the same chunks as one pass, cut into groups that separate workers screen.

A ranking's chunks (:func:`.rank.prepare`) are a function of its inputs and the chunk size alone, so every worker
that prepares the same stored snapshot cuts the same chunks and the same shards (contiguous groups of about equal
candidate counts, :func:`shard_edges`). Each shard reduces its chunks into a :class:`.stream.Partial`;
partials merge in any order into the partial of the union (counts add, the best few and the Pareto set and the
smallest-key rejection examples do not depend on arrival order), and :func:`.rank.finish` turns the merged partial
into exactly the outcome of the unsharded :func:`.rank.rank`. Partials travel between processes as ``.npz`` bytes
(arrays only, never pickles).
"""

from __future__ import annotations

import io
import math
import time
from collections.abc import Callable, Iterable
from dataclasses import fields
from typing import Any

import numpy as np

from .examples import Examples
from .library import MissionSpec, PartsLibrary
from .rank import Prepared, chunk_sizes, finish, prepare
from .result import CandidateSet, RankingOutcome
from .stream import Partial, screen_chunk


def shard_count(prepared: Prepared, combinations_per_shard: int) -> int:
    """Shards for a ranking: one per ``combinations_per_shard`` screened combinations (fewer when its chunks,
    cut as :func:`shard_chunking` cuts them, are fewer)."""
    if combinations_per_shard < 1:
        raise ValueError("combinations_per_shard must be >= 1")
    count = math.ceil(prepared.plan.evaluated / combinations_per_shard)
    return 1 if count <= 1 else max(1, min(count, len(shard_chunking(prepared, count).chunks)))


def shard_chunking(prepared: Prepared, count: int) -> Prepared:
    """The ranking cut into chunks small enough for ``count`` shards: about four chunks per shard, never above the
    mission's default size. A function of the inputs and ``count`` alone, so every worker cuts the same chunks."""
    size = min(prepared.default_chunk, max(1, math.ceil(prepared.plan.evaluated / (4 * count))))
    return prepared.rechunked(size)


def shard_edges(prepared: Prepared, count: int) -> list[int]:
    """Chunk positions where shards start (and the end): ``count`` contiguous groups of about equal candidate
    counts, none empty while there are at least as many chunks as shards."""
    n = len(prepared.chunks)
    cumulative = np.cumsum(chunk_sizes(prepared.chunks, prepared.plan))
    wanted = np.searchsorted(cumulative, cumulative[-1] * np.arange(1, count) / count, side="right") if n else []
    edges = [0]
    for i, edge in enumerate(np.asarray(wanted, dtype=np.int64).tolist()):
        edges.append(min(max(edge, edges[-1] + 1), n - (count - 1 - i)) if n >= count else min(edge, n))
    return edges + [n]


def screen_shard(library: PartsLibrary, mission: MissionSpec, prepared: Prepared, index: int, count: int, *,
                 should_cancel: Callable[[], bool] | None = None,
                 progress: Callable[[float], None] | None = None) -> Partial | None:
    """Screen shard ``index`` of ``count`` into a fresh partial (None when cancelled part-way)."""
    if not 0 <= index < count:
        raise ValueError(f"shard index {index} outside 0..{count - 1}")
    edges = shard_edges(prepared, count)
    mine = prepared.chunks[edges[index]:edges[index + 1]]
    partial = prepared.empty_partial()
    for i, chunk in enumerate(mine):
        if should_cancel is not None and should_cancel():
            return None
        screen_chunk(partial, library, mission, prepared.model, prepared.plan, chunk)
        if progress is not None:
            progress((i + 1) / len(mine))
    return partial


def merge_shards(library: PartsLibrary, mission: MissionSpec, prepared: Prepared, partials: Iterable[Partial], *,
                 timings: dict[str, float] | None = None) -> RankingOutcome:
    """The ranking's outcome from the partials of all its shards, merged in whatever order they come."""
    merged = prepared.empty_partial()
    for partial in partials:
        merged.merge(partial)
    if merged.evaluated != prepared.plan.evaluated:
        raise ValueError(f"the shards cover {merged.evaluated} of {prepared.plan.evaluated} combinations to screen")
    return finish(library, mission, prepared, merged, timings=timings or {})


def rank_in_shards(library: PartsLibrary, mission: MissionSpec, *, objective: str, top_n: int, count: int,
                   chunk_size: int | None = None, order: Iterable[int] | None = None) -> RankingOutcome:
    """Screen every shard here, one after another, and merge them in ``order`` (a test and benchmark helper)."""
    t0 = time.perf_counter()
    prepared = prepare(library, mission, objective=objective, top_n=top_n, chunk_size=chunk_size)
    partials = [screen_shard(library, mission, prepared, i, count) for i in range(count)]
    t1 = time.perf_counter()
    chosen = [partials[i] for i in (order if order is not None else range(count))]
    return merge_shards(library, mission, prepared, [p for p in chosen if p is not None],
                        timings={"screen_s": t1 - t0})


_CANDIDATE_FIELDS = [f.name for f in fields(CandidateSet)]


def dump_partial(partial: Partial) -> bytes:
    """A partial as ``.npz`` bytes: counts, the pool, the Pareto front and the rejection examples."""
    arrays: dict[str, np.ndarray] = {"counts": partial.counts, "violations": partial.violations,
                                     "evaluated": np.array([partial.evaluated], dtype=np.int64),
                                     "threshold": partial.examples.threshold}
    for name in _CANDIDATE_FIELDS:
        arrays[f"pool.{name}"] = getattr(partial.pool, name)
        arrays[f"front.{name}"] = getattr(partial.front.members, name)
    for code, keys in partial.examples.keys.items():
        arrays[f"examples.{code}"] = keys
    buffer = io.BytesIO()
    np.savez(buffer, allow_pickle=False, **arrays)
    return buffer.getvalue()


def _candidates(stored: Any, prefix: str) -> CandidateSet:
    """A stored candidate set; a metric added after the shard was written (none stored) reads as NaN."""
    n = len(stored[f"{prefix}.pack"])
    return CandidateSet(**{name: stored[f"{prefix}.{name}"] if f"{prefix}.{name}" in stored.files
                           else np.full(n, np.nan) for name in _CANDIDATE_FIELDS})


def load_partial(data: bytes, prepared: Prepared) -> Partial:
    """The partial :func:`dump_partial` wrote, for the ranking ``prepared`` describes."""
    with np.load(io.BytesIO(data), allow_pickle=False) as stored:
        partial = prepared.empty_partial()
        partial.counts = stored["counts"].astype(np.int64)
        partial.violations = stored["violations"].astype(np.int64)
        partial.evaluated = int(stored["evaluated"][0])
        partial.pool = _candidates(stored, "pool")
        partial.front.members = _candidates(stored, "front")
        partial.examples = Examples({int(name.split(".", 1)[1]): stored[name].astype(np.int64)
                                     for name in stored.files if name.startswith("examples.")},
                                    stored["threshold"].astype(np.int64))
    return partial
