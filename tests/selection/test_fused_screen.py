"""The compiled screen (server/selection/fused_screen.py) against the numpy screen it fuses, and the ranking through it.

The numpy screen (:func:`server.selection.constraints.screen`) is the definition, itself checked against the
one-candidate-at-a-time physics engine (test_rank_vs_brute_force.py, test_fast_paths.py); here every chunk of several
random libraries is screened both ways: the same reason counts, violation counts, feasible candidates and rejection
examples, and metrics equal to 1e-12.
"""

from __future__ import annotations

import importlib
from dataclasses import replace

import numpy as np
import pytest

from server.physics import drive_screen
from server.selection import fused_screen, rank
from server.selection.constraints import REASONS, screen
from server.selection.enumerate import batch_for, chunk_indices, chunks, plan
from server.selection.examples import ExampleKeys, Examples, chunk_keys
from server.selection.library import MissionSpec, PartsLibrary, Segment
from server.selection.pareto import ParetoFront, nondominated, objective_matrix
from server.selection.result import CandidateSet

from . import parts
from .test_fast_paths import random_library, random_mission

stream_module = importlib.import_module("server.selection.stream")
METRICS = ("electrical_power_w", "endurance_min", "specific_thrust_g_per_w", "thrust_to_weight", "mass_kg")


def _cases() -> list[tuple[PartsLibrary, MissionSpec]]:
    out = [(random_library(s, n_packs=6, n_escs=5, n_motors=8, n_props=9), random_mission(s)) for s in range(5)]
    library = random_library(7, n_packs=6, n_escs=5, n_motors=8, n_props=9)
    out += [
        # An all-up-mass limit and a motor-out floor on a hexa: the two optional checks.
        (library, replace(random_mission(7), rotor_count=6, max_all_up_mass_kg=4.5, min_thrust_to_weight=1.3,
                          min_thrust_to_weight_motor_out=1.0)),
        # A heavy craft with the duty band open to 1: many cruise points at or just below full throttle (the
        # loss-step band answered by the full-throttle point), some out of reach.
        (library, replace(random_mission(7), payload_kg=3.0, duty_max=1.0, min_thrust_to_weight=1.0)),
        (parts.mixed_library(), parts.hover_mission()),
        (parts.library(), parts.hover_mission(rotor_count=6, min_thrust_to_weight_motor_out=1.4)),
    ]
    # The multirotor flight states (docs/model-reference.md#multirotor-flight-state): forward flight, a climb, a
    # coaxial X8 descending while it moves forward (the descent rule), a coaxial hover.
    for seed, changes in ((1, {"kind": "forward_flight", "cruise_airspeed_m_s": 12.0, "drag_area_m2": 0.03}),
                          (2, {"climb_rate_m_s": 2.0, "drag_area_m2": 0.03}),
                          (3, {"rotor_count": 8, "coaxial": True, "climb_rate_m_s": -1.5, "kind": "forward_flight",
                               "cruise_airspeed_m_s": 3.0, "drag_area_m2": 0.03}),
                          (4, {"rotor_count": 8, "coaxial": True})):
        out.append((random_library(seed, n_packs=6, n_escs=5, n_motors=8, n_props=9),
                    replace(random_mission(seed), **changes)))  # type: ignore[arg-type]
    out.append((parts.mixed_library(), parts.hover_mission(kind="forward_flight", cruise_airspeed_m_s=12.0,
                                                           drag_area_m2=0.03)))
    return out


CASES = _cases()


@pytest.mark.parametrize("case", range(len(CASES)))
def test_every_chunk_equals_the_numpy_screen(case: int, monkeypatch: pytest.MonkeyPatch) -> None:
    library, mission = CASES[case]
    band: list[int] = []  # candidates the numpy screen answers with the full-throttle point (loss-step band)
    saturate = drive_screen._saturate

    def counted(cruise: object, jump: np.ndarray, *args: object) -> object:
        band.append(int(np.count_nonzero(jump)))
        return saturate(cruise, jump, *args)  # type: ignore[arg-type]

    monkeypatch.setattr(drive_screen, "_saturate", counted)
    model = mission.propeller_model(library.propellers)
    assert fused_screen.supports(mission, model)
    the_plan = plan(library, mission, model)
    keys = ExampleKeys.of(library, mission)
    numpy_examples, fused_examples = Examples(), Examples()
    total = np.zeros(len(REASONS) + 1, dtype=np.int64)
    saw_full_duty = False
    for chunk in chunks(the_plan, 97):  # small chunks: partial configuration and ESC ranges
        block = the_plan.blocks[chunk.block]
        expected = screen(batch_for(library, mission, *chunk_indices(block, chunk)), model, mission)
        got = fused_screen.screen_chunk(library, mission, model, block, chunk, keys)
        codes = expected.code.ravel()
        assert got.size == codes.size
        assert np.array_equal(got.counts, np.bincount(codes, minlength=len(REASONS) + 1))
        assert np.array_equal(got.violations, expected.violations)
        feasible = np.flatnonzero(codes == 0)
        assert np.array_equal(got.feasible, feasible)
        for name in METRICS:
            want = np.broadcast_to(getattr(expected, name), expected.code.shape).ravel()[feasible]
            np.testing.assert_allclose(getattr(got, name), want, rtol=1e-12, atol=0.0)
        numpy_examples.add(expected.code, chunk_keys(keys, block, chunk))
        fused_examples.add(got.example_codes, got.example_keys)
        total += got.counts
        saw_full_duty |= bool(np.any(np.broadcast_to(expected.cruise.duty, expected.code.shape) == 1.0))
    assert {c: k.tolist() for c, k in fused_examples.keys.items()} == \
        {c: k.tolist() for c, k in numpy_examples.keys.items()}
    assert total[0] > 0 and np.count_nonzero(total[1:]) >= 3  # feasible candidates and several reasons
    if mission.duty_max == 1.0:
        assert saw_full_duty and sum(band) > 0  # the case reaches the full-throttle band and the loss-step band
    for name, limit in (("over_mass", mission.max_all_up_mass_kg),
                        ("motor_out_thrust_short", mission.min_thrust_to_weight_motor_out)):
        if limit is not None:
            assert total[REASONS.index(name) + 1] > 0  # the optional limits bite


@pytest.mark.parametrize("case", [0, 5, 6, 7, 9, 11, 13])
@pytest.mark.parametrize("objective", ["cruise_power", "endurance", "cost"])
def test_the_ranking_is_the_same_through_either_screen(case: int, objective: str,
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    library, mission = CASES[case]
    fused = rank(library, mission, objective=objective, top_n=20)
    calls: list[int] = []
    original = fused_screen.screen_chunk

    def counted(*args: object, **kwargs: object) -> object:
        calls.append(1)
        return original(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(fused_screen, "screen_chunk", counted)
    rank(library, mission, objective=objective, top_n=1)
    assert calls, "a plain hover mission goes through the compiled screen"
    monkeypatch.setattr(fused_screen, "supports", lambda *_: False)
    plain = rank(library, mission, objective=objective, top_n=20)
    assert fused.rejected == plain.rejected and fused.violations == plain.violations
    assert fused.feasible == plain.feasible and fused.rejected_examples == plain.rejected_examples
    for got, want in ((fused.top, plain.top), (fused.pareto, plain.pareto)):
        assert [(r.battery_id, r.packs_in_parallel, r.esc_id, r.motor_id, r.propeller_id) for r in got] == \
               [(r.battery_id, r.packs_in_parallel, r.esc_id, r.motor_id, r.propeller_id) for r in want]
        for a, b in zip(got, want, strict=True):
            assert a.cruise["electrical_power_w"] == pytest.approx(b.cruise["electrical_power_w"], rel=1e-12)
            assert a.endurance_min == pytest.approx(b.endurance_min, rel=1e-12)


def test_chunk_size_and_processes_do_not_change_the_compiled_ranking() -> None:
    library, mission = CASES[0]
    one = rank(library, mission, top_n=30)
    for other in (rank(library, mission, top_n=30, chunk_size=50), rank(library, mission, top_n=30, processes=2,
                                                                          chunk_size=200)):
        assert other.rejected == one.rejected and other.violations == one.violations
        assert other.rejected_examples == one.rejected_examples
        assert other.top == one.top and other.pareto == one.pareto


@pytest.mark.parametrize("changes", [
    {"kind": "cruise", "cruise_airspeed_m_s": 15.0, "lift_to_drag": 8.0},
    {"temperature_effects": True},
    {"cold_day_temperature_c": -10.0},
    {"segments": (Segment("hover", 600.0),), "reserve_min": 2.0},
])
def test_missions_the_loop_does_not_cover_take_the_numpy_screen(changes: dict[str, object]) -> None:
    library = parts.library()
    mission = replace(parts.hover_mission(), **changes)  # type: ignore[arg-type]
    assert not fused_screen.supports(mission, mission.propeller_model(library.propellers))
    for covered in (parts.hover_mission(), parts.hover_mission(kind="forward_flight", cruise_airspeed_m_s=12.0),
                    parts.hover_mission(climb_rate_m_s=-1.0, coaxial=True, rotor_count=8)):
        assert fused_screen.supports(covered, covered.propeller_model(library.propellers))


def test_the_pareto_front_is_the_brute_force_non_dominated_set() -> None:
    rng = np.random.default_rng(5)
    n = 3000
    # Coarse values, so that ties and duplicates occur; some costs unknown (worst).
    cs = CandidateSet(pack=np.arange(n), k=np.ones(n, dtype=np.int64), esc=np.zeros(n, dtype=np.int64),
                      motor=np.zeros(n, dtype=np.int64), prop=np.zeros(n, dtype=np.int64),
                      electrical_power_w=rng.uniform(100, 300, n), endurance_min=rng.integers(5, 40, n) * 0.5,
                      specific_thrust_g_per_w=rng.uniform(5, 10, n), thrust_to_weight=rng.integers(15, 40, n) * 0.1,
                      mass_kg=rng.integers(10, 40, n) * 0.1,
                      cost=np.where(rng.random(n) < 0.1, np.nan, rng.integers(50, 300, n).astype(float)))
    x = objective_matrix(cs)
    dominated = np.array([bool(np.any(np.all(x <= x[i], axis=1) & np.any(x < x[i], axis=1))) for i in range(n)])
    expected = np.flatnonzero(~dominated)
    assert np.array_equal(nondominated(x), expected)
    front = ParetoFront()
    for part in np.array_split(rng.permutation(n), 7):  # streamed in pieces, in a shuffled order
        front.add(cs.take(np.sort(part)))
    assert sorted(front.members.pack.tolist()) == expected.tolist()
    assert 5 < expected.size < n // 10
