"""The vectorised ranking equals a brute-force, one-candidate-at-a-time evaluation with the physics engine."""

from __future__ import annotations

import numpy as np
import pytest

from server.selection import REASONS, rank
from server.selection.library import MissionSpec, Segment

from . import brute, parts

REL = 1e-6  # the tolerance for "same metrics"

MISSIONS = {
    "hover": parts.hover_mission(),
    # A fixed wing with a low launch floor and a wide band, so that several candidates are feasible.
    "cruise": parts.cruise_mission(duty_max=0.99, min_thrust_to_weight=0.25),
    # A hexa that must hold T/W 1.4 with its worst motor out: some pass T/W 1.8 intact and fail this one.
    "hexa_motor_out": parts.hover_mission(rotor_count=6, frame_mass_kg=1.3, min_thrust_to_weight_motor_out=1.4),
    # A hot day (ISA + 30 at 500 m, 41.75 °C) with a 30 s full-throttle burst: hot windings and packs, the winding
    # limit (priors: 100 °C, R_th = 0.1 K kg/W / mass) rejects some.
    "hot_burst": parts.hover_mission(temperature_effects=True, temperature_offset_c=30.0, burst_s=30.0),
    # A cold-day re-check at -15 °C (pack resistance x 2.6, denser air) on the plain hover mission.
    "cold_day": parts.hover_mission(cold_day_temperature_c=-15.0, min_thrust_to_weight=1.6),
    # A quad flying forward at 12 m/s with a drag area (docs/model-reference.md#multirotor-flight-state).
    "forward_flight": parts.hover_mission(kind="forward_flight", cruise_airspeed_m_s=12.0, drag_area_m2=0.03),
    # The same quad climbing at 2 m/s, and a coaxial X8 descending at 1.5 m/s.
    "climb": parts.hover_mission(climb_rate_m_s=2.0, drag_area_m2=0.03),
    "coaxial_descent": parts.hover_mission(rotor_count=8, frame_mass_kg=1.3, coaxial=True, climb_rate_m_s=-1.5,
                                           kind="forward_flight", cruise_airspeed_m_s=3.0, drag_area_m2=0.03),
    # Forward flight on a hot day with a burst and a cold-day re-check: the winding heats at the forward-flight
    # current, the cold day flies forward in denser air (more drag).
    "forward_hot_cold": parts.hover_mission(kind="forward_flight", cruise_airspeed_m_s=12.0, drag_area_m2=0.03,
                                            temperature_effects=True, temperature_offset_c=30.0, burst_s=30.0,
                                            cold_day_temperature_c=-15.0, min_thrust_to_weight=1.6),
    # A two-leg hover profile with a 3-minute reserve that about half of the feasible hover systems complete.
    "hover_profile": parts.hover_mission(segments=(Segment("hover", 600.0), Segment("hover", 300.0)), reserve_min=3.0),
    # Climb, level cruise and a power-off glide, then a 5-minute reserve.
    "cruise_profile": parts.cruise_mission(duty_max=0.99, min_thrust_to_weight=0.25, segments=(
        Segment("cruise", 300.0, climb_rate_m_s=3.0), Segment("cruise", 1500.0),
        Segment("cruise", 200.0, climb_rate_m_s=-3.0)), reserve_min=5.0),
    # A mapping flight: take-off, climb, transit and survey in forward flight, descent, landing, 2-minute reserve.
    "mapping_profile": parts.hover_mission(drag_area_m2=0.03, segments=(
        Segment("hover", 30.0), Segment("climb", 24.0, climb_rate_m_s=2.5),
        Segment("forward", 300.0, airspeed_m_s=12.0), Segment("forward", 240.0, airspeed_m_s=8.0),
        Segment("descent", 40.0, climb_rate_m_s=1.5), Segment("hover", 30.0)), reserve_min=2.0),
}


@pytest.fixture(scope="module")
def reference() -> dict[str, tuple[dict[str, int], list[brute.Record]]]:
    lib = parts.mixed_library()
    out = {}
    for name, mission in MISSIONS.items():
        counts, feasible = brute.evaluate(lib, mission)
        brute.refine(lib, mission, feasible)
        out[name] = (counts, feasible)
    return out


def _key(row: object) -> tuple[object, ...]:
    return (row.battery_id, row.esc_id, row.motor_id, row.propeller_id, row.packs_in_parallel)  # type: ignore[attr-defined]


def _brute_key(record: brute.Record) -> tuple[object, ...]:
    return (*record.ids, record.key[1])


@pytest.mark.parametrize("objective", ["cruise_power", "endurance", "specific_thrust", "mass", "cost",
                                       "profile_energy"])
@pytest.mark.parametrize("kind", ["hover", "cruise", "hexa_motor_out", "hot_burst", "cold_day", "forward_flight",
                                  "climb", "coaxial_descent", "forward_hot_cold", "hover_profile", "cruise_profile",
                                  "mapping_profile"])
def test_order_and_metrics_equal_brute_force(reference: dict, kind: str, objective: str) -> None:
    mission: MissionSpec = MISSIONS[kind]
    counts, feasible = reference[kind]
    assert len(feasible) >= 5, "the hand-built library must leave several feasible candidates"
    out = rank(parts.mixed_library(), mission, objective=objective, top_n=500)
    expected = sorted(feasible, key=lambda r: brute.sort_key(r, objective, "refined_endurance_min"))
    assert [_key(r) for r in out.top] == [_brute_key(r) for r in expected]
    for row, ref in zip(out.top, expected, strict=True):
        m = ref.metrics
        assert row.cruise["electrical_power_w"] == pytest.approx(m["electrical_power_w"], rel=REL)
        assert row.cruise["duty"] == pytest.approx(m["duty"], rel=REL)
        assert row.cruise["rpm"] == pytest.approx(m["rpm"], rel=REL)
        assert row.cruise["bus_current_a"] == pytest.approx(m["bus_current_a"], rel=REL)
        assert row.cruise["specific_thrust_g_per_w"] == pytest.approx(m["specific_thrust_g_per_w"], rel=REL)
        assert row.cruise["drive_efficiency"] == pytest.approx(m["drive_efficiency"], rel=REL)
        assert row.cruise["thrust_n"] == pytest.approx(m["thrust_n"], rel=REL)
        extra = sum(row.cruise["losses"][k] for k in ("pwm_ripple_w", "switching_w", "dead_time_w",
                                                      "input_capacitor_w", "calibrated_pwm_w"))
        assert extra == pytest.approx(m["extra_loss_w"], rel=REL)
        assert row.full_throttle["thrust_to_weight"] == pytest.approx(m["thrust_to_weight"], rel=REL)
        assert row.full_throttle["motor_current_a"] == pytest.approx(m["full_motor_current_a"], rel=REL)
        assert row.full_throttle["thrust_n"] == pytest.approx(m["full_thrust_n"], rel=REL)
        assert row.all_up_mass_g == pytest.approx(1000.0 * m["mass_kg"], rel=REL)
        assert row.cost == pytest.approx(m["cost"], rel=REL)
        assert row.screening_endurance_min == pytest.approx(m["endurance_min"], rel=REL)
        assert row.endurance_min == pytest.approx(m["refined_endurance_min"], rel=REL)
        assert row.endurance_refined
        if mission.segments:
            assert row.profile is not None and row.profile["completed"]
            assert row.profile["total_energy_wh"] == pytest.approx(m["profile_energy_wh"], rel=REL)
        else:
            assert row.profile is None
    rejected = {k: v for k, v in out.rejected.items() if v}
    assert rejected == counts
    if mission.min_thrust_to_weight_motor_out is not None:
        assert counts.get("motor_out_thrust_short", 0) > 0  # the limit bites on this library
    if mission.temperature_effects:
        assert counts.get("winding_over_temperature", 0) > 0
    if mission.cold_day_temperature_c is not None:
        assert counts.get("cold_day_thrust_short", 0) > 0
    if mission.segments:
        assert counts.get("profile_reserve_short", 0) > 0  # the profile bites on this library
    assert out.feasible == len(feasible)
    assert out.feasible + sum(out.rejected.values()) == out.combinations
    assert set(out.rejected) == set(REASONS)


@pytest.mark.parametrize("kind", ["hover", "cruise"])
def test_pareto_set_is_the_brute_force_non_dominated_set(reference: dict, kind: str) -> None:
    _, feasible = reference[kind]
    out = rank(parts.mixed_library(), MISSIONS[kind], top_n=0)
    got = {_key(r) for r in out.pareto}
    by_key = {r.key: _brute_key(r) for r in feasible}
    assert got == {by_key[k] for k in brute.pareto(feasible)}
    assert len(got) == len(out.pareto)
    # Non-dominated among themselves, and every feasible candidate outside is dominated by a member.
    vec = {_key(r): (-r.screening_endurance_min, -r.full_throttle["thrust_to_weight"], r.all_up_mass_g, r.cost)
           for r in out.pareto}
    for a in vec.values():
        assert not any(all(x <= y for x, y in zip(b, a, strict=True)) and b != a for b in vec.values())


def test_top_n_refines_the_best_screened_and_re_ranks_them(reference: dict) -> None:
    """With top_n below the feasible count, the rows are the screening top N, re-ranked after refinement."""
    counts, feasible = reference["hover"]
    top_n = 4
    out = rank(parts.mixed_library(), MISSIONS["hover"], objective="endurance", top_n=top_n)
    screened = sorted(feasible, key=lambda r: brute.sort_key(r, "endurance"))[:top_n]
    expected = sorted(screened, key=lambda r: brute.sort_key(r, "endurance", "refined_endurance_min"))
    assert [_key(r) for r in out.top] == [_brute_key(r) for r in expected]
    assert [r.rank for r in out.top] == list(range(1, top_n + 1))
    assert np.all(np.diff([r.endurance_min for r in out.top]) <= 0)


@pytest.mark.parametrize("kind", ["hover", "cruise"])
def test_a_propeller_made_for_the_other_kind_of_flight_is_refused(reference: dict, kind: str) -> None:
    """prop_application: the fixed-wing 10 in propeller never hovers, the multirotor 12 in one never cruises."""
    counts, feasible = reference[kind]
    assert counts.get("prop_application", 0) > 0  # the brute force refuses some, for this reason
    out = rank(parts.mixed_library(), MISSIONS[kind], top_n=500)
    assert out.rejected["prop_application"] == counts["prop_application"]
    refused = 44 if kind == "hover" else 45
    assert refused not in {row.propeller_id for row in out.top}
    twin = 41 if kind == "hover" else 42  # the same propeller marked "any" is still ranked
    if kind == "hover":
        assert twin in {row.propeller_id for row in out.top}
