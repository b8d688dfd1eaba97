"""Fleet plan (issue 7): infeasible plans name the conflict; bad input raises ValueError naming the field."""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest

from server.selection.fleet import FleetOptions, MissionCandidates, optimise, tradeoff


def mission(mission_id: str, batteries: list[int], escs: list[int] | None = None, weight: float = 1.0,
            **over: Any) -> MissionCandidates:
    """Invented candidates: one per battery (and ESC) listed, motor and propeller id 1, made-up powers."""
    k = len(batteries)
    fields: dict[str, Any] = {
        "battery_id": batteries, "esc_id": escs or [1] * k, "motor_id": [1] * k, "propeller_id": [1] * k,
        "packs_in_parallel": [1] * k, "cruise_power_w": [100.0 + 10 * i for i in range(k)],
        "endurance_min": [20.0 - i for i in range(k)], "min_endurance_min": 10.0,
    }
    fields.update(over)
    return MissionCandidates(mission_id, weight, **fields)


def test_one_battery_names_the_missions_that_share_no_battery() -> None:
    missions = [mission("quad", [1, 2]), mission("hexa", [3]), mission("wing", [1, 3])]
    result = optimise(missions, FleetOptions(one_battery=True))
    assert result.status == "infeasible"
    assert result.objective is None and result.assignments == ()
    why = result.infeasibility
    assert why is not None
    assert why.binding == ("one_battery",)
    assert why.battery_conflicts == (("quad", "hexa"),)
    assert set(why.conflicting_missions) == {"quad", "hexa"}
    assert why.minimum_needed["batteries"] == 2 and why.limits["batteries"] == 1
    assert "'quad' and 'hexa'" in why.message and "share no battery" in why.message
    assert tradeoff(missions, FleetOptions(one_battery=True)) == []
    assert optimise(missions, FleetOptions()).status == "optimal"


def test_one_battery_without_a_disjoint_pair_names_all_three_missions() -> None:
    missions = [mission("a", [1, 2]), mission("b", [2, 3]), mission("c", [1, 3]), mission("d", [1, 2, 3])]
    why = optimise(missions, FleetOptions(one_battery=True)).infeasibility
    assert why is not None
    assert why.battery_conflicts == ()
    assert why.conflicting_missions == ("a", "b", "c")
    assert "no battery appears in every mission's candidates, although every two missions share one" in why.message
    assert "Conflicting missions: 'a', 'b', 'c'" in why.message


def test_kind_limit_reports_the_minimum_needed_against_the_limit() -> None:
    missions = [mission("a", [1], escs=[1]), mission("b", [1], escs=[2]), mission("c", [1, 1], escs=[1, 2]),
                mission("d", [1], escs=[3])]
    options = FleetOptions(max_part_numbers={"escs": 2, "motors": 1})
    why = optimise(missions, options).infeasibility
    assert why is not None
    assert why.binding == ("max_part_numbers.escs",)
    assert why.minimum_needed == {"escs": 3, "motors": 1}
    assert why.limits["escs"] == 2
    assert set(why.conflicting_missions) == {"a", "b", "d"}
    assert "max_part_numbers.escs = 2, but the missions need at least 3 ESC part numbers" in why.message
    relaxed = optimise(missions, FleetOptions(max_part_numbers={"escs": 3, "motors": 1}))
    assert relaxed.status == "optimal" and relaxed.stocked["escs"] == [1, 2, 3]


def test_limits_that_each_fit_alone_but_not_together_are_both_named() -> None:
    # A flies (battery 1, ESC 1) or (2, 2); B flies (1, 2) or (2, 1): one battery and one ESC each cover both
    # missions, but no single (battery, ESC) pair flies both.
    missions = [mission("A", [1, 2], escs=[1, 2]), mission("B", [1, 2], escs=[2, 1]), mission("C", [1], escs=[1])]
    options = FleetOptions(max_part_numbers={"batteries": 1, "escs": 1, "propellers": 4})
    result = optimise(missions, options)
    why = result.infeasibility
    assert result.status == "infeasible" and why is not None
    assert why.binding == ("max_part_numbers.batteries", "max_part_numbers.escs")
    assert why.minimum_needed == {"batteries": 1, "escs": 1, "propellers": 1}
    assert set(why.conflicting_missions) == {"B", "C"}
    assert "Together these constraints" in why.message
    assert optimise(missions, FleetOptions(max_part_numbers={"batteries": 1, "escs": 2})).status == "optimal"


def test_one_battery_with_a_battery_limit_keeps_the_explicit_option() -> None:
    missions = [mission("a", [1]), mission("b", [2])]
    why = optimise(missions, FleetOptions(one_battery=True, max_part_numbers={"batteries": 1})).infeasibility
    assert why is not None and why.binding == ("one_battery",)
    assert why.battery_conflicts == (("a", "b"),)


def test_one_battery_that_fits_alone_but_not_with_an_esc_limit_says_so() -> None:
    missions = [mission("A", [1, 2], escs=[1, 2]), mission("B", [1, 2], escs=[2, 1])]
    why = optimise(missions, FleetOptions(one_battery=True, max_part_numbers={"escs": 1})).infeasibility
    assert why is not None
    assert why.binding == ("max_part_numbers.escs", "one_battery")
    assert why.battery_conflicts == ()
    assert "one_battery (enough on its own" in why.message and "Together these constraints" in why.message


def test_a_zero_limit_names_a_single_mission() -> None:
    missions = [mission("a", [1]), mission("b", [2])]
    why = optimise(missions, FleetOptions(max_part_numbers={"motors": 0})).infeasibility
    assert why is not None
    assert why.binding == ("max_part_numbers.motors",)
    assert len(why.conflicting_missions) == 1
    assert why.minimum_needed["motors"] == 1


@pytest.mark.parametrize(("build", "field"), [
    (lambda: optimise([], FleetOptions()), "missions"),
    (lambda: tradeoff([], FleetOptions()), "missions"),
    (lambda: optimise([mission("a", [1]), mission("a", [2])], FleetOptions()), "mission_id"),
    (lambda: mission("a", [], escs=[], motor_id=[], propeller_id=[], packs_in_parallel=[], cruise_power_w=[],
                     endurance_min=[]), "K must be >= 1"),
    (lambda: mission("a", [1], weight=-2.0), "weight"),
    (lambda: mission("a", [1], weight=0.0), "weight"),
    (lambda: mission("a", [1], weight=float("nan")), "weight"),
    (lambda: mission("a", [1, 2], cruise_power_w=[100.0]), "cruise_power_w"),
    (lambda: mission("a", [1], cruise_power_w=[np.nan]), "cruise_power_w"),
    (lambda: mission("a", [1], cruise_power_w=[-5.0]), "cruise_power_w"),
    (lambda: mission("a", [1], endurance_min=["long"]), "endurance_min"),
    (lambda: mission("a", [1], packs_in_parallel=[0]), "packs_in_parallel"),
    (lambda: mission("a", [1], packs_in_parallel=[1.5]), "packs_in_parallel"),
    (lambda: mission("a", [1], min_endurance_min=float("inf")), "min_endurance_min"),
    (lambda: mission("a", [1], best_cruise_power_w=150.0), "best_cruise_power_w"),
    (lambda: mission("a", [1], best_endurance_min=5.0), "best_endurance_min"),
    (lambda: mission("a", [[1, 2]]), "battery_id"),
    (lambda: FleetOptions(metric="range"), "metric"),
    (lambda: FleetOptions(stocking_cost=-1.0), "stocking_cost"),
    (lambda: FleetOptions(max_part_numbers={"frames": 2}), "max_part_numbers"),
    (lambda: FleetOptions(max_part_numbers={"escs": -1}), "max_part_numbers.escs"),
    (lambda: FleetOptions(max_part_numbers={"motors": 1.5}), "max_part_numbers.motors"),
    (lambda: optimise([mission("a", [1])], {"metric": "cruise_energy"}), "options"),  # type: ignore[arg-type]
])
def test_bad_input_raises_value_error_naming_the_field(build: Any, field: str) -> None:
    with pytest.raises(ValueError, match=field):
        build()
