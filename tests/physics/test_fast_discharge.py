"""The fast constant-thrust discharge (:func:`server.physics.fast.constant_thrust`: every SOC node solved at once by
the screening solver, the march vectorised over the nodes) and the one-system screening solver
(:class:`server.physics.system_batch.SystemBatch`) against the physics engine's reference
(:func:`server.physics.endurance.constant_thrust`: bracketed roots per node, the step-by-step march;
:func:`server.physics.drive.for_thrust` and :func:`~server.physics.drive.at_duty`).

Issue 16 asks the faster endurance to stay within 0.5 % of the reference; the two solve the same equations, so
we hold them far tighter (1e-9 relative), with the same stop reason, on BAT-8, on published propeller tables
(UIUC, tests/data/reference/propellers) with every partial-throttle loss, for every stop reason.
"""

from __future__ import annotations

from dataclasses import fields, replace

import numpy as np
import pytest

from server.physics import drive, endurance, fast, forward_flight
from server.physics._types import Status
from server.physics.battery import PackParams
from server.physics.endurance import StopReason
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable, disk_area_m2
from server.physics.system_batch import SystemBatch
from tests.physics.conftest import REFERENCE_DIR, read_csv

REL = 1e-9
PACK_3S = PackParams(cells_series=3, capacity_ah=5.0, cell_resistance_ohm=0.010)  # BAT-8
PACK_4S = PackParams(cells_series=4, capacity_ah=5.2, cell_resistance_ohm=0.006)


def _uiuc_static() -> PropellerTable:
    # [DATA] UIUC Propeller Database vol. 1, sf_10x4.7 static (tests/data/reference/propellers/static)
    data = read_csv(REFERENCE_DIR / "static" / "sf_10x4.7_b2.csv")
    return PropellerTable(0.254, data["rpm"], data["ct"], data["cp"])


def _uiuc_forward() -> PropellerTable:
    # [DATA] UIUC Propeller Database vol. 1, sf_10x4.7 at 5018 rpm versus J (tests/data/reference/propellers/forward)
    data = read_csv(REFERENCE_DIR / "forward" / "sf_10x4.7_b2_5018rpm.csv")
    return PropellerTable(0.254, data["j"], data["ct"], data["cp"], "advance_ratio")


def _lossy() -> dict[str, object]:
    """A motor and ESC with every partial-throttle loss term (ripple, switching, dead time, capacitor, k_pwm)."""
    return {"motor": MotorParams(880.0, 0.11, 0.6, inductance_h=40e-6, max_current_a=20.0),
            "esc": EscParams(on_path_resistance_ohm=0.008, pwm_loss_coefficient=0.3, max_current_a=30.0)}


def _same(fast_result: fast.FastThrustResult, reference: endurance.ThrustEnduranceResult) -> None:
    assert fast_result.stop_reason.tolist() == np.ravel(reference.stop_reason).tolist()
    np.testing.assert_allclose(fast_result.time_s, np.ravel(reference.time_s), rtol=REL, atol=1e-9)
    np.testing.assert_allclose(fast_result.final_state_of_charge, np.ravel(reference.final_state_of_charge),
                               rtol=REL)
    for name in ("start_current_a", "end_current_a", "start_voltage_v", "end_voltage_v"):
        np.testing.assert_allclose(getattr(fast_result, name), np.ravel(getattr(reference, name)), rtol=REL)
    assert fast_result.start is not None and fast_result.end is not None
    assert reference.start is not None and reference.end is not None
    for ours, theirs in ((fast_result.start, reference.start), (fast_result.end, reference.end)):
        for f in fields(fast.DischargePoint):
            np.testing.assert_allclose(getattr(ours, f.name), np.ravel(getattr(theirs, f.name)), rtol=REL)


def test_bat_8_fast() -> None:
    # BAT-8 [CALC] solve_ivp + OP closed form: 0.5 % on t, 1e-4 on start/end states (as the reference is held)
    system = {"motor": MotorParams(920.0, 0.10, 0.5, inductance_h=np.inf), "esc": EscParams.lossless_switching(0.0),
              "propeller": PropellerTable.constant(0.254, 0.1564, 0.0763), "rotor_count": 4.0}
    result = fast.constant_thrust(4.90332, pack=PACK_3S, **system)  # type: ignore[arg-type]
    assert result.stop_reason.tolist() == [StopReason.USABLE_CAPACITY]
    assert result.time_s[0] == pytest.approx(667.82, rel=5e-3)
    assert result.start is not None and result.end is not None
    assert result.start.duty[0] == pytest.approx(0.50789, rel=1e-4)
    assert result.start.pack_current_a[0] == pytest.approx(19.9427, rel=1e-4)
    assert result.end.duty[0] == pytest.approx(0.58017, rel=1e-4)
    assert result.end.bus_voltage_v[0] == pytest.approx(10.5066, rel=1e-4)
    assert result.screened is not None and result.screened.all()
    _same(result, endurance.constant_thrust(4.90332, pack=PACK_3S, **system))  # type: ignore[arg-type]


@pytest.mark.parametrize("pack", [
    PACK_4S,
    replace(PACK_4S, cutoff_voltage_per_cell_v=np.float64(3.62)),  # stops on the under-load cut-off
    replace(PACK_4S, peukert_exponent=np.float64(1.05), usable_fraction=np.float64(0.7)),
])
def test_every_stop_reason_as_the_reference_on_a_published_table(pack: PackParams) -> None:
    # Hover on the UIUC sf_10x4.7 static table, 4 rotors: light to impossible thrusts, and a NaN
    thrust = np.array([2.0, 4.0, 6.0, 9.5, 12.0, 14.5, 15.0, 20.0, np.nan])
    kwargs = {**_lossy(), "propeller": _uiuc_static(), "rotor_count": 4.0, "density_kg_m3": 1.18}
    for start_soc in (1.0, 0.83):
        ours = fast.constant_thrust(thrust, pack=pack, initial_state_of_charge=start_soc, **kwargs)  # type: ignore[arg-type]
        reference = endurance.constant_thrust(thrust, pack=pack, initial_state_of_charge=start_soc,
                                              **kwargs)  # type: ignore[arg-type]
        _same(ours, reference)
    reasons = set(ours.stop_reason.tolist())
    assert {StopReason.USABLE_CAPACITY, StopReason.THRUST_UNREACHABLE, StopReason.INVALID_INPUT} <= reasons
    if float(pack.cutoff_voltage_per_cell_v) > 3.5:
        assert StopReason.CUTOFF_VOLTAGE in reasons


def test_axial_flight_on_a_forward_table() -> None:
    kwargs = {**_lossy(), "propeller": _uiuc_forward(), "rotor_count": 1.0, "airspeed_m_s": 6.0}
    thrust = np.array([1.0, 2.5, 4.0])
    ours = fast.constant_thrust(thrust, pack=PACK_3S, **kwargs)  # type: ignore[arg-type]
    assert ours.screened is not None and ours.screened.all()
    _same(ours, endurance.constant_thrust(thrust, pack=PACK_3S, **kwargs))  # type: ignore[arg-type]


def test_a_multirotor_flight_state_as_the_reference() -> None:
    """Forward flight at 12 m/s and a 2 m/s descent of a quad (docs/model-reference.md#multirotor-flight-state): the
    same flight state in both solvers, through drive_screen.cruise_point and drive.for_thrust."""
    table = _uiuc_static()
    for speed, climb in ((12.0, 0.0), (0.0, -2.0)):
        thrust = 5.0
        weight = forward_flight.weight_for_rotor_thrust_n(thrust, 4.0, 1.2, speed, climb, 0.02)
        flight = forward_flight.flight_state(weight, 4.0, disk_area_m2(table.diameter_m), 1.2, speed, climb, 0.02)
        kwargs = {**_lossy(), "propeller": table, "rotor_count": 4.0, "density_kg_m3": 1.2, "flight": flight}
        ours = fast.constant_thrust(thrust, pack=PACK_4S, **kwargs)  # type: ignore[arg-type]
        _same(ours, endurance.constant_thrust(thrust, pack=PACK_4S, **kwargs))  # type: ignore[arg-type]
        static = fast.constant_thrust(thrust, pack=PACK_4S, **{**kwargs, "flight": None})  # type: ignore[arg-type]
        if speed > 0:  # the flight state really acts (a descent is no cheaper than hover: the same flight)
            assert ours.time_s[0] != pytest.approx(static.time_s[0], rel=1e-3)


def test_a_table_the_segment_model_cannot_solve_goes_through_the_reference() -> None:
    """Per-candidate tables (as the draws of a band): a row whose thrust falls with speed has no unique segment root;
    that candidate is flown by the reference solver, the others by the screening solver, in one call."""
    table = _uiuc_static()
    rows = np.broadcast_to(table.thrust_coefficient, (3, table.thrust_coefficient.shape[-1])).copy()
    rows[1, 3:] *= 0.5  # thrust drops with speed: not monotone
    tables = PropellerTable(np.full(3, 0.254), np.broadcast_to(table.axis_values, rows.shape), rows,
                            np.broadcast_to(table.power_coefficient, rows.shape))
    kwargs = {**_lossy(), "propeller": tables, "rotor_count": 4.0}
    ours = fast.constant_thrust(np.array([3.0, 1.5, 6.0]), pack=PACK_4S, **kwargs)  # type: ignore[arg-type]
    assert ours.screened is not None and ours.screened.tolist() == [True, False, True]
    _same(ours, endurance.constant_thrust(np.array([3.0, 1.5, 6.0]), pack=PACK_4S, **kwargs))  # type: ignore[arg-type]


def test_a_current_factor_drains_the_pack_as_scaled_reference_currents() -> None:
    """The band's model-discrepancy draws scale the current that drains the capacity: the same as the march on the
    reference solver's node currents times the factor."""
    factor = np.array([0.9, 1.0, 1.15])
    kwargs = {**_lossy(), "propeller": _uiuc_static(), "rotor_count": 4.0}
    ours = fast.constant_thrust(5.0, pack=PACK_4S, soc_step=0.04, current_factor=factor, **kwargs)  # type: ignore[arg-type]
    nodes = fast.constant_thrust_nodes(1.0, PACK_4S, (3,), 0.04)
    op = drive.for_thrust(5.0, open_circuit_voltage_v=PACK_4S.open_circuit_voltage_v(nodes),
                          pack_resistance_ohm=PACK_4S.resistance_ohm, **kwargs)  # type: ignore[arg-type]
    reachable = ~np.isin(op.status, [Status.INFEASIBLE_THRUST, Status.NO_SOLUTION])
    reference = fast.march_constant_thrust(nodes, op.pack_current_a * factor[:, None], op.bus_voltage_v, op.duty,
                                           reachable, op.status == Status.NON_FINITE, pack=PACK_4S, soc_step=0.04)
    np.testing.assert_allclose(ours.time_s, reference.time_s, rtol=REL)
    assert np.all(np.diff(ours.time_s) < 0)  # more current drawn, shorter flight


def _random_systems(n: int, seed: int) -> tuple[MotorParams, EscParams, np.ndarray]:
    rng = np.random.default_rng(seed)
    motor = MotorParams(rng.uniform(500, 1200, n), rng.uniform(0.04, 0.2, n), rng.uniform(0.3, 1.2, n),
                        inductance_h=rng.uniform(15e-6, 80e-6, n), max_current_a=rng.uniform(10, 40, n))
    esc = EscParams(on_path_resistance_ohm=rng.uniform(0.003, 0.015, n),
                    switching_frequency_hz=rng.choice([16e3, 24e3, 48e3], n),
                    transition_time_s=rng.uniform(50e-9, 300e-9, n), dead_time_s=rng.uniform(0.1e-6, 1e-6, n),
                    input_esr_ohm=rng.uniform(0.005, 0.05, n), pwm_loss_coefficient=rng.uniform(0.0, 0.5, n))
    return motor, esc, rng.uniform(0.01, 0.08, n)


def _columns(params: MotorParams | EscParams) -> MotorParams | EscParams:
    return replace(params, **{f.name: np.reshape(getattr(params, f.name), (-1, 1)) for f in fields(params)})


def test_system_batch_points_equal_the_reference_solvers() -> None:
    """Thrust requests from light to beyond full throttle (including the thin band just below it where the reference
    reports the full-throttle point) and full throttle itself, on 40 random systems with the UIUC table."""
    motor, esc, resistance = _random_systems(40, 7)
    table = _uiuc_static()
    batch = SystemBatch(motor=motor, esc=esc, propeller=table, pack_resistance_ohm=resistance, rotor_count=4.0)
    reference = {"motor": _columns(motor), "esc": _columns(esc), "propeller": table,
                 "pack_resistance_ohm": resistance[:, None], "rotor_count": 4.0}
    voc = np.array([[16.8, 14.8]])
    full = batch.full_throttle(voc)
    near_full = batch.full_throttle(15.6).thrust_n * (1.0 - np.array([[1e-3, 1e-6, 1e-13]]))
    thrusts = np.concatenate([np.broadcast_to(np.linspace(1.0, 12.0, 9), (40, 9)), near_full], axis=1)
    for points, op in (
        (full, drive.at_duty(1.0, open_circuit_voltage_v=voc, **reference)),  # type: ignore[arg-type]
        (batch.for_thrust(thrusts, 15.6),
         drive.for_thrust(thrusts, open_circuit_voltage_v=15.6, **reference)),  # type: ignore[arg-type]
    ):
        solved = np.isin(op.status, [Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR])
        assert solved.any()
        assert np.array_equal(points.reachable, solved)
        assert np.array_equal(points.data_error, op.status == Status.DATA_ERROR)
        for name in ("thrust_n", "duty", "bus_voltage_v", "bus_current_a", "motor_current_a"):
            np.testing.assert_allclose(getattr(points, name)[solved], getattr(op, name)[solved], rtol=REL)
    near = batch.for_thrust(thrusts, 15.6)
    assert not near.reachable[:, :9].all()  # the heaviest requests are out of reach
    assert np.any(near.duty[:, 9:] == 1.0) and np.any(near.duty[:, 9:] < 1.0)  # the band below full throttle: both


@pytest.mark.parametrize("flight_speed", [None, 12.0])
def test_operating_points_of_one_system_equal_the_reference(flight_speed: float | None) -> None:
    """Every field and status of predict's points (system_batch.operating_points) against drive.for_thrust and
    drive.at_duty: light to unreachable thrusts, the band just below full throttle, over-current, full throttle and
    partial duties, on the UIUC table with every loss term, with and without a forward-flight state."""
    from server.physics.esc import PartialThrottleLosses
    from server.physics.system_batch import operating_points

    table = _uiuc_static()
    kwargs = {**_lossy(), "propeller": table, "open_circuit_voltage_v": 15.6, "pack_resistance_ohm": 0.03,
              "rotor_count": 4.0, "density_kg_m3": 1.2}
    full = drive.at_duty(1.0, **kwargs)  # type: ignore[arg-type]
    thrusts = np.array([0.5, 2.0, 5.0, 9.0, float(full.thrust_n) * (1 - 1e-4), float(full.thrust_n) * (1 - 1e-13),
                        float(full.thrust_n) * 1.01, 30.0])
    flight = None
    if flight_speed is not None:
        weight = forward_flight.weight_for_rotor_thrust_n(thrusts, 4.0, 1.2, flight_speed, 0.0, 0.02)
        flight = forward_flight.flight_state(weight, 4.0, disk_area_m2(table.diameter_m), 1.2, flight_speed, 0.0,
                                             0.02)
    cases = [("thrust_n", thrusts, drive.for_thrust(thrusts, **kwargs, flight=flight)),  # type: ignore[arg-type]
             ("throttle", np.array([1.0, 0.4, 0.9, 1.0]), drive.at_duty(np.array([1.0, 0.4, 0.9, 1.0]),
                                                                         **kwargs))]  # type: ignore[arg-type]
    for kind, values, reference in cases:
        ours = operating_points(kind, values, **kwargs, flight=flight if kind == "thrust_n" else None)  # type: ignore[arg-type]
        assert ours.status.tolist() == reference.status.tolist()
        assert {Status.OK, Status.OVER_CURRENT} & set(ours.status.tolist())
        for f in fields(ours):
            if f.name == "esc_terms":
                for t in fields(PartialThrottleLosses):
                    np.testing.assert_allclose(getattr(ours.esc_terms, t.name), getattr(reference.esc_terms, t.name),
                                               rtol=REL, atol=1e-12, err_msg=t.name)
            else:
                np.testing.assert_allclose(getattr(ours, f.name), getattr(reference, f.name), rtol=REL, atol=1e-12,
                                           err_msg=f.name)
