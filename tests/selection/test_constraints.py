"""Every constraint rejects exactly the candidate it should: one hand-built single-candidate case per reason.

The base system (4S 5 Ah pack, 40 A ESC, Kv 700 motor, constant-coefficient 12 in propeller, 4 rotors) is
feasible; each case changes one thing and must be rejected under that reason and no other, so a constraint
that never fires, or fires for the wrong reason, fails here.
"""

from __future__ import annotations

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
    Segment,
    rank,
)

NAN = float("nan")


def base_parts(**over: dict[str, object]) -> PartsLibrary:
    pack = {"ids": [1], "cells_series": [4], "cells_parallel": [1], "capacity_ah": [5.0],
            "cell_resistance_ohm": [0.006], "full_voltage_per_cell_v": [4.2], "max_continuous_c": [40.0],
            "mass_kg": [0.53], "cost": [55.0]} | over.get("pack", {})
    esc = {"ids": [2], "continuous_current_a": [40.0], "min_cells": [3], "max_cells": [6], "r_on_path_ohm": [NAN],
           "switching_frequency_hz": [NAN], "switching_time_s": [NAN], "dead_time_s": [NAN], "diode_drop_v": [NAN],
           "input_esr_ohm": [NAN], "pwm_loss_coefficient": [NAN], "mass_kg": [0.04], "cost": [30.0]} | over.get(
        "esc", {})
    motor = {"ids": [3], "kv_rpm_per_v": [700.0], "resistance_ohm": [0.12], "no_load_current_a": [0.4],
             "inductance_h": [NAN], "max_current_a": [28.0], "max_cells": [6], "mass_kg": [0.072],
             "cost": [35.0]} | over.get("motor", {})
    prop = over.get("prop", {})
    diameter_in = np.array(prop.get("diameter_in", [12.0]))
    d = diameter_in * 0.0254
    static = PropellerTable.from_rows(d, [prop.get("static", (np.array([0.0]), np.array([0.110]), np.array([0.042])))])
    forward_row = prop.get("forward", (np.array([0.0, 0.3, 0.6, 0.9]), np.array([0.150, 0.130, 0.095, 0.045]),
                                       np.array([0.075, 0.074, 0.066, 0.046])))
    forward = PropellerTable.from_rows(d, [forward_row], "advance_ratio")
    return PartsLibrary(PackLibrary(**pack), EscLibrary(**esc), MotorLibrary(**motor),
                        PropellerLibrary(ids=[4], diameter_m=d, diameter_in=diameter_in, static=static,
                                         forward=forward, mass_kg=[0.016], cost=[6.0],
                                         application=prop.get("application", ["any"])))


BASE_MISSION = MissionSpec(rotor_count=4, frame_mass_kg=0.9, payload_kg=0.3, max_prop_diameter_in=13.0,
                           kind="hover", min_thrust_to_weight=2.0, duty_min=0.3, duty_max=0.8,
                           min_endurance_min=5.0)

CASES = {
    "missing_data": ({"motor": {"resistance_ohm": [NAN]}}, {}),
    # CT 0.20 with CP 0.03 is a figure of merit of 2.4: better than momentum theory allows (Leishman 2006, ch. 2).
    "prop_data_invalid": ({"prop": {"static": (np.array([0.0]), np.array([0.20]), np.array([0.03]))}}, {}),
    "prop_too_large": ({"prop": {"diameter_in": [14.0]}}, {}),
    "prop_application": ({"prop": {"application": ["fixed_wing"]}}, {}),  # a fixed-wing propeller on a hover craft
    "no_forward_table": ({"prop": {"forward": (np.array([NAN]), np.array([NAN]), np.array([NAN]))}},
                         {"kind": "cruise", "rotor_count": 1, "cruise_airspeed_m_s": 15.0, "lift_to_drag": 8.0}),
    "esc_cell_range": ({"esc": {"max_cells": [3]}}, {}),
    "motor_cell_limit": ({"motor": {"max_cells": [3]}}, {}),
    "over_mass": ({}, {"max_all_up_mass_kg": 1.5}),
    "cruise_unreachable": ({}, {"payload_kg": 6.0}),
    # 30 m/s needs J beyond the table's last measured 0.9: held coefficients give eta_p above the Froude limit.
    "prop_data_out_of_range": ({}, {"kind": "cruise", "rotor_count": 1, "cruise_airspeed_m_s": 30.0,
                                    "lift_to_drag": 8.0, "duty_min": 0.0, "duty_max": 1.0,
                                    "min_thrust_to_weight": 0.0, "min_endurance_min": 0.0}),
    "duty_out_of_band": ({}, {"duty_max": 0.4}),
    # 55 mOhm per cell (a worn pack): the full-throttle bus sags below half of V_oc; hover is still reachable.
    "bus_collapse": ({"pack": {"cell_resistance_ohm": [0.055]}}, {"duty_max": 1.0, "min_thrust_to_weight": 0.0}),
    "below_thrust_to_weight": ({}, {"min_thrust_to_weight": 4.0}),
    # a quad keeps no trimmed hover with a motor out (share 0): any motor-out floor rejects it
    "motor_out_thrust_short": ({}, {"min_thrust_to_weight_motor_out": 0.5}),
    "motor_over_current": ({"motor": {"max_current_a": [12.0]}}, {}),
    # a 30 s full-throttle burst heats the winding to about 76 °C (thermal priors): above a 60 °C maximum
    "winding_over_temperature": ({"motor": {"max_winding_temperature_c": [60.0]}},
                                 {"temperature_effects": True, "burst_s": 30.0}),
    "esc_over_current": ({"esc": {"continuous_current_a": [16.0]}}, {}),
    "pack_over_current": ({"pack": {"max_continuous_c": [4.0]}}, {}),
    # at -20 °C the cell resistance is x 3.4 and T/W falls from 2.87 to 2.02: below a 2.1 floor
    "cold_day_thrust_short": ({}, {"cold_day_temperature_c": -20.0, "min_thrust_to_weight": 2.1}),
    # the screening endurance falls from 16.25 to 16.18 min on a -20 °C day: below a 16.2 min floor
    "cold_day_endurance_short": ({}, {"cold_day_temperature_c": -20.0, "min_endurance_min": 16.2}),
    "endurance_short": ({}, {"min_endurance_min": 120.0}),
    # a profile of two 10-minute hovers and a 5-minute reserve: longer than the pack can hover
    "profile_reserve_short": ({}, {"segments": (Segment("hover", 600.0), Segment("hover", 600.0)),
                                   "reserve_min": 5.0}),
}


def test_base_system_is_feasible() -> None:
    out = rank(base_parts(), BASE_MISSION, top_n=1)
    assert out.feasible == 1 and out.combinations == 1
    assert not any(out.rejected.values())


@pytest.mark.parametrize("reason", list(CASES))
def test_each_constraint_rejects_its_case(reason: str) -> None:
    part_changes, mission_changes = CASES[reason]
    mission = replace(BASE_MISSION, **mission_changes)
    out = rank(base_parts(**part_changes), mission, top_n=1)
    assert out.feasible == 0
    assert {k: v for k, v in out.rejected.items() if v} == {reason: 1}
    assert out.top == [] and out.pareto == []


def test_rejections_count_every_combination_once_in_a_mixed_library() -> None:
    """Two packs (4S fits, 7S exceeds both ESC and motor): 7S combinations are counted under the ESC only."""
    lib = base_parts(pack={"ids": [1, 5], "cells_series": [4, 7], "cells_parallel": [1, 1],
                           "capacity_ah": [5.0, 3.0], "cell_resistance_ohm": [0.006, 0.006],
                           "full_voltage_per_cell_v": [4.2, 4.2], "max_continuous_c": [25.0, 25.0],
                           "mass_kg": [0.53, 0.6], "cost": [55.0, 70.0]})
    out = rank(lib, replace(BASE_MISSION, max_packs_in_parallel=2), top_n=5)
    assert out.combinations == 4
    assert out.rejected["esc_cell_range"] == 2 and out.rejected["motor_cell_limit"] == 0
    assert out.feasible + sum(out.rejected.values()) == 4


def test_all_violation_counts_include_candidates_rejected_earlier() -> None:
    """A candidate over the motor rating and short on endurance counts once in ``rejected``, in both violations."""
    out = rank(base_parts(motor={"max_current_a": [12.0]}), replace(BASE_MISSION, min_endurance_min=120.0), top_n=1)
    assert {k: v for k, v in out.rejected.items() if v} == {"motor_over_current": 1}
    assert out.violations["motor_over_current"] == 1 and out.violations["endurance_short"] == 1


def test_application_decides_by_the_mission_kind() -> None:
    """Multirotor propellers hover but do not cruise; fixed-wing ones the other way round; "any" does both."""
    cruise = replace(BASE_MISSION, kind="cruise", rotor_count=1, cruise_airspeed_m_s=15.0, lift_to_drag=8.0,
                     duty_min=0.0, duty_max=1.0, min_thrust_to_weight=0.0, min_endurance_min=0.0)
    for application, hover_ok, cruise_ok in (("multirotor", True, False), ("fixed_wing", False, True),
                                             ("any", True, True)):
        lib = base_parts(prop={"application": [application]})
        for mission, ok in ((BASE_MISSION, hover_ok), (cruise, cruise_ok)):
            out = rank(lib, mission, top_n=1)
            assert (out.rejected["prop_application"] == 0) == ok, (application, mission.kind)
    with pytest.raises(ValueError, match="application"):
        base_parts(prop={"application": ["helicopter"]})


def test_every_reason_has_a_hand_built_case() -> None:
    from server.selection import REASONS

    assert set(CASES) == set(REASONS)
