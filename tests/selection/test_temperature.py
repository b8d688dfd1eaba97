"""Heat and cold in the ranking engine (server/selection/temperature.py, docs/model-reference.md#heat and #cold).

The brute-force equality of the ranking with these limits is in test_rank_vs_brute_force.py (missions
``hot_burst`` and ``cold_day``); here: the defaults reproduce reference model v1 exactly, the fast refinement
equals the reference one with hot windings and a warm pack, rows report the winding temperatures, runaway.
"""

from __future__ import annotations

from dataclasses import fields, replace

import numpy as np
import pytest

from server.physics.drive_screen import cruise_point, full_throttle_points
from server.physics.motor import resistance_at_temperature_ohm
from server.selection import MotorLibrary, PartsLibrary, rank
from server.selection.constraints import screen
from server.selection.enumerate import batch_for
from server.selection.refine import refine
from server.selection.result import CandidateSet

from . import parts


def _all(library: PartsLibrary) -> tuple[np.ndarray, ...]:
    n_p, n_e, n_m, n_q = library.sizes
    grid = np.meshgrid(np.arange(n_p), np.array([1]), np.arange(n_e), np.arange(n_m), np.arange(n_q), indexing="ij")
    return tuple(g.ravel() for g in grid)


@pytest.mark.parametrize("offset", [0.0, 10.0, -25.0])
def test_defaults_solve_exactly_what_reference_model_v1_solves(offset: float) -> None:
    """Without temperature effects or a cold day the screen solves the batch as built, at any air temperature: the
    same arrays, bit for bit, as the plain screening kernels."""
    library = parts.library()
    mission = parts.hover_mission(temperature_offset_c=offset, altitude_m=1500.0)
    model = mission.propeller_model(library.propellers)
    batch = batch_for(library, mission, *_all(library))
    sc = screen(batch, model, mission)
    assert sc.batch is batch and sc.heat is None and sc.cold_day is None
    cruise = cruise_point(batch, model, 4.0, mission.thrust_per_rotor_n(batch.mass_kg))
    low, full = full_throttle_points(batch, model, 4.0, (batch.voc_low_v, batch.voc_full_v))
    for got, want in ((sc.cruise, cruise), (sc.low, low), (sc.full, full)):
        for f in fields(want):
            np.testing.assert_array_equal(getattr(got, f.name), getattr(want, f.name))
    assert {c.reason for c in sc.checks}.isdisjoint({"winding_over_temperature", "cold_day_thrust_short",
                                                      "cold_day_endurance_short"})


def test_temperature_effects_heat_the_winding_and_warm_or_cool_the_pack() -> None:
    library = parts.library()
    mission = parts.hover_mission(temperature_effects=True, temperature_offset_c=30.0, burst_s=30.0)
    model = mission.propeller_model(library.propellers)
    batch = batch_for(library, mission, *_all(library))
    sc = screen(batch, model, mission)
    heat = sc.heat
    assert heat is not None
    assert heat.air_temperature_c == pytest.approx(15.0 - 0.0065 * 500.0 + 30.0, abs=0.01)  # ISA at 500 m + 30
    ok = np.isfinite(heat.cruise_winding_c) & sc.cruise.reachable & (sc.cruise.duty < 1.0)
    assert ok.any()
    # the winding is above the air, the burst ends hotter than the cruise, and the cruise point was solved with R at
    # the cruise winding temperature
    assert np.all(heat.cruise_winding_c[ok] > heat.air_temperature_c)
    assert np.all(heat.burst_winding_c[ok] >= heat.cruise_winding_c[ok])
    np.testing.assert_allclose(sc.batch.motor_resistance_ohm[ok],
                               resistance_at_temperature_ohm(batch.motor_resistance_ohm[ok], heat.cruise_winding_c[ok]),
                               rtol=1e-15)
    # a pack at 41.75 °C has a lower resistance than at its 25 °C reference
    assert np.all(sc.batch.pack_resistance_ohm < batch.pack_resistance_ohm)


def test_rows_report_winding_temperatures_only_when_asked() -> None:
    library = parts.library()
    plain = rank(library, parts.hover_mission(), top_n=3)
    assert all("winding_temperature_c" not in r.cruise and "winding_temperature_c" not in r.full_throttle
               for r in plain.top)
    hot = rank(library, parts.hover_mission(temperature_effects=True, temperature_offset_c=30.0, burst_s=30.0),
               top_n=3)
    assert hot.top
    for r in hot.top:
        cruise_c, burst_c = r.cruise["winding_temperature_c"], r.full_throttle["winding_temperature_c"]
        assert cruise_c is not None and burst_c is not None and 41.0 < cruise_c <= burst_c <= 100.0


def test_fast_refinement_equals_the_reference_with_temperature_effects() -> None:
    library = parts.library()
    mission = parts.hover_mission(temperature_effects=True, temperature_offset_c=-20.0)
    out = rank(library, mission, top_n=50)
    assert out.top
    idx = {name: {v: i for i, v in enumerate(part.ids.tolist())}
           for name, part in (("p", library.packs), ("e", library.escs), ("m", library.motors),
                              ("q", library.propellers))}
    pack = np.array([idx["p"][r.battery_id] for r in out.top])
    k = np.array([r.packs_in_parallel for r in out.top])
    esc = np.array([idx["e"][r.esc_id] for r in out.top])
    motor = np.array([idx["m"][r.motor_id] for r in out.top])
    prop = np.array([idx["q"][r.propeller_id] for r in out.top])
    model = mission.propeller_model(library.propellers)
    sc = screen(batch_for(library, mission, pack, k, esc, motor, prop), model, mission, all_violations=False)
    cs = CandidateSet(pack, k, esc, motor, prop, electrical_power_w=sc.electrical_power_w,
                      endurance_min=sc.endurance_min, specific_thrust_g_per_w=sc.specific_thrust_g_per_w,
                      thrust_to_weight=sc.thrust_to_weight, mass_kg=sc.mass_kg, cost=np.zeros(len(pack)))
    fast, _ = refine(library, mission, model, cs, method="fast")
    reference, _ = refine(library, mission, model, cs, method="reference")
    np.testing.assert_allclose(fast, reference, rtol=1e-9)
    # and a colder pack flies shorter than the same mission without temperature effects
    plain, _ = refine(library, replace(mission, temperature_effects=False), model, cs, method="fast")
    assert np.all(fast < plain)


def test_thermal_runaway_is_rejected_as_too_hot() -> None:
    library = parts.library()
    m = library.motors
    hot_motors = MotorLibrary(ids=m.ids, kv_rpm_per_v=m.kv_rpm_per_v, resistance_ohm=m.resistance_ohm,
                              no_load_current_a=m.no_load_current_a, inductance_h=m.inductance_h,
                              max_current_a=m.max_current_a, max_cells=m.max_cells, mass_kg=m.mass_kg, cost=m.cost,
                              thermal_resistance_k_per_w=np.full(3, 1e3), max_winding_temperature_c=[150.0] * 3)
    library = PartsLibrary(library.packs, library.escs, hot_motors, library.propellers)
    mission = parts.hover_mission(temperature_effects=True)
    model = mission.propeller_model(library.propellers)
    sc = screen(batch_for(library, mission, *_all(library)), model, mission)
    assert sc.heat is not None and np.all(sc.heat.runaway[np.isfinite(sc.cruise.duty)])
    out = rank(library, mission, top_n=1)
    assert out.feasible == 0 and out.rejected["winding_over_temperature"] > 0


def test_a_motor_without_thermal_data_takes_the_priors() -> None:
    m = parts.motors()
    # R_th = 0.1 K kg/W / mass, tau = R_th x mass x 500 J/(kg K) = 50 s, 100 °C (server/physics/priors.py, [MEM])
    np.testing.assert_allclose(m.thermal_resistance_k_per_w, 0.1 / np.array([0.060, 0.072, 0.095]), rtol=1e-15)
    np.testing.assert_allclose(m.thermal_time_constant_s, 50.0, rtol=1e-12)
    np.testing.assert_array_equal(m.max_winding_temperature_c, 100.0)
    with pytest.raises(ValueError, match="thermal_resistance_k_per_w"):
        MotorLibrary(ids=m.ids, kv_rpm_per_v=m.kv_rpm_per_v, resistance_ohm=m.resistance_ohm,
                     no_load_current_a=m.no_load_current_a, inductance_h=m.inductance_h, max_current_a=m.max_current_a,
                     max_cells=m.max_cells, mass_kg=m.mass_kg, cost=m.cost, thermal_resistance_k_per_w=[1.0, 2.0])
