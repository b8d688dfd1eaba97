"""The fast paths of the engine (repeated ESC defaults, segment tables, two processes, the vectorised discharge
refinement) against independent references:

- the whole ranking on small random libraries against the one-candidate-at-a-time physics engine (tests/selection/
  brute.py): same order, metrics to 1e-6;
- two processes against one;
- the fast refinement against :func:`server.physics.endurance.constant_thrust` for every stop reason (1e-9).
"""

from __future__ import annotations

import importlib
import math
from dataclasses import replace

import numpy as np
import pytest

from server.physics.propeller import PropellerTable
from server.selection import (
    EscLibrary,
    MissionSpec,
    MotorLibrary,
    PackLibrary,
    PartsLibrary,
    PropellerLibrary,
    rank,
)
from server.selection.constraints import screen
from server.selection.enumerate import batch_for, chunk_indices, chunks, plan
from server.selection.result import CandidateSet

from . import brute, parts

rank_module = importlib.import_module("server.selection.rank")
refine_module = importlib.import_module("server.selection.refine")
rows_module = importlib.import_module("server.selection.rows")
stream_module = importlib.import_module("server.selection.stream")

REL = 1e-9
METRICS = ("mass_kg", "electrical_power_w", "pack_current_a", "specific_thrust_g_per_w", "thrust_to_weight",
           "endurance_min")


def random_library(seed: int, n_packs: int = 7, n_escs: int = 6, n_motors: int = 9, n_props: int = 10) -> PartsLibrary:
    """Invented parts in the typical ranges of docs/model-reference.md; half the ESCs without loss data.

    (The ESCs without loss data repeat the defaults.)
    """
    rng = np.random.default_rng(seed)
    cells = rng.integers(3, 7, n_packs).astype(float)
    cap = rng.uniform(1.5, 8.0, n_packs)
    packs = PackLibrary(ids=np.arange(n_packs) + 100, cells_series=cells, cells_parallel=rng.integers(1, 3, n_packs),
                        capacity_ah=cap, cell_resistance_ohm=rng.uniform(0.003, 0.012, n_packs),
                        full_voltage_per_cell_v=rng.choice([4.2, 4.35], n_packs),
                        max_continuous_c=rng.uniform(15.0, 60.0, n_packs),
                        mass_kg=cells * 3.7 * cap / rng.uniform(140.0, 190.0, n_packs),
                        cost=np.where(rng.random(n_packs) < 0.2, np.nan, rng.uniform(20, 120, n_packs)))
    unknown = rng.random(n_escs) < 0.5

    def nan_or(a: np.ndarray) -> np.ndarray:
        return np.where(unknown, np.nan, a)

    escs = EscLibrary(ids=np.arange(n_escs) + 200, continuous_current_a=rng.uniform(15.0, 80.0, n_escs),
                      min_cells=rng.integers(2, 4, n_escs).astype(float),
                      max_cells=rng.integers(4, 9, n_escs).astype(float),
                      r_on_path_ohm=nan_or(rng.uniform(0.003, 0.015, n_escs)),
                      switching_frequency_hz=nan_or(rng.choice([16e3, 24e3, 48e3], n_escs)),
                      switching_time_s=nan_or(rng.uniform(50e-9, 300e-9, n_escs)),
                      dead_time_s=nan_or(rng.uniform(0.1e-6, 1e-6, n_escs)),
                      diode_drop_v=nan_or(rng.uniform(0.7, 1.0, n_escs)),
                      input_esr_ohm=nan_or(rng.uniform(0.005, 0.05, n_escs)),
                      pwm_loss_coefficient=nan_or(rng.uniform(0.0, 0.01, n_escs)),
                      mass_kg=rng.uniform(0.02, 0.08, n_escs), cost=rng.uniform(15, 60, n_escs))
    motors = MotorLibrary(ids=np.arange(n_motors) + 300, kv_rpm_per_v=rng.uniform(300.0, 1200.0, n_motors),
                          resistance_ohm=rng.uniform(0.03, 0.25, n_motors),
                          no_load_current_a=rng.uniform(0.3, 1.2, n_motors),
                          inductance_h=np.where(rng.random(n_motors) < 0.3, np.nan,
                                                rng.uniform(15e-6, 80e-6, n_motors)),
                          max_current_a=rng.uniform(15.0, 60.0, n_motors),
                          max_cells=np.where(rng.random(n_motors) < 0.3, np.inf,
                                             rng.integers(4, 9, n_motors).astype(float)),
                          mass_kg=rng.uniform(0.04, 0.2, n_motors), cost=rng.uniform(20, 90, n_motors))
    rows = []
    for i in range(n_props):
        k = 1 if i == 0 else int(rng.integers(2, 17))  # one constant pair, then 2-16 point tables
        rpm = np.sort(rng.uniform(1500.0, 9000.0, k))
        ct0 = rng.uniform(0.09, 0.13)
        cp0 = math.sqrt(2.0 / math.pi) * ct0**1.5 / rng.uniform(0.5, 0.72)
        drift = np.linspace(0.0, rng.uniform(-0.05, 0.15), k)
        rows.append((rpm, ct0 * (1 + drift), cp0 * (1 + 0.4 * drift)))
    diameter_in = rng.uniform(8.0, 18.0, n_props)
    d = diameter_in * 0.0254
    props = PropellerLibrary(ids=np.arange(n_props) + 400, diameter_m=d, diameter_in=diameter_in,
                             static=PropellerTable.from_rows(d, rows), forward=None,
                             mass_kg=0.002 * diameter_in, cost=rng.uniform(3, 30, n_props))
    return PartsLibrary(packs, escs, motors, props)


def random_mission(seed: int) -> MissionSpec:
    rng = np.random.default_rng(1000 + seed)
    return MissionSpec(rotor_count=int(rng.choice([4, 6, 8])), frame_mass_kg=float(rng.uniform(0.8, 2.0)),
                       payload_kg=float(rng.uniform(0.0, 1.0)), max_prop_diameter_in=17.0, max_packs_in_parallel=2,
                       kind="hover", altitude_m=float(rng.uniform(0, 2000)), min_thrust_to_weight=1.6,
                       duty_min=0.3, duty_max=0.85, min_endurance_min=3.0,
                       cruise_state_of_charge=float(rng.uniform(0.3, 0.7)))


CASES = [(random_library(s), random_mission(s)) for s in range(4)] + [
    (parts.library(), parts.hover_mission()),
    (parts.library(), parts.cruise_mission(duty_max=0.99, min_thrust_to_weight=0.25)),
]


def _close(new: np.ndarray, old: np.ndarray, rel: float = REL) -> None:
    new, old = np.broadcast_arrays(np.asarray(new, dtype=np.float64), np.asarray(old, dtype=np.float64))
    assert np.array_equal(np.isnan(new), np.isnan(old))
    finite = np.isfinite(old)
    assert np.array_equal(new[~finite & ~np.isnan(old)], old[~finite & ~np.isnan(old)])
    np.testing.assert_allclose(new[finite], old[finite], rtol=rel, atol=0.0)


SMALL = [(random_library(s, n_packs=3, n_escs=3, n_motors=3, n_props=4), random_mission(s)) for s in (11, 12)]


@pytest.fixture(scope="module")
def brute_small() -> list[tuple[dict[str, int], list[brute.Record]]]:
    out = []
    for library, mission in SMALL:
        counts, feasible = brute.evaluate(library, mission)
        brute.refine(library, mission, feasible)
        out.append((counts, feasible))
    return out


@pytest.mark.parametrize("objective", ["cruise_power", "endurance", "cost"])
@pytest.mark.parametrize("case", range(len(SMALL)))
def test_random_libraries_equal_brute_force(brute_small: list, case: int, objective: str) -> None:
    """The fast paths (repeated ESC defaults, tables of 1-16 points, the vectorised refinement) against the
    one-candidate-at-a-time physics engine, on random libraries."""
    library, mission = SMALL[case]
    _, screened = brute_small[case]
    # The engine's documented data rules, applied to the oracle's list: a propeller whose table makes thrust
    # fall with rpm somewhere (random knots a few rpm apart can) is unusable data, and a candidate whose refined
    # (discharge-simulated) endurance falls short is rejected after refinement.
    usable = mission.propeller_model(library.propellers).valid
    good_props = {int(i) for i, ok in zip(library.propellers.ids, usable, strict=True) if ok}
    feasible = [r for r in screened if int(r.ids[3]) in good_props
                and r.metrics["refined_endurance_min"] >= mission.min_endurance_min]
    assert feasible, "the random library must leave feasible candidates"
    out = rank(library, mission, objective=objective, top_n=500, chunk_size=97)
    assert out.feasible == len(feasible)
    if not usable.all():
        assert out.rejected["prop_data_invalid"] > 0

    def key(record: brute.Record) -> tuple[object, ...]:  # an unknown (NaN) cost sorts last, as documented
        return tuple(math.inf if isinstance(v, float) and math.isnan(v) else v
                     for v in brute.sort_key(record, objective, "refined_endurance_min"))

    expected = sorted(feasible, key=key)
    assert [(r.battery_id, r.esc_id, r.motor_id, r.propeller_id, r.packs_in_parallel) for r in out.top] == [
        (*r.ids, r.key[1]) for r in expected]
    for row, ref in zip(out.top, expected, strict=True):
        assert row.cruise["electrical_power_w"] == pytest.approx(ref.metrics["electrical_power_w"], rel=1e-6)
        assert row.full_throttle["thrust_to_weight"] == pytest.approx(ref.metrics["thrust_to_weight"], rel=1e-6)
        assert row.endurance_min == pytest.approx(ref.metrics["refined_endurance_min"], rel=1e-6)
    assert out.feasible + sum(out.rejected.values()) == out.combinations


def test_two_processes_give_the_same_ranking() -> None:
    library, mission = CASES[0]
    one = rank(library, mission, top_n=30, chunk_size=500)
    two = rank(library, mission, top_n=30, chunk_size=500, processes=2)
    assert (one.feasible, one.rejected, one.violations) == (two.feasible, two.rejected, two.violations)
    assert [r.as_dict() for r in one.top] == [r.as_dict() for r in two.top]
    assert [r.as_dict() for r in one.pareto] == [r.as_dict() for r in two.pareto]


def _all_candidates(library: PartsLibrary, mission: MissionSpec) -> CandidateSet:
    """Every evaluated candidate of the plan with a reachable cruise point at a full pack (screening metrics)."""
    model = mission.propeller_model(library.propellers)
    sets = []
    the_plan = plan(library, mission, model)
    for chunk in chunks(the_plan, 10_000):
        block = the_plan.blocks[chunk.block]
        index = chunk_indices(block, chunk)
        result = screen(batch_for(library, mission, *index), model, mission)
        keep = np.flatnonzero(result.cruise.reachable.ravel())
        ic, ie, im, iq = np.unravel_index(keep, result.code.shape)
        nan = np.full(keep.size, np.nan)
        sets.append(CandidateSet(pack=block.packs[chunk.c0 + ic], k=block.ks[chunk.c0 + ic],
                                 esc=block.escs[chunk.e0 + ie], motor=block.motors[im], prop=block.props[iq],
                                 electrical_power_w=nan, endurance_min=nan, specific_thrust_g_per_w=nan,
                                 thrust_to_weight=nan, mass_kg=result.mass_kg.ravel()[keep], cost=nan))
    return CandidateSet.concat(*sets)


@pytest.mark.parametrize("cutoff", [3.3, 3.55])
@pytest.mark.parametrize("case", [0, 1, 4, 5])
def test_fast_refinement_equals_constant_thrust(case: int, cutoff: float) -> None:
    library, mission = CASES[case]
    mission = replace(mission, cutoff_v_per_cell=cutoff, cruise_state_of_charge=1.0)
    model = mission.propeller_model(library.propellers)
    cs = _all_candidates(library, mission)
    assert len(cs) > 0
    fast_min, fast_reason = refine_module.refine(library, mission, model, cs)
    ref_min, ref_reason = refine_module.refine(library, mission, model, cs, method="reference")
    assert fast_reason == ref_reason
    _close(fast_min, ref_min)
    if case == 0:  # this library ends discharges in every way
        assert set(ref_reason) == {"cutoff_voltage", "usable_capacity", "thrust_unreachable"}
