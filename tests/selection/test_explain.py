"""Why this verdict (server.selection.explain) against the ranking engine: the same first reason for every
combination, the same counts, the same numbers, and every reason's examples explained as that reason."""

from __future__ import annotations

import itertools
from collections import Counter
from dataclasses import replace

import numpy as np
import pytest

from server.selection import REASONS, rank
from server.selection.constraints import PRUNE_REASONS
from server.selection.explain import explain
from server.selection.library import MissionSpec, PartsLibrary

from . import parts
from .test_constraints import BASE_MISSION, CASES, base_parts
from .test_fast_paths import SMALL

LIBRARIES = [(parts.library(), parts.hover_mission()),
             (parts.library(), parts.cruise_mission(duty_max=0.99, min_thrust_to_weight=0.25)), *SMALL]


def _positions(library: PartsLibrary, row: object) -> dict[str, int]:
    def at(ids: np.ndarray, value: object) -> int:
        return int(np.flatnonzero(ids == value)[0])

    return {"pack": at(library.packs.ids, row.battery_id), "packs_in_parallel": row.packs_in_parallel,  # type: ignore[attr-defined]
            "esc": at(library.escs.ids, row.esc_id), "motor": at(library.motors.ids, row.motor_id),  # type: ignore[attr-defined]
            "prop": at(library.propellers.ids, row.propeller_id)}  # type: ignore[attr-defined]


@pytest.mark.parametrize("case", range(len(LIBRARIES)))
def test_every_combination_gets_the_rankings_first_reason_and_counts_add_up(case: int) -> None:
    library, mission = LIBRARIES[case]
    # top_n large enough that the ranking refines every candidate that passes screening, as explain does
    out = rank(library, mission, top_n=2000)
    counts: Counter[str] = Counter()
    sizes = (len(library.packs), mission.max_packs_in_parallel, len(library.escs), len(library.motors),
             len(library.propellers))
    for p, k, e, m, q in itertools.product(*(range(n) for n in sizes[:1]), range(1, sizes[1] + 1),
                                           *(range(n) for n in sizes[2:])):
        verdict = explain(library, mission, pack=p, packs_in_parallel=k, esc=e, motor=m, prop=q)
        counts[verdict.first_failed or "feasible"] += 1
        assert [c.reason for c in verdict.checks] == list(REASONS)
    assert counts.pop("feasible", 0) == out.feasible
    assert dict(counts) == {k: v for k, v in out.rejected.items() if v}


@pytest.mark.parametrize("case", range(len(LIBRARIES)))
def test_top_rows_are_feasible_with_the_rankings_numbers(case: int) -> None:
    library, mission = LIBRARIES[case]
    out = rank(library, mission, top_n=5)
    assert out.top
    for row in out.top:
        verdict = explain(library, mission, **_positions(library, row))
        assert verdict.feasible and verdict.first_failed is None and verdict.row is not None
        assert all(c.passed for c in verdict.checks)
        for key in ("electrical_power_w", "duty", "bus_current_a"):
            assert verdict.row.cruise[key] == pytest.approx(row.cruise[key], rel=1e-9)
        assert verdict.row.full_throttle["thrust_to_weight"] == pytest.approx(row.full_throttle["thrust_to_weight"],
                                                                             rel=1e-9)
        assert verdict.row.endurance_min == pytest.approx(row.endurance_min, rel=1e-9)
        tw = next(c for c in verdict.checks if c.reason == "below_thrust_to_weight")
        assert tw.value == pytest.approx(row.full_throttle["thrust_to_weight"], rel=1e-12)
        assert tw.limit == mission.min_thrust_to_weight and tw.margin == pytest.approx(tw.value - tw.limit)


@pytest.mark.parametrize("reason", list(CASES))
def test_each_hand_built_rejection_is_explained_as_its_reason(reason: str) -> None:
    part_changes, mission_changes = CASES[reason]
    library, mission = base_parts(**part_changes), replace(BASE_MISSION, **mission_changes)
    verdict = explain(library, mission, pack=0, packs_in_parallel=1, esc=0, motor=0, prop=0)
    assert verdict.first_failed == reason and not verdict.feasible
    failed = next(c for c in verdict.checks if c.reason == reason)
    assert failed.passed is False and failed.text
    if failed.margin is not None:
        assert failed.margin < 0 or reason == "cruise_unreachable"
    assert all(c.passed for c in verdict.checks[:REASONS.index(reason)])


def test_rejected_examples_are_explained_as_their_reason() -> None:
    seen: set[str] = set()
    for library, mission in [*LIBRARIES, *((base_parts(**p), replace(BASE_MISSION, **m)) for p, m in CASES.values())]:
        out = rank(library, mission, top_n=2000)
        for reason, examples in out.rejected_examples.items():
            assert 0 < len(examples) <= min(5, out.rejected[reason])
            for ex in examples:
                pos = _positions(library, type("Row", (), {"battery_id": ex["battery_id"], "esc_id": ex["esc_id"],
                                                             "motor_id": ex["motor_id"],
                                                             "propeller_id": ex["propeller_id"],
                                                             "packs_in_parallel": ex["packs_in_parallel"]})())
                assert explain(library, mission, **pos).first_failed == reason
            seen.add(reason)
        assert set(out.rejected_examples) == {r for r, n in out.rejected.items() if n}
    assert seen == set(REASONS)  # every reason hit at least once


def test_examples_do_not_depend_on_chunking_or_processes() -> None:
    library, mission = SMALL[0]
    one = rank(library, mission, top_n=3, chunk_size=7).rejected_examples
    assert one == rank(library, mission, top_n=3, chunk_size=100_000).rejected_examples
    assert one == rank(library, mission, top_n=3, chunk_size=13, processes=2).rejected_examples


def test_missing_data_leaves_operating_point_checks_unevaluated() -> None:
    mission: MissionSpec = BASE_MISSION
    verdict = explain(base_parts(motor={"resistance_ohm": [float("nan")]}), mission, pack=0, packs_in_parallel=1,
                      esc=0, motor=0, prop=0)
    assert verdict.first_failed == "missing_data" and "motor" in verdict.checks[0].detail
    assert all(c.passed is None for c in verdict.checks[len(PRUNE_REASONS):]) and verdict.row is None
