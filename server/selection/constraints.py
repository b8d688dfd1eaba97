"""Constraints: why a candidate is rejected, in one fixed order, and the screening metrics of the rest.

Every rejected candidate is counted once, under the **first** reason it fails in :data:`REASONS`. The first
five are decided from the part data alone while enumerating (such combinations are never materialised);
the rest come from the operating points:

==========================  ==================================================================================
missing_data                a part lacks a value the model needs (NaN), or its propeller table is unusable
prop_too_large              propeller diameter above the airframe's limit
no_forward_table            cruise mission and the propeller has no CT/CP versus advance ratio
esc_cell_range              pack cell count outside the ESC's min..max cells
motor_cell_limit            pack cell count above the motor's max cells
over_mass                   all-up mass above the mission's maximum
cruise_unreachable          the cruise/hover thrust needs duty > 1 on the sagged bus, or has no solution
duty_out_of_band            cruise/hover duty outside [duty_min, duty_max]
bus_collapse                full-throttle bus below half the open-circuit voltage (past the power peak, thrust
                            no longer rises with duty), at the full or the low state of charge
below_thrust_to_weight      full-throttle thrust / weight below the floor, at SOC 1 - usable_fraction
motor_over_current          full-throttle motor current (full pack, SOC 1) above the motor's rating
esc_over_current            ESC continuous rating below esc_current_margin x that current
pack_over_current           full-throttle pack current above pack_current_fraction x C x capacity x k
endurance_short             screening (or refined) endurance below the mission minimum
==========================  ==================================================================================

Comparisons are written so that NaN fails them (a NaN metric is never feasible).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from server.physics._types import STANDARD_GRAVITY_M_S2
from server.physics.drive_screen import Batch, Cruise, FullThrottle, cruise_point, full_throttle_points
from server.physics.propeller_segments import PropModel

from .library import MissionSpec

REASONS: tuple[str, ...] = (
    "missing_data", "prop_too_large", "no_forward_table", "esc_cell_range", "motor_cell_limit",
    "over_mass", "cruise_unreachable", "duty_out_of_band", "bus_collapse", "below_thrust_to_weight",
    "motor_over_current", "esc_over_current", "pack_over_current", "endurance_short",
)
"""Rejection reasons in the order they are checked; code ``i + 1`` is ``REASONS[i]``, code 0 is feasible."""
PRUNE_REASONS = REASONS[:5]
CODE = {name: i + 1 for i, name in enumerate(REASONS)}
BUS_COLLAPSE_FRACTION = 0.5
"""Full-throttle bus below this fraction of V_oc is past the pack's maximum-power point (physics author's note)."""


@dataclass(frozen=True)
class Screen:
    """Screening result of a batch: reason codes and the metrics the ranking uses (batch shape)."""

    code: np.ndarray
    violations: np.ndarray
    mass_kg: np.ndarray
    cruise: Cruise
    low: FullThrottle
    full: FullThrottle
    electrical_power_w: np.ndarray
    pack_current_a: np.ndarray
    specific_thrust_g_per_w: np.ndarray
    thrust_to_weight: np.ndarray
    endurance_min: np.ndarray


def screen(batch: Batch, model: PropModel, mission: MissionSpec, *, all_violations: bool = True) -> Screen:
    """Operating points, metrics and the first failing reason of every candidate of ``batch``.

    Returns
    -------
    Screen
        ``code`` (uint8, 0 = feasible), ``violations`` (count of candidates violating each evaluated reason,
        whether or not an earlier reason already rejected them; zeros when ``all_violations`` is false),
        and the metrics: craft electrical power [W] and pack current [A] at the cruise point, specific thrust
        [g/W], thrust-to-weight at SOC 1 - usable_fraction [-], screening endurance [min].
    """
    n_r = float(mission.rotor_count)
    cruise = cruise_point(batch, model, n_r, mission.thrust_per_rotor_n(batch.mass_kg))
    low, full = full_throttle_points(batch, model, n_r, (batch.voc_low_v, batch.voc_full_v))
    shape = np.broadcast_shapes(batch.shape, cruise.duty.shape)
    mass = np.broadcast_to(batch.mass_kg, shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        per_rotor_power = cruise.bus_voltage_v * cruise.bus_current_a
        power = n_r * per_rotor_power
        pack_current = n_r * cruise.bus_current_a
        specific = (1000.0 / STANDARD_GRAVITY_M_S2) * cruise.thrust_n / per_rotor_power
        tw = (n_r / STANDARD_GRAVITY_M_S2) * low.thrust_n / mass
        # Screening endurance: usable capacity drained at the cruise pack current (common practice, no source).
        endurance = (mission.usable_fraction * 60.0) * batch.capacity_ah / pack_current
        checks: list[tuple[str, np.ndarray]] = []
        if mission.max_all_up_mass_kg is not None:
            checks.append(("over_mass", ~(mass <= mission.max_all_up_mass_kg)))
        checks += [
            ("cruise_unreachable", ~cruise.reachable),
            ("duty_out_of_band", ~((cruise.duty >= mission.duty_min) & (cruise.duty <= mission.duty_max))),
            ("bus_collapse", ~((low.bus_voltage_v >= BUS_COLLAPSE_FRACTION * batch.voc_low_v)
                               & (full.bus_voltage_v >= BUS_COLLAPSE_FRACTION * batch.voc_full_v))),
            ("below_thrust_to_weight", ~(tw >= mission.min_thrust_to_weight)),
            ("motor_over_current", ~(full.motor_current_a <= batch.motor_rating_a)),
            ("esc_over_current", ~(batch.esc_rating_a >= mission.esc_current_margin * full.motor_current_a)),
            ("pack_over_current", ~(n_r * full.motor_current_a <= batch.pack_limit_a)),
            ("endurance_short", ~(endurance >= mission.min_endurance_min)),
        ]
    code = np.zeros(shape, dtype=np.uint8)
    violations = np.zeros(len(REASONS), dtype=np.int64)
    # Later reasons first, so that the earliest failing reason is the one left in ``code``.
    for name, bad in reversed(checks):
        bad = np.broadcast_to(bad, shape)
        np.copyto(code, CODE[name], where=bad)
        if all_violations:
            violations[CODE[name] - 1] = np.count_nonzero(bad)
    return Screen(code=code, violations=violations, mass_kg=mass, cruise=cruise, low=low, full=full,
                  electrical_power_w=power, pack_current_a=pack_current, specific_thrust_g_per_w=specific,
                  thrust_to_weight=tw, endurance_min=endurance)
