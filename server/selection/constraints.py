"""Constraints: why a candidate is rejected, in one fixed order, and the screening metrics of the rest.

Every rejected candidate is counted once, under the **first** reason it fails in :data:`REASONS`. The part-level
reasons (:data:`PRUNE_REASONS`) are decided from the part data alone while enumerating (such combinations are
never materialised); the rest come from the operating points:

==========================  ==================================================================================
missing_data                a part lacks a value the model needs (NaN), or the propeller has no static table
prop_data_invalid           the propeller's table is impossible (beats momentum theory at a measured point) or
                            not usable (thrust or torque not rising with speed, non-finite values)
prop_too_large              propeller diameter above the airframe's limit
prop_application            propeller made for the other kind of flight (a fixed-wing propeller on a hover mission,
                            a multirotor one on a cruise mission)
no_forward_table            cruise mission and the propeller has no CT/CP versus advance ratio
esc_cell_range              pack cell count outside the ESC's min..max cells
motor_cell_limit            pack cell count above the motor's max cells
over_mass                   all-up mass above the mission's maximum
cruise_unreachable          the cruise/hover thrust needs duty > 1 on the sagged bus (healthy side), no solution
prop_data_out_of_range      at the cruise or a full-throttle point the propeller data, read beyond their measured
                            range, would beat momentum theory (figure of merit or Froude efficiency above 1)
duty_out_of_band            cruise/hover duty outside [duty_min, duty_max]
bus_collapse                full-throttle bus below half the open-circuit voltage (past the power peak, thrust
                            no longer rises with duty), at the full or the low state of charge
below_thrust_to_weight      full-throttle thrust / weight below the floor, at SOC 1 - usable_fraction
motor_out_thrust_short      that thrust-to-weight times the share left after the worst single motor failure
                            (:mod:`server.physics.motor_out`) below the mission's motor-out floor (when set)
motor_over_current          full-throttle motor current (full pack, SOC 1) above the motor's rating
winding_over_temperature    with temperature effects: the winding temperature at the cruise point or after the
                            full-throttle burst above the motor's maximum, or thermal runaway (:mod:`.temperature`)
esc_over_current            ESC continuous rating below esc_current_margin x that current
pack_over_current           full-throttle pack current above pack_current_fraction x C x capacity x k
endurance_short             screening (or refined) endurance below the mission minimum
cold_day_thrust_short       at the cold-day air temperature (when set): thrust-to-weight below the floor, or the
                            bus collapses at full throttle (pack resistance and air density of that day)
cold_day_endurance_short    at the cold-day air temperature: the screening endurance below the mission minimum,
                            or the cruise thrust out of reach
profile_reserve_short       the mission's flight profile (:mod:`.profile`) does not complete with its reserve
                            (usable capacity, the cut-off voltage or a segment's thrust runs out on the way)
==========================  ==================================================================================

Each operating-point reason is a :class:`Check`: the quantity compared, its limit, its unit and whether it
passed, so "why this verdict" (:mod:`.explain`) reports exactly the numbers the screen decided on. Comparisons
are written so that NaN fails them (a NaN metric is never feasible).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from server.physics import motor_out
from server.physics._types import STANDARD_GRAVITY_M_S2
from server.physics.drive_screen import Batch, Cruise, FullThrottle, cruise_point, full_throttle_points
from server.physics.profile import ProfileResult
from server.physics.propeller_segments import PropModel

from . import temperature
from .library import MissionSpec
from .profile import fly_batch, mission_energy_wh

REASON_TEXT: dict[str, str] = {
    "missing_data": "missing part data (unknown resistance, coefficients…)",
    "prop_data_invalid": "propeller data impossible or unusable (beats momentum theory, not rising with speed)",
    "prop_too_large": "propeller larger than the airframe allows",
    "prop_application": "propeller made for the other kind of flight (multirotor or fixed-wing)",
    "no_forward_table": "propeller has no forward-flight data (cruise)",
    "esc_cell_range": "pack cell count outside the ESC's range",
    "motor_cell_limit": "pack cell count above the motor's limit",
    "over_mass": "all-up mass above the mission's limit",
    "cruise_unreachable": "cannot reach the cruise thrust (duty > 1)",
    "prop_data_out_of_range": "propeller data outside its range (would beat momentum theory)",
    "duty_out_of_band": "cruise duty outside the mission's band",
    "bus_collapse": "pack voltage collapses at full throttle",
    "below_thrust_to_weight": "thrust-to-weight below the mission's minimum",
    "motor_out_thrust_short": "thrust-to-weight with one motor out below the mission's minimum",
    "motor_over_current": "full-throttle current above the motor's rating",
    "winding_over_temperature": "motor winding hotter than its maximum (cruise or after the full-throttle burst)",
    "esc_over_current": "ESC rating below the required margin",
    "pack_over_current": "pack current above the allowed share of its C rating",
    "endurance_short": "endurance below the mission's minimum",
    "cold_day_thrust_short": "thrust-to-weight on the cold day below the mission's minimum (or the pack collapses)",
    "cold_day_endurance_short": "endurance on the cold day below the mission's minimum",
    "profile_reserve_short": "flight profile does not complete with its reserve",
}
"""A plain-language line per rejection reason (pages, explain)."""
REASONS: tuple[str, ...] = tuple(REASON_TEXT)
"""Rejection reasons in the order they are checked; code ``i + 1`` is ``REASONS[i]``, code 0 is feasible."""
PRUNE_REASONS = REASONS[:7]
CODE = {name: i + 1 for i, name in enumerate(REASONS)}
BUS_COLLAPSE_FRACTION = 0.5
"""Full-throttle bus below this fraction of V_oc is past the pack's maximum-power point (the healthy-side
boundary of :func:`server.physics.drive.for_thrust` too)."""


@dataclass(frozen=True)
class Check:
    """One reason evaluated on a batch: the quantity, its limit, and where it passed (batch shape).

    ``sense`` is ``"max"`` (pass when value <= limit), ``"min"`` (value >= limit), ``"band"`` (limit is
    ``(low, high)``) or ``"flag"`` (a yes/no test; ``value`` is 1 when it holds). ``margin`` is how far inside
    the limit the value is, in the value's unit (negative outside).
    """

    reason: str
    value: np.ndarray
    limit: float | tuple[float, float] | np.ndarray
    unit: str
    sense: str
    passed: np.ndarray

    @property
    def margin(self) -> np.ndarray:
        value = np.asarray(self.value, dtype=np.float64)
        out: np.ndarray
        with np.errstate(invalid="ignore"):
            if self.sense == "max":
                out = np.asarray(self.limit, dtype=np.float64) - value
            elif self.sense == "min":
                out = value - np.asarray(self.limit, dtype=np.float64)
            elif self.sense == "band":
                low, high = self.limit  # type: ignore[misc]
                out = np.minimum(value - low, high - value)
            else:
                out = np.where(self.passed, 0.0, -1.0)
        return out


def _at_most(reason: str, value: np.ndarray, limit: float | np.ndarray, unit: str) -> Check:
    with np.errstate(invalid="ignore"):
        return Check(reason, value, limit, unit, "max", np.asarray(value <= limit))


def _at_least(reason: str, value: np.ndarray, limit: float | np.ndarray, unit: str) -> Check:
    with np.errstate(invalid="ignore"):
        return Check(reason, value, limit, unit, "min", np.asarray(value >= limit))


@dataclass(frozen=True)
class Screen:
    """Screening result of a batch: reason codes, the checks, and the metrics the ranking uses (batch shape)."""

    code: np.ndarray
    violations: np.ndarray
    checks: tuple[Check, ...]
    mass_kg: np.ndarray
    cruise: Cruise
    low: FullThrottle
    full: FullThrottle
    electrical_power_w: np.ndarray
    pack_current_a: np.ndarray
    specific_thrust_g_per_w: np.ndarray
    thrust_to_weight: np.ndarray
    endurance_min: np.ndarray
    batch: Batch
    """The batch the cruise point was solved on (pack and winding resistance at temperature, when asked)."""
    heat: temperature.Heat | None = None
    cold_day: ColdDay | None = None
    profile: ProfileResult | None = None
    """The flight profile flown by every candidate (missions with segments)."""
    profile_energy_wh: np.ndarray | float = np.nan
    """Energy drawn over the profile's segments, reserve excluded (NaN without a profile). [Wh]"""


@dataclass(frozen=True)
class ColdDay:
    """The cold-day re-check (batch shape): thrust-to-weight at the low state of charge [-], whether the bus holds
    at full throttle, screening endurance [min] (NaN where the cruise thrust is out of reach)."""

    air_temperature_c: float
    thrust_to_weight: np.ndarray
    bus_holds: np.ndarray
    endurance_min: np.ndarray


def _metrics(batch: Batch, mission: MissionSpec, cruise: Cruise, low: FullThrottle,
             mass: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Thrust-to-weight at the low state of charge [-] and the screening endurance [min]."""
    n_r = float(mission.rotor_count)
    with np.errstate(invalid="ignore", divide="ignore"):
        tw = (n_r / STANDARD_GRAVITY_M_S2) * low.thrust_n / mass
        # Screening endurance: usable capacity drained at the cruise pack current (common practice, no source).
        endurance = (mission.usable_fraction * 60.0) * batch.capacity_ah / (n_r * cruise.bus_current_a)
    return tw, endurance


def _bus_ratio(batch: Batch, low: FullThrottle, full: FullThrottle) -> np.ndarray:
    ratio: np.ndarray = np.minimum(low.bus_voltage_v / batch.voc_low_v, full.bus_voltage_v / batch.voc_full_v)
    return ratio


def cold_day(batch: Batch, model: PropModel, mission: MissionSpec) -> ColdDay:
    """The system re-checked at the mission's cold-day air temperature (pack resistance, air density, and the
    winding when the mission asks for temperature effects)."""
    assert mission.cold_day_temperature_c is not None
    air_c = float(mission.cold_day_temperature_c)
    cold_model = temperature.at_density(model, temperature.cold_day_density_kg_m3(mission))
    cruise_batch, full_batch, _ = temperature.at_temperature(batch, cold_model, mission, air_c,
                                                             winding=mission.temperature_effects)
    n_r = float(mission.rotor_count)
    rho = cold_model.density_kg_m3  # a multirotor in forward flight meets more drag in the denser cold air
    cruise = cruise_point(cruise_batch, cold_model, n_r, mission.thrust_per_rotor_n(batch.mass_kg, rho),
                          mission.flight_state(batch.mass_kg, cold_model.diameter_m[batch.q], rho))
    low, full = full_throttle_points(full_batch, cold_model, n_r, (batch.voc_low_v, batch.voc_full_v))
    tw, endurance = _metrics(cruise_batch, mission, cruise, low, batch.mass_kg)
    with np.errstate(invalid="ignore"):
        holds = np.asarray(_bus_ratio(batch, low, full) >= BUS_COLLAPSE_FRACTION)
    return ColdDay(air_c, tw, holds, np.where(cruise.reachable, endurance, np.nan))


def operating_checks(batch: Batch, mission: MissionSpec, cruise: Cruise, low: FullThrottle, full: FullThrottle,
                     mass: np.ndarray, thrust_to_weight: np.ndarray, endurance_min: np.ndarray,
                     heat: temperature.Heat | None = None, cold: ColdDay | None = None,
                     profile: ProfileResult | None = None) -> list[Check]:
    """The operating-point reasons of :data:`REASONS`, in order, as :class:`Check` objects."""
    n_r = float(mission.rotor_count)
    with np.errstate(invalid="ignore", divide="ignore"):
        checks: list[Check] = []
        if mission.max_all_up_mass_kg is not None:
            checks.append(_at_most("over_mass", 1000.0 * mass, 1000.0 * mission.max_all_up_mass_kg, "g"))
        checks.append(Check("cruise_unreachable", np.where(cruise.reachable, cruise.duty, np.nan), 1.0, "-", "max",
                            np.asarray(cruise.reachable)))
        # The highest of the three points (a point without a solution, NaN, is left to the later checks).
        momentum = np.fmax(np.fmax(cruise.momentum_ratio, low.momentum_ratio), full.momentum_ratio)
        checks += [
            _at_most("prop_data_out_of_range", momentum, 1.0, "-"),
            Check("duty_out_of_band", cruise.duty, (mission.duty_min, mission.duty_max), "-", "band",
                  np.asarray((cruise.duty >= mission.duty_min) & (cruise.duty <= mission.duty_max))),
            _at_least("bus_collapse", _bus_ratio(batch, low, full), BUS_COLLAPSE_FRACTION, "-"),
            _at_least("below_thrust_to_weight", thrust_to_weight, mission.min_thrust_to_weight, "-"),
        ]
        if mission.min_thrust_to_weight_motor_out is not None:
            left = motor_out.worst_thrust_fraction(mission.rotor_count)
            checks.append(_at_least("motor_out_thrust_short", left * thrust_to_weight,
                                    mission.min_thrust_to_weight_motor_out, "-"))
        checks.append(_at_most("motor_over_current", full.motor_current_a, batch.motor_rating_a, "A"))
        if heat is not None:
            checks.append(_at_most("winding_over_temperature", heat.peak_winding_c, batch.max_winding_temperature_c,
                                   "°C"))
        checks += [
            # The ESC must carry the margin times the full-throttle current: the current it needs is compared.
            _at_most("esc_over_current", mission.esc_current_margin * full.motor_current_a, batch.esc_rating_a, "A"),
            _at_most("pack_over_current", n_r * full.motor_current_a, batch.pack_limit_a, "A"),
        ]
        checks.append(_at_least("endurance_short", endurance_min, mission.min_endurance_min, "min"))
        if cold is not None:  # after every check of the mission's own day: a system is judged on that day first
            checks += [
                Check("cold_day_thrust_short", cold.thrust_to_weight, mission.min_thrust_to_weight, "-", "min",
                      np.asarray((cold.thrust_to_weight >= mission.min_thrust_to_weight) & cold.bus_holds)),
                _at_least("cold_day_endurance_short", cold.endurance_min, mission.min_endurance_min, "min"),
            ]
        if profile is not None:
            # The share of the profile (reserve included) flown before a stop; the whole of it must be flown.
            checks.append(Check("profile_reserve_short", profile.completed_share, 1.0, "-", "min",
                                np.asarray(profile.completed)))
    return checks


def screen(batch: Batch, model: PropModel, mission: MissionSpec, *, all_violations: bool = True) -> Screen:
    """Operating points, metrics and the first failing reason of every candidate of ``batch``.

    Returns
    -------
    Screen
        ``code`` (uint8, 0 = feasible), ``violations`` (count of candidates violating each evaluated reason,
        whether or not an earlier reason already rejected them; zeros when ``all_violations`` is false),
        the checks, and the metrics: craft electrical power [W] and pack current [A] at the cruise point,
        specific thrust [g/W], thrust-to-weight at SOC 1 - usable_fraction [-], screening endurance [min].
    """
    n_r = float(mission.rotor_count)
    cold = cold_day(batch, model, mission) if mission.cold_day_temperature_c is not None else None
    heat = None
    full_batch = batch
    if mission.temperature_effects:
        batch, full_batch, heat = temperature.at_temperature(batch, model, mission, mission.air_temperature_c)
    cruise = cruise_point(batch, model, n_r, mission.thrust_per_rotor_n(batch.mass_kg),
                          mission.flight_state(batch.mass_kg, model.diameter_m[batch.q]))
    low, full = full_throttle_points(full_batch, model, n_r, (batch.voc_low_v, batch.voc_full_v))
    shape = np.broadcast_shapes(batch.shape, cruise.duty.shape)
    mass = np.broadcast_to(batch.mass_kg, shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        per_rotor_power = cruise.bus_voltage_v * cruise.bus_current_a
        power = n_r * per_rotor_power
        pack_current = n_r * cruise.bus_current_a
        specific = (1000.0 / STANDARD_GRAVITY_M_S2) * cruise.thrust_n / per_rotor_power
    tw, endurance = _metrics(batch, mission, cruise, low, mass)
    # The profile is flown on the cruise point's batch: the pack and winding at the mission's temperature, if asked.
    profile = fly_batch(batch, model, mission) if mission.has_profile else None
    checks = operating_checks(batch, mission, cruise, low, full, mass, tw, endurance, heat, cold, profile)
    code = np.zeros(shape, dtype=np.uint8)
    violations = np.zeros(len(REASONS), dtype=np.int64)
    # Later reasons first, so that the earliest failing reason is the one left in ``code``.
    for check in reversed(checks):
        bad = np.broadcast_to(~check.passed, shape)
        np.copyto(code, CODE[check.reason], where=bad)
        if all_violations:
            violations[CODE[check.reason] - 1] = np.count_nonzero(bad)
    return Screen(code=code, violations=violations, checks=tuple(checks), mass_kg=mass, cruise=cruise, low=low,
                  full=full, electrical_power_w=power, pack_current_a=pack_current, specific_thrust_g_per_w=specific,
                  thrust_to_weight=tw, endurance_min=endurance, batch=batch, heat=heat, cold_day=cold,
                  profile=profile,
                  profile_energy_wh=mission_energy_wh(mission, profile) if profile is not None else np.nan)
