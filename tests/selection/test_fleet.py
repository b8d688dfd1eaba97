"""Fleet plan (issue 7): the MILP against exhaustive enumeration of every assignment, and its reported plan.

Instances are invented, seeded combinatorics (2-4 missions x 3-8 candidates drawn from a few part ids; the
same small integers are used as ids of every kind, so equal ids of different kinds must stay different parts).
The oracle below enumerates the product of the missions' candidates with numpy and shares no code with the
solver.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest

from server.selection.fleet import KINDS, FleetOptions, MissionCandidates, optimise, tradeoff

ID_FIELDS = ("battery_id", "esc_id", "motor_id", "propeller_id")


def random_missions(seed: int, pool: tuple[int, int, int, int] = (3, 3, 4, 4), n_missions: tuple[int, int] = (2, 4),
                    k_range: tuple[int, int] = (3, 8)) -> list[MissionCandidates]:
    rng = np.random.default_rng(seed)
    missions = []
    for m in range(int(rng.integers(n_missions[0], n_missions[1] + 1))):
        k = int(rng.integers(k_range[0], k_range[1] + 1))
        ids = {f: rng.integers(1, size + 1, k) for f, size in zip(ID_FIELDS, pool, strict=True)}
        missions.append(MissionCandidates(
            mission_id=f"m{m}", weight=float(rng.uniform(0.5, 4.0)), packs_in_parallel=rng.integers(1, 3, k),
            cruise_power_w=rng.uniform(100.0, 900.0, k).round(1), endurance_min=rng.uniform(8.0, 40.0, k).round(2),
            min_endurance_min=float(rng.uniform(5.0, 10.0)), **ids))
    return missions


def enumerate_plans(missions: list[MissionCandidates], metric: str, options: FleetOptions
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every assignment that meets the options' kind limits: (choices, fleet metric, part numbers used)."""
    grids = np.meshgrid(*[np.arange(len(m)) for m in missions], indexing="ij")
    choices = np.stack([g.ravel() for g in grids], axis=1)
    used = np.zeros(choices.shape[0], dtype=int)
    ok = np.ones(choices.shape[0], dtype=bool)
    limits = dict(options.max_part_numbers)
    if options.one_battery:
        limits["batteries"] = min(1, limits["batteries"] if limits["batteries"] is not None else 1)
    for field, kind in zip(ID_FIELDS, KINDS, strict=True):
        ids = np.stack([getattr(m, field)[choices[:, i]] for i, m in enumerate(missions)], axis=1)
        ids = np.sort(ids, axis=1)
        distinct = 1 + (np.diff(ids, axis=1) != 0).sum(axis=1)
        used += distinct
        if limits[kind] is not None:
            ok &= distinct <= limits[kind]
    if metric == "cruise_energy":
        value = sum(m.weight * m.cruise_power_w[choices[:, i]] for i, m in enumerate(missions))
    else:
        value = np.min(np.stack([m.margin_min[choices[:, i]] for i, m in enumerate(missions)], axis=1), axis=1)
    return choices[ok], np.asarray(value)[ok], used[ok]


def check_plan(missions: list[MissionCandidates], result, options: FleetOptions) -> tuple[float, int]:  # noqa: ANN001
    """Recompute the plan's fleet metric and part count from its assignment; check limits and stocked ids."""
    assert [a.mission_id for a in result.assignments] == [m.mission_id for m in missions]
    stocked: dict[str, set] = {kind: set() for kind in KINDS}
    values = []
    for m, a in zip(missions, result.assignments, strict=True):
        c = a.candidate_index
        for field, kind in zip(ID_FIELDS, KINDS, strict=True):
            assert getattr(a, field) == getattr(m, field)[c]
            stocked[kind].add(getattr(a, field))
        assert a.packs_in_parallel == m.packs_in_parallel[c]
        values.append(m.weight * m.cruise_power_w[c] if options.metric == "cruise_energy" else m.margin_min[c])
    assert {k: set(v) for k, v in result.stocked.items()} == stocked
    for kind in KINDS:
        limit = options.max_part_numbers[kind]
        assert limit is None or len(stocked[kind]) <= limit
    if options.one_battery:
        assert len(stocked["batteries"]) == 1
    fleet = float(sum(values)) if options.metric == "cruise_energy" else float(min(values))
    return fleet, sum(len(v) for v in stocked.values())


OPTION_SETS = [
    {"metric": "cruise_energy"},
    {"metric": "cruise_energy", "stocking_cost": 40.0},
    {"metric": "cruise_energy", "one_battery": True},
    {"metric": "cruise_energy", "max_part_numbers": {"escs": 1, "motors": 2}},
    {"metric": "cruise_energy", "one_battery": True, "max_part_numbers": {"propellers": 2}, "stocking_cost": 25.0},
    {"metric": "endurance_margin"},
    {"metric": "endurance_margin", "stocking_cost": 0.7},
    {"metric": "endurance_margin", "one_battery": True},
    {"metric": "endurance_margin", "max_part_numbers": {"batteries": 2, "propellers": 2}, "stocking_cost": 0.3},
]


@pytest.mark.parametrize("seed", range(8))
@pytest.mark.parametrize("opts", OPTION_SETS, ids=lambda o: "-".join(f"{k}={v}" for k, v in o.items()))
def test_optimum_equals_exhaustive_enumeration(seed: int, opts: dict) -> None:
    missions = random_missions(seed)
    options = FleetOptions(**opts)
    _, value, used = enumerate_plans(missions, options.metric, options)
    result = optimise(missions, options)
    if value.size == 0:
        assert result.status == "infeasible"
        assert result.infeasibility is not None and result.objective is None
        return
    if options.metric == "cruise_energy":
        best = float(np.min(value + options.stocking_cost * used))
    else:
        best = float(np.max(value - options.stocking_cost * used))
    assert result.status == "optimal"
    assert result.objective == pytest.approx(best, rel=1e-9, abs=1e-9)
    fleet, parts = check_plan(missions, result, options)
    assert result.fleet_metric == pytest.approx(fleet, rel=1e-12)
    assert result.part_numbers == parts
    sign = 1.0 if options.metric == "cruise_energy" else -1.0
    assert result.objective == pytest.approx(fleet + sign * options.stocking_cost * parts, rel=1e-12)
    assert result.mip_gap is not None and result.mip_gap <= 1e-6


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("opts", [{"metric": "cruise_energy"}, {"metric": "endurance_margin"},
                                  {"metric": "cruise_energy", "one_battery": True},
                                  {"metric": "endurance_margin", "max_part_numbers": {"escs": 2}}],
                         ids=lambda o: "-".join(f"{k}={v}" for k, v in o.items()))
def test_tradeoff_curve_equals_enumeration_and_is_monotone(seed: int, opts: dict) -> None:
    missions = random_missions(seed)
    options = FleetOptions(**opts)
    _, value, used = enumerate_plans(missions, options.metric, options)
    points = tradeoff(missions, options)
    if value.size == 0:
        assert points == []
        return
    sense = 1.0 if options.metric == "cruise_energy" else -1.0
    unconstrained = float(np.min(sense * value))
    expected = []
    for n in range(int(used.min()), int(used.max()) + 1):
        expected.append((n, float(np.min(sense * value[used <= n]))))
        if expected[-1][1] <= unconstrained + 1e-9:
            break
    assert [p.part_numbers for p in points] == [n for n, _ in expected]
    for point, (n, best) in zip(points, expected, strict=True):
        assert point.status == "optimal"
        assert sense * point.objective == pytest.approx(best, rel=1e-9, abs=1e-9)
        fleet, parts = check_plan(missions, point, options)
        assert point.objective == pytest.approx(fleet, rel=1e-12)
        assert point.parts_used == parts <= n
    objectives = [sense * p.objective for p in points]
    assert all(b <= a + 1e-9 for a, b in itertools.pairwise(objectives))
    assert points[0].part_numbers >= 4


def test_cheapest_point_of_the_curve_with_stocking_cost_is_the_optimum() -> None:
    """min over N of (metric at N + stocking cost x parts) is the optimum with stocking cost (larger instance)."""
    missions = random_missions(101, pool=(6, 4, 8, 8), n_missions=(4, 4), k_range=(20, 20))
    for metric, cost in (("cruise_energy", 150.0), ("endurance_margin", 0.8)):
        options = FleetOptions(metric=metric, stocking_cost=cost)
        points = tradeoff(missions, options)
        result = optimise(missions, options)
        sense = 1.0 if metric == "cruise_energy" else -1.0
        assert len(points) >= 3
        assert min(sense * p.objective_with_stocking for p in points) == pytest.approx(sense * result.objective,
                                                                                      rel=1e-9)
        assert [p.part_numbers for p in points] == list(range(points[0].part_numbers, points[-1].part_numbers + 1))
        unconstrained = optimise(missions, FleetOptions(metric=metric))
        assert points[-1].objective == pytest.approx(unconstrained.objective, rel=1e-9)


@pytest.mark.parametrize("metric", ["cruise_energy", "endurance_margin"])
@pytest.mark.parametrize("kind", KINDS)
def test_tightening_a_limit_never_improves_the_objective(metric: str, kind: str) -> None:
    missions = random_missions(7, pool=(5, 4, 6, 6), n_missions=(4, 4), k_range=(12, 12))
    sense = 1.0 if metric == "cruise_energy" else -1.0
    previous = sense * optimise(missions, FleetOptions(metric=metric, stocking_cost=0.0)).objective
    feasible = True
    for limit in range(6, -1, -1):
        result = optimise(missions, FleetOptions(metric=metric, max_part_numbers={kind: limit}))
        if result.status == "infeasible":
            feasible = False
            continue
        assert feasible, "a tighter limit cannot make an infeasible plan feasible again"
        assert sense * result.objective >= previous - 1e-9
        assert len(result.stocked[kind]) <= limit
        previous = sense * result.objective
    assert not feasible  # limit 0 is always infeasible, so the loop really tightened to infeasibility
    with_one = optimise(missions, FleetOptions(metric=metric, one_battery=True))
    without = optimise(missions, FleetOptions(metric=metric))
    if with_one.status == "optimal":
        assert sense * with_one.objective >= sense * without.objective - 1e-9


def two_missions(**best: float) -> list[MissionCandidates]:
    """Hand-built: A (weight 2) best on battery 1, B (weight 1) best on battery 3; battery 2 serves both."""
    a = MissionCandidates("A", 2.0, battery_id=[1, 2], esc_id=[1, 1], motor_id=[1, 1], propeller_id=[1, 1],
                          packs_in_parallel=[1, 2], cruise_power_w=[100.0, 110.0], endurance_min=[20.0, 26.0],
                          min_endurance_min=15.0, **best)
    b = MissionCandidates("B", 1.0, battery_id=[3, 2], esc_id=[1, 1], motor_id=[1, 1], propeller_id=[1, 1],
                          packs_in_parallel=[1, 1], cruise_power_w=[200.0, 230.0], endurance_min=[30.0, 18.0],
                          min_endurance_min=12.0)
    return [a, b]


def test_hand_built_plan_reports_losses_stocked_parts_and_stocking_trade() -> None:
    missions = two_missions()
    free = optimise(missions, FleetOptions())
    assert free.objective == pytest.approx(2 * 100 + 200)
    assert [a.loss_vs_own_best for a in free.assignments] == [0.0, 0.0]
    assert free.stocked == {"batteries": [1, 3], "escs": [1], "motors": [1], "propellers": [1]}
    assert free.part_numbers == 5  # id 1 as ESC, motor and propeller: three different parts

    shared = optimise(missions, FleetOptions(one_battery=True))
    assert shared.objective == pytest.approx(2 * 110 + 230)
    a, b = shared.assignments
    assert (a.battery_id, a.packs_in_parallel, a.metric_value, a.loss_vs_own_best, a.loss_vs_own_best_weighted) \
        == (2, 2, 110.0, 10.0, 20.0)
    assert (b.battery_id, b.loss_vs_own_best, b.loss_vs_own_best_weighted) == (2, 30.0, 30.0)
    assert shared.stocked["batteries"] == [2]

    # 450 + 60 x 4 = 690 < 400 + 60 x 5 = 700: sharing pays; at 40 per part it does not (610 > 600).
    assert optimise(missions, FleetOptions(stocking_cost=60.0)).objective == pytest.approx(690.0)
    assert optimise(missions, FleetOptions(stocking_cost=60.0)).stocked["batteries"] == [2]
    assert optimise(missions, FleetOptions(stocking_cost=40.0)).objective == pytest.approx(600.0)

    points = tradeoff(missions, FleetOptions(stocking_cost=60.0))
    assert [(p.part_numbers, p.objective, p.objective_with_stocking) for p in points] == [
        (4, pytest.approx(450.0), pytest.approx(690.0)), (5, pytest.approx(400.0), pytest.approx(700.0))]
    assert [a.battery_id for a in points[0].assignments] == [2, 2]


def test_endurance_margin_maximises_the_worst_margin() -> None:
    missions = two_missions()
    # margins: A 5 or 11 min, B 18 or 6 min. Free: worst is max over plans of min -> A 11 (bat 2), B 18 (bat 3).
    result = optimise(missions, FleetOptions(metric="endurance_margin"))
    assert result.objective == pytest.approx(11.0)
    assert [a.metric_value for a in result.assignments] == [pytest.approx(11.0), pytest.approx(18.0)]
    assert [a.loss_vs_own_best for a in result.assignments] == [0.0, 0.0]
    assert result.assignments[0].loss_vs_own_best_weighted is None
    # One battery: battery 2 for both -> margins 11 and 6: worst 6; B loses 12 min against its own best.
    shared = optimise(missions, FleetOptions(metric="endurance_margin", one_battery=True))
    assert shared.objective == pytest.approx(6.0)
    assert shared.assignments[1].loss_vs_own_best == pytest.approx(12.0)
    # With 2 min per stocked part: 11 - 2 x 5 = 1 against 6 - 2 x 4 = -2.
    assert optimise(missions, FleetOptions(metric="endurance_margin", stocking_cost=2.0)).objective == \
        pytest.approx(1.0)


def test_own_best_from_the_whole_ranking_sets_the_loss() -> None:
    result = optimise(two_missions(best_cruise_power_w=95.0), FleetOptions())
    assert result.assignments[0].own_best == 95.0
    assert result.assignments[0].loss_vs_own_best == pytest.approx(5.0)
    assert result.assignments[0].loss_vs_own_best_weighted == pytest.approx(10.0)


def test_result_as_dict_has_the_contract_names_and_is_json() -> None:
    result = optimise(two_missions(), FleetOptions(one_battery=True))
    out = json.loads(json.dumps(result.as_dict()))
    assert {"objective", "assignments", "stocked", "status", "mip_gap", "solve_time_s"} <= set(out)
    for row in out["assignments"]:
        assert {"mission_id", "battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel",
                "metric_value", "loss_vs_own_best"} <= set(row)
    assert set(out["stocked"]) == {"batteries", "escs", "motors", "propellers"}
    point = json.loads(json.dumps(tradeoff(two_missions(), FleetOptions())[0].as_dict()))
    assert {"part_numbers", "objective", "assignments", "status"} <= set(point)
    assert math.isfinite(out["solve_time_s"])


def test_from_rows_reads_ranking_rows() -> None:
    rows = [{"battery_id": 5, "esc_id": 6, "motor_id": 7, "propeller_id": 8, "packs_in_parallel": 1,
             "endurance_min": 21.0, "cruise": {"electrical_power_w": 321.0}},
            {"battery_id": 9, "esc_id": 6, "motor_id": 7, "propeller_id": 8, "packs_in_parallel": 2,
             "endurance_min": 30.0, "cruise": {"electrical_power_w": 350.0}}]
    mission = MissionCandidates.from_rows("X", 3.0, rows, min_endurance_min=20.0)
    assert len(mission) == 2
    assert mission.cruise_power_w.tolist() == [321.0, 350.0]
    assert mission.margin_min.tolist() == [1.0, 10.0]
    result = optimise([mission], FleetOptions())
    assert result.objective == pytest.approx(3.0 * 321.0)
    assert result.assignments[0].battery_id == 5


def test_same_four_parts_with_other_packs_in_parallel_keeps_the_better_one() -> None:
    """Candidates differing only in packs in parallel share their parts; the plan takes the better by the metric."""
    solo = MissionCandidates("S", 1.0, battery_id=[1, 1, 2], esc_id=[1, 1, 1], motor_id=[1, 1, 1],
                             propeller_id=[1, 1, 1], packs_in_parallel=[1, 2, 1], cruise_power_w=[300.0, 250.0, 260.0],
                             endurance_min=[35.0, 30.0, 20.0], min_endurance_min=10.0)
    cruise = optimise([solo], FleetOptions()).assignments[0]
    assert (cruise.candidate_index, cruise.packs_in_parallel, cruise.metric_value) == (1, 2, 250.0)
    margin = optimise([solo], FleetOptions(metric="endurance_margin")).assignments[0]
    assert (margin.candidate_index, margin.packs_in_parallel, margin.metric_value) == (0, 1, 25.0)


def test_time_limited_solves_report_it_and_keep_the_curve_monotone() -> None:
    """Structureless random candidates (no part good across missions) make the few-parts end hard for HiGHS."""
    missions = random_missions(5, pool=(12, 6, 15, 15), n_missions=(5, 5), k_range=(300, 300))
    options = FleetOptions(time_limit_s=0.2)
    points = tradeoff(missions, options)
    assert "limit_reached" in {p.status for p in points}
    assert {p.status for p in points} <= {"optimal", "limit_reached"}
    objectives = [p.objective for p in points]
    assert all(b <= a for a, b in itertools.pairwise(objectives))
    for point in points:
        fleet, parts = check_plan(missions, point, options)
        assert point.objective == pytest.approx(fleet, rel=1e-12) and parts <= point.part_numbers
    result = optimise(missions, FleetOptions(time_limit_s=0.2, max_part_numbers={"batteries": 1, "escs": 1}))
    assert result.status in {"optimal", "limit_reached"}
    if result.assignments:
        check_plan(missions, result, FleetOptions(max_part_numbers={"batteries": 1, "escs": 1}))
