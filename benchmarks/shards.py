"""Benchmark: a large ranking split into shards, screened by separate worker processes, merged.

The generated library of ``benchmarks/ranking.py`` is ranked once whole (:func:`server.selection.rank`, one
process), then split as a ranking job splits it (``LIFTMATCH_RANKING_SHARD_COMBINATIONS``,
:func:`server.selection.shards.shard_count` and :func:`~server.selection.shards.shard_chunking`) and its shards are
screened by 1 and then by ``--workers`` worker processes (started before the clock runs) that take shards from a
shared queue; each shard rebuilds its inputs, prepares and screens as a shard job does and sends its partial back as
``.npz`` bytes (as shard jobs store them); they are merged here in the order they finished. The merged
outcome must equal the whole run (rows, counts, rejection examples); the figures leave out the database and the
job queue.

    python benchmarks/shards.py [--combinations N] [--per-shard C] [--workers W]

The last line is ``shards: N combinations, S shards, whole X s, 1 worker Y s, W workers Z s, speed-up R, identical``.
"""

from __future__ import annotations

import argparse
import sys
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.ranking import MISSION, make_library  # noqa: E402
from server.selection import rank  # noqa: E402
from server.selection.rank import prepare  # noqa: E402
from server.selection.shards import (  # noqa: E402
    dump_partial,
    load_partial,
    merge_shards,
    screen_shard,
    shard_chunking,
    shard_count,
)


def _screen(combinations: int, count: int, top: int, index: int) -> bytes:
    """One shard job: build the inputs (as a worker reads the stored snapshot), prepare, screen, serialise."""
    library = make_library(combinations)
    prepared = shard_chunking(prepare(library, MISSION, objective="cruise_power", top_n=top), count)
    partial = screen_shard(library, MISSION, prepared, index, count)
    assert partial is not None
    return dump_partial(partial)


def _ready() -> int:
    return 0


def _sharded(combinations: int, count: int, top: int, workers: int) -> tuple[float, dict[str, Any]]:
    """Shards through ``workers`` started processes (start-up and imports paid before the clock starts)."""
    with ProcessPoolExecutor(max_workers=workers) as pool:
        for future in [pool.submit(_ready) for _ in range(workers)]:
            future.result()
        t0 = time.perf_counter()
        blobs = [f.result() for f in as_completed([pool.submit(_screen, combinations, count, top, i)
                                                   for i in range(count)])]
        library = make_library(combinations)
        prepared = prepare(library, MISSION, objective="cruise_power", top_n=top)
        outcome = merge_shards(library, MISSION, prepared, [load_partial(b, prepared) for b in blobs])
        return time.perf_counter() - t0, _strip(outcome.as_dict())


def _strip(d: dict[str, Any]) -> dict[str, Any]:
    d.pop("timings")
    return d


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--combinations", type=int, default=4_000_000)
    parser.add_argument("--per-shard", type=int, default=500_000)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--top", type=int, default=50)
    args = parser.parse_args()
    library = make_library(args.combinations)
    t0 = time.perf_counter()
    whole = _strip(rank(library, MISSION, objective="cruise_power", top_n=args.top).as_dict())
    whole_s = time.perf_counter() - t0
    count = shard_count(prepare(library, MISSION, objective="cruise_power", top_n=args.top), args.per_shard)
    one_s, one = _sharded(args.combinations, count, args.top, 1)
    many_s, many = _sharded(args.combinations, count, args.top, args.workers)
    same = one == whole and many == whole
    print(f"evaluated {whole['evaluated']} of {whole['combinations']}, feasible {whole['feasible']}")
    print(f"shards: {whole['combinations']} combinations, {count} shards, whole {whole_s:.2f} s, "
          f"1 worker {one_s:.2f} s, "
          f"{args.workers} workers {many_s:.2f} s, speed-up {one_s / many_s:.2f}, "
          f"{'identical' if same else 'DIFFERENT'}")
    if not same:
        raise SystemExit(1)


if __name__ == "__main__":
    main()
