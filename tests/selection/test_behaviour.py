"""Orchestrator behaviour: chunking, processes, progress, cancel, determinism, mass feedback and the trade-off."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from server.physics import drive
from server.physics.drive_screen import cruise_point, full_throttle
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from server.selection import ENGINE_VERSION, PackLibrary, PartsLibrary, rank
from server.selection.enumerate import batch_for
from server.selection.library import MissionSpec

from . import parts


def _strip(outcome: object) -> dict[str, object]:
    d = outcome.as_dict()  # type: ignore[attr-defined]
    d.pop("timings")
    return d


@pytest.mark.parametrize("kind", ["hover", "cruise"])
def test_chunk_size_does_not_change_results(kind: str) -> None:
    mission = parts.hover_mission() if kind == "hover" else parts.cruise_mission(duty_max=0.99,
                                                                                  min_thrust_to_weight=0.3)
    results = [_strip(rank(parts.library(), mission, top_n=8, chunk_size=size)) for size in (1, 7, 40, 10**6)]
    assert all(r == results[0] for r in results[1:])


def test_two_processes_give_the_same_outcome_as_one() -> None:
    one = rank(parts.library(), parts.hover_mission(), top_n=8, chunk_size=5)
    two = rank(parts.library(), parts.hover_mission(), top_n=8, chunk_size=5, processes=2)
    assert _strip(two) == _strip(one)


def test_progress_is_monotone_ends_at_one_and_counts_add_up() -> None:
    seen: list[float] = []
    out = rank(parts.library(), parts.hover_mission(), top_n=3, chunk_size=10, progress=seen.append)
    assert len(seen) > 5
    assert seen[-1] == 1.0 and seen[0] >= 0.0
    assert all(b >= a for a, b in zip(seen[:-1], seen[1:], strict=True))
    assert out.feasible + sum(out.rejected.values()) == out.combinations == 3 * 2 * 2 * 3 * 3
    assert out.engine_version == ENGINE_VERSION
    assert set(out.timings) == {"enumerate_s", "screen_s", "refine_s", "total_s"}


def test_cancel_between_chunks_stops_the_run() -> None:
    polls = []

    def cancel() -> bool:
        polls.append(1)
        return len(polls) > 3

    seen: list[float] = []
    out = rank(parts.library(), parts.hover_mission(), top_n=3, chunk_size=10, should_cancel=cancel,
               progress=seen.append)
    assert out.cancelled
    assert 0 < out.evaluated < rank(parts.library(), parts.hover_mission(), top_n=0).evaluated
    assert out.top == [] and out.pareto == []
    assert seen[-1] < 1.0


def _packs(pk: PackLibrary, order: np.ndarray, ids: list[int]) -> PackLibrary:
    """The packs of ``pk`` in ``order`` (rows may repeat) under new ids."""
    return PackLibrary(ids=np.array(ids), **{f: getattr(pk, f)[order] for f in (
        "cells_series", "cells_parallel", "capacity_ah", "cell_resistance_ohm", "full_voltage_per_cell_v",
        "max_continuous_c", "mass_kg", "cost")})


def test_library_row_order_does_not_change_the_ranking() -> None:
    """Rows shuffled, plus an identical twin of a pack under another id: same order, the twin by its id."""
    lib = parts.library()
    pk = lib.packs
    order = np.array([2, 0, 1, 0])
    twin = _packs(pk, order, [13, 11, 12, 10])
    out = rank(replace(lib, packs=twin), parts.hover_mission(), top_n=60)
    ids = [r.battery_id for r in out.top]
    plain = [r.battery_id for r in rank(lib, parts.hover_mission(), top_n=60).top]
    # Pack 10 is pack 11's twin: it appears right before each 11 and the rest keeps its order.
    assert [i for i in ids if i != 10] == plain
    for pos, i in enumerate(ids):
        if i == 10:
            assert ids[pos + 1] == 11


def test_a_twin_with_assumed_parameters_ranks_after_the_measured_one() -> None:
    """Twin packs with equal metrics: the tie goes to the one with fewer assumed (prior) parameters, even when its
    id is higher; with nothing assumed the lower id wins as before."""
    lib = parts.library()
    pk = lib.packs
    order = np.array([0, 0, 1, 2])
    twin = replace(_packs(pk, order, [10, 11, 12, 13]), assumed=np.array([2.0, 0.0, 0.0, 0.0]))
    ids = [r.battery_id for r in rank(replace(lib, packs=twin), parts.hover_mission(), top_n=60).top]
    assert 10 in ids and 11 in ids
    assert all(ids[pos - 1] == 11 for pos, i in enumerate(ids) if i == 10)
    plain = [r.battery_id for r in rank(replace(lib, packs=replace(twin, assumed=None)), parts.hover_mission(),
                                        top_n=60).top]
    assert all(plain[pos + 1] == 11 for pos, i in enumerate(plain) if i == 10)


def test_heavier_pack_raises_hover_thrust_per_rotor_and_power() -> None:
    """Mass feedback: the same system with a 200 g heavier pack needs (m g0 / N) more thrust per rotor."""
    lib = parts.library()
    mission = parts.hover_mission(max_packs_in_parallel=1)
    heavy = replace(lib, packs=replace(lib.packs, mass_kg=lib.packs.mass_kg + 0.2))
    light_rows = {(r.battery_id, r.esc_id, r.motor_id, r.propeller_id): r for r in rank(lib, mission, top_n=99).top}
    heavy_rows = {(r.battery_id, r.esc_id, r.motor_id, r.propeller_id): r for r in rank(heavy, mission, top_n=99).top}
    common = set(light_rows) & set(heavy_rows)
    assert common
    for key in common:
        a, b = light_rows[key], heavy_rows[key]
        assert b.all_up_mass_g == pytest.approx(a.all_up_mass_g + 200.0)
        assert b.cruise["thrust_n"] - a.cruise["thrust_n"] == pytest.approx(0.2 * 9.80665 / 4, rel=1e-9)
        assert b.cruise["electrical_power_w"] > a.cruise["electrical_power_w"]
        assert b.cruise["duty"] > a.cruise["duty"]


def _trade_library() -> PartsLibrary:
    """Same motor, ESC and propeller; a 3S 6 Ah and a 6S 3 Ah pack of equal mass and equal energy.

    4 and 8 mOhm per cell give both packs the same I^2 R at the same power (R scales with S^2 / capacity), so the
    difference at the hover point is the ESC's partial-throttle loss, which the 6S pays at its lower duty.
    Current ratings are generous (60 A parts, 60C packs) so that only thrust-to-weight separates the packs.
    """
    lib = parts.library()
    packs = PackLibrary(ids=[3, 6], cells_series=[3, 6], cells_parallel=[1, 1], capacity_ah=[6.0, 3.0],
                        cell_resistance_ohm=[0.004, 0.008], full_voltage_per_cell_v=[4.2, 4.2],
                        max_continuous_c=[60.0, 60.0], mass_kg=[0.50, 0.50], cost=[50.0, 50.0])
    motors = replace(lib.motors, max_current_a=np.array([60.0, 60.0, 60.0]))
    escs = replace(lib.escs, continuous_current_a=np.array([80.0, 80.0]))
    return PartsLibrary(packs, escs, motors, lib.propellers)


def test_lower_cell_pack_that_meets_the_floor_beats_the_higher_cell_pack_on_cruise_power() -> None:
    mission = parts.hover_mission(max_packs_in_parallel=1, min_thrust_to_weight=1.5, duty_min=0.1, duty_max=0.95)
    out = rank(_trade_library(), mission, objective="cruise_power", top_n=99)
    rows = {(r.battery_id, r.esc_id, r.motor_id, r.propeller_id): r for r in out.top}
    pairs = [(rows[(3, e, m, q)], rows[(6, e, m, q)]) for (p, e, m, q) in rows if p == 3 and (6, e, m, q) in rows]
    assert pairs, "some motor/prop/ESC must be feasible on both packs"
    for low, high in pairs:
        assert low.cruise["duty"] > high.cruise["duty"]
        assert low.cruise["electrical_power_w"] < high.cruise["electrical_power_w"]
        esc_low = sum(low.cruise["losses"][k] for k in ("switching_w", "pwm_ripple_w", "dead_time_w",
                                                         "input_capacitor_w", "calibrated_pwm_w"))
        esc_high = sum(high.cruise["losses"][k] for k in ("switching_w", "pwm_ripple_w", "dead_time_w",
                                                           "input_capacitor_w", "calibrated_pwm_w"))
        assert esc_high > esc_low
        assert high.full_throttle["thrust_to_weight"] > low.full_throttle["thrust_to_weight"]
        assert out.top.index(low) < out.top.index(high)
    # Raise the floor above what the 3S gives and the 6S takes over for that motor/prop/ESC.
    low, high = pairs[0]
    floor = 0.5 * (low.full_throttle["thrust_to_weight"] + high.full_throttle["thrust_to_weight"])
    strict = rank(_trade_library(), replace(mission, min_thrust_to_weight=floor), top_n=99)
    keys = {(r.battery_id, r.esc_id, r.motor_id, r.propeller_id) for r in strict.top}
    assert (high.battery_id, high.esc_id, high.motor_id, high.propeller_id) in keys
    assert (low.battery_id, low.esc_id, low.motor_id, low.propeller_id) not in keys


def test_unknown_cost_sorts_last_for_the_cost_objective() -> None:
    lib = parts.library()
    lib = replace(lib, motors=replace(lib.motors, cost=np.array([np.nan, 35.0, 45.0])))
    out = rank(lib, parts.hover_mission(), objective="cost", top_n=99)
    costs = [r.cost for r in out.top]
    known = [c for c in costs if c is not None]
    assert None in costs and costs[-costs.count(None):] == [None] * costs.count(None)
    assert known == sorted(known)


def test_cruise_point_near_full_throttle_matches_the_physics_engine() -> None:
    """Requests just below, at and above full-throttle thrust: saturated, exact d = 1 and unreachable."""
    lib = parts.library()
    mission = MissionSpec(rotor_count=4, frame_mass_kg=1.0, kind="hover", cruise_state_of_charge=0.5)
    model = mission.propeller_model(lib.propellers)
    one = np.array([1])
    batch = batch_for(lib, mission, one, one, one, one, np.array([0]))
    ft = full_throttle(batch, model, 4.0, batch.voc_cruise_v)
    full_mass = float(ft.thrust_n[0]) * 4 / 9.80665
    fractions = np.array([0.5, 0.99, 0.9999, 1.0 - 1e-7, 1.0 + 1e-6, 1.01])
    batch = replace(batch, mass_kg=full_mass * fractions)
    got = cruise_point(batch, model, 4.0, mission.thrust_per_rotor_n(batch.mass_kg))
    es, mo, pk = lib.escs, lib.motors, lib.packs
    op = drive.for_thrust(got.thrust_n, motor=MotorParams(mo.kv_rpm_per_v[1], mo.resistance_ohm[1],
                                                          mo.no_load_current_a[1], inductance_h=30e-6),
                          esc=EscParams(on_path_resistance_ohm=es.r_on_path_ohm[1],
                                        switching_frequency_hz=es.switching_frequency_hz[1],
                                        transition_time_s=es.switching_time_s[1], dead_time_s=es.dead_time_s[1],
                                        body_diode_drop_v=es.diode_drop_v[1], input_esr_ohm=es.input_esr_ohm[1],
                                        pwm_loss_coefficient=es.pwm_loss_coefficient[1]),
                          propeller=PropellerTable.from_rows(lib.propellers.diameter_m[0], [parts.static_rows()[0]]),
                          open_circuit_voltage_v=batch.voc_cruise_v, pack_resistance_ohm=batch.pack_resistance_ohm,
                          rotor_count=4, density_kg_m3=mission.density_kg_m3)
    reachable = np.isfinite(op.duty)
    np.testing.assert_array_equal(got.reachable, reachable)
    assert reachable[:4].all() and not reachable[-1]
    np.testing.assert_allclose(got.duty[reachable], op.duty[reachable], rtol=1e-9)
    np.testing.assert_allclose(got.bus_voltage_v[reachable], op.bus_voltage_v[reachable], rtol=1e-9)
    np.testing.assert_allclose(got.bus_current_a[reachable], op.bus_current_a[reachable], rtol=1e-9)
    assert pk.cells_series[1] == 4


def test_result_rows_carry_every_loss_term_of_the_physics_engine() -> None:
    """One loss vocabulary: a ranking row names exactly the terms of operating_point.LOSS_TERMS (+ the pack),
    and their values equal the reference solver's breakdown of the same cruise point."""
    from server.physics.operating_point import LOSS_TERMS, loss_value

    library, mission = parts.library(), parts.hover_mission()
    row = rank(library, mission, top_n=1).top[0]
    assert set(row.cruise["losses"]) == {name for name, _, _ in LOSS_TERMS} | {"pack_w"}
    es, mo, pk = library.escs, library.motors, library.packs
    e, m, p = (int(np.flatnonzero(x.ids == i)[0]) for x, i in ((es, row.esc_id), (mo, row.motor_id),
                                                                 (pk, row.battery_id)))
    q = int(np.flatnonzero(library.propellers.ids == row.propeller_id)[0])
    batch = batch_for(library, mission, np.array([p]), np.array([row.packs_in_parallel]), np.array([e]),
                      np.array([m]), np.array([q]))
    op = drive.for_thrust(row.cruise["thrust_n"], motor=MotorParams(mo.kv_rpm_per_v[m], mo.resistance_ohm[m],
                                                                     mo.no_load_current_a[m], mo.inductance_h[m]),
                          esc=es.params(np.array([e])), propeller=library.propellers.static.take(np.array([q])),
                          open_circuit_voltage_v=batch.voc_cruise_v, pack_resistance_ohm=batch.pack_resistance_ohm,
                          rotor_count=mission.rotor_count, density_kg_m3=mission.density_kg_m3)
    for name, where, _ in LOSS_TERMS:
        assert row.cruise["losses"][name] == pytest.approx(float(loss_value(op, where)[0]), rel=1e-6, abs=1e-9), name


def test_cruise_point_on_a_resistive_pack_is_the_physics_engines_healthy_root() -> None:
    """A pack of 1 Ω per cell puts full throttle past the maximum-power point: the screening cruise point must
    find the same healthy (high-voltage) bus as drive.for_thrust, at thrusts only a partial duty reaches."""
    lib = parts.library()
    lib = replace(lib, packs=replace(lib.packs, cell_resistance_ohm=np.array([1.0, 1.0, 1.0])))
    mission = MissionSpec(rotor_count=1, frame_mass_kg=0.1, kind="hover", cruise_state_of_charge=0.9)
    model = mission.propeller_model(lib.propellers)
    one = np.array([1])
    batch = batch_for(lib, mission, np.array([0]), one, one, np.array([0]), np.array([0]))
    es, mo = lib.escs, lib.motors
    common = {"motor": MotorParams(mo.kv_rpm_per_v[0], mo.resistance_ohm[0], mo.no_load_current_a[0],
                                   inductance_h=mo.inductance_h[0]),
              "esc": es.params(one), "propeller": lib.propellers.static.take(np.array([0])),
              "open_circuit_voltage_v": batch.voc_cruise_v, "pack_resistance_ohm": batch.pack_resistance_ohm,
              "rotor_count": 1, "density_kg_m3": mission.density_kg_m3}
    duties = np.linspace(0.1, 1.0, 91)
    sweep = drive.at_duty(duties, **common)  # type: ignore[arg-type]
    peak = float(np.nanmax(sweep.thrust_n))
    assert float(sweep.thrust_n[-1]) < 0.95 * peak  # full throttle is well past the maximum-power point
    thrusts = peak * np.array([0.3, 0.6, 0.9, 0.99, 1.05])
    got = cruise_point(batch, model, 1.0, thrusts)
    op = drive.for_thrust(thrusts, **common)  # type: ignore[arg-type]
    reachable = np.isfinite(op.duty)
    assert reachable.tolist() == [True, True, True, True, False]
    np.testing.assert_array_equal(got.reachable, reachable)
    np.testing.assert_allclose(got.duty[reachable], op.duty[reachable], rtol=1e-9)
    np.testing.assert_allclose(got.bus_voltage_v[reachable], op.bus_voltage_v[reachable], rtol=1e-9)
