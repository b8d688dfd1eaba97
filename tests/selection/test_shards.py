"""Sharded rankings: shards screened separately and merged in any order give exactly the unsharded outcome."""

from __future__ import annotations

import random

import pytest

from server.selection import rank
from server.selection.rank import prepare
from server.selection.shards import (
    dump_partial,
    load_partial,
    merge_shards,
    screen_shard,
    shard_chunking,
    shard_count,
)

from . import parts
from .test_behaviour import _strip


@pytest.mark.parametrize("kind", ["hover", "cruise"])
def test_shards_merged_in_any_order_equal_the_unsharded_ranking(kind: str) -> None:
    mission = parts.hover_mission() if kind == "hover" else parts.cruise_mission(duty_max=0.99,
                                                                                  min_thrust_to_weight=0.3)
    library = parts.library()
    whole = _strip(rank(library, mission, top_n=8, chunk_size=5))
    prepared = prepare(library, mission, objective="cruise_power", top_n=8, chunk_size=5)
    count = len(prepared.chunks)  # one chunk per shard: the finest split there is
    assert count >= 6
    partials = [screen_shard(library, mission, prepared, i, count) for i in range(count)]
    assert all(p is not None and p.evaluated > 0 for p in partials)
    rng = random.Random(14)
    for _ in range(3):
        order = list(range(count))
        rng.shuffle(order)
        # Each shard travels as bytes, as between workers, and is read back by a fresh preparation.
        fresh = prepare(library, mission, objective="cruise_power", top_n=8, chunk_size=5)
        stored = [load_partial(dump_partial(partials[i]), fresh) for i in order]  # type: ignore[arg-type]
        sharded = _strip(merge_shards(library, mission, fresh, stored))
        assert sharded == whole
    assert whole["rejected_examples"] and whole["top"] and whole["pareto"]  # the comparison covers all of them


def test_a_missing_shard_is_refused_not_merged_short() -> None:
    library, mission = parts.library(), parts.hover_mission()
    prepared = prepare(library, mission, objective="cruise_power", top_n=4, chunk_size=5)
    partials = [screen_shard(library, mission, prepared, i, 3) for i in range(3)]
    with pytest.raises(ValueError, match="cover"):
        merge_shards(library, mission, prepared, [p for p in partials[:2] if p is not None])


def test_shard_count_follows_the_setting_and_small_rankings_are_cut_finer() -> None:
    library, mission = parts.library(), parts.hover_mission()
    prepared = prepare(library, mission, objective="cruise_power", top_n=4)
    evaluated = prepared.plan.evaluated
    assert len(prepared.chunks) < 6  # a small library is a few chunks at the default size ...
    assert shard_count(prepared, evaluated) == 1
    assert shard_count(prepared, -(-evaluated // 6)) == 6
    split = shard_chunking(prepared, 6)
    assert len(split.chunks) >= 6  # ... and is cut finer to be split
    assert shard_count(prepared, 1) <= len(shard_chunking(prepared, evaluated).chunks)
    whole = _strip(rank(library, mission, top_n=4))
    partials = [screen_shard(library, mission, split, i, 6) for i in range(6)]
    assert all(p is not None and p.evaluated for p in partials)
    assert _strip(merge_shards(library, mission, split, [p for p in partials if p is not None])) == whole


@pytest.mark.parametrize("count", [1, 2, 5, 12])
def test_shards_are_contiguous_non_empty_and_cover_every_chunk(count: int) -> None:
    from server.selection.shards import shard_edges

    prepared = prepare(parts.library(), parts.hover_mission(), objective="cruise_power", top_n=4, chunk_size=5)
    edges = shard_edges(prepared, count)
    assert edges[0] == 0 and edges[-1] == len(prepared.chunks) and len(edges) == count + 1
    assert all(a < b for a, b in zip(edges, edges[1:], strict=False))
