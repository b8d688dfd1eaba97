"""Benchmark: a large ranking split into shards, screened by separate worker processes, merged.

The generated library of ``benchmarks/ranking.py`` is ranked once whole (:func:`server.selection.rank`, one
process), then split as a ranking job splits it (``LIFTMATCH_RANKING_SHARD_COMBINATIONS``,
:func:`server.selection.shards.shard_count` and :func:`~server.selection.shards.shard_chunking`) and its shards are
screened by 1 and then by ``--workers`` worker processes that take shards from a shared queue, each sending its
partial back as ``.npz`` bytes (as shard jobs store them), merged here in the order they finished. The merged
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

_STATE: dict[str, Any] = {}


def _setup(combinations: int, count: int, top: int) -> None:
    library = make_library(combinations)
    _STATE.update(library=library, prepared=shard_chunking(prepare(library, MISSION, objective="cruise_power",
                                                                     top_n=top), count), count=count)


def _screen(index: int) -> bytes:
    partial = screen_shard(_STATE["library"], MISSION, _STATE["prepared"], index, _STATE["count"])
    assert partial is not None
    return dump_partial(partial)


def _sharded(combinations: int, count: int, top: int, workers: int) -> tuple[float, dict[str, Any]]:
    t0 = time.perf_counter()
    with ProcessPoolExecutor(max_workers=workers, initializer=_setup, initargs=(combinations, count, top)) as pool:
        blobs = [f.result() for f in as_completed([pool.submit(_screen, i) for i in range(count)])]
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
