"""Operating points: OP-1..5 (Drela 2007 model + the closed forms of docs/model-reference.md#operating-point), bus
consistency, statuses, and the vectorised solvers against the scalar brentq reference path (scalar_reference.py)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from server.physics import drive
from server.physics._types import Status
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from tests.physics import scalar_reference as ref

METHODS = ["auto", "root"]


@pytest.fixture
def op_system(motor_920kv_no_ripple: MotorParams, ideal_esc: EscParams,
              prop_10x7_5015: PropellerTable) -> dict[str, object]:
    # docs/model-reference.md#operating-point-check-cases: MOT motor, R_esc = 0, no partial-throttle terms (L -> inf)
    return {"motor": motor_920kv_no_ripple, "esc": ideal_esc, "propeller": prop_10x7_5015}


@pytest.mark.parametrize("method", METHODS)
def test_stiff_bus_full_throttle_op_1(op_system: dict[str, object], method: str) -> None:
    # OP-1 [CALC] closed form = brentq (817.479216); tol 1e-5
    op = drive.at_duty(1.0, open_circuit_voltage_v=11.1, method=method, **op_system)  # type: ignore[arg-type]
    assert op.status == Status.OK
    assert op.omega_rad_s == pytest.approx(817.4792, rel=1e-5)
    assert op.rpm == pytest.approx(7806.35, rel=1e-5)
    assert op.motor_current_a == pytest.approx(26.1484, rel=1e-5)
    assert op.thrust_n == pytest.approx(13.4990, rel=1e-5)
    assert op.shaft_power_w == pytest.approx(217.631, rel=1e-5)
    assert op.electrical_power_w == pytest.approx(290.247, rel=1e-5)


@pytest.mark.parametrize("method", METHODS)
def test_stiff_bus_partial_duty_op_2(op_system: dict[str, object], method: str) -> None:
    # OP-2 [CALC] closed form = brentq; tol 1e-5
    op = drive.at_duty(0.6, open_circuit_voltage_v=11.1, method=method, **op_system)  # type: ignore[arg-type]
    assert op.omega_rad_s == pytest.approx(532.1221, rel=1e-5)
    assert op.rpm == pytest.approx(5081.39, rel=1e-5)
    assert op.motor_current_a == pytest.approx(11.3675, rel=1e-5)
    assert op.thrust_n == pytest.approx(5.71967, rel=1e-5)
    assert op.shaft_power_w == pytest.approx(60.0238, rel=1e-5)
    assert op.electrical_power_w == pytest.approx(75.7074, rel=1e-5)


@pytest.mark.parametrize("method", METHODS)
def test_four_rotors_on_a_sagging_pack_op_3(op_system: dict[str, object], method: str) -> None:
    # OP-3 [CALC] closed form = brentq on V_bus (10.81948); tol 1e-5
    op = drive.at_duty(0.7, open_circuit_voltage_v=12.0, pack_resistance_ohm=0.030, rotor_count=4, method=method,
                       **op_system)  # type: ignore[arg-type]
    assert 0.10 + 4 * 0.7**2 * 0.030 == pytest.approx(0.15880, rel=1e-5)  # R' seen by the motor
    assert op.omega_rad_s == pytest.approx(594.2625, rel=1e-5)
    assert op.rpm == pytest.approx(5674.79, rel=1e-5)
    assert op.motor_current_a == pytest.approx(14.0539, rel=1e-5)
    assert op.pack_current_a == pytest.approx(39.3508, rel=1e-5)
    assert op.bus_voltage_v == pytest.approx(10.81948, rel=1e-5)
    assert op.thrust_n == pytest.approx(7.13353, rel=1e-5)


@pytest.mark.parametrize("method", METHODS)
def test_duty_for_hover_thrust_op_4(op_system: dict[str, object], method: str) -> None:
    # OP-4 [CALC]: 2.000 kg quad, T_req = 4.90332 N per rotor; tol 1e-5
    op = drive.for_thrust(2.0 * 9.80665 / 4, open_circuit_voltage_v=12.0, pack_resistance_ohm=[0.030, 0.0],
                          rotor_count=4, method=method, **op_system)  # type: ignore[arg-type]
    sag, stiff = 0, 1
    assert op.omega_rad_s[sag] == pytest.approx(492.6873, rel=1e-5)
    assert op.rpm[sag] == pytest.approx(4704.82, rel=1e-5)
    assert op.motor_current_a[sag] == pytest.approx(9.8164, rel=1e-5)
    assert op.omega_rad_s[sag] / (920 * 2 * math.pi / 60) == pytest.approx(5.11393, rel=1e-5)  # E
    assert op.duty[sag] == pytest.approx(0.536186, rel=1e-5)
    assert op.bus_voltage_v[sag] == pytest.approx(11.36839, rel=1e-5)
    assert op.pack_current_a[sag] == pytest.approx(21.0537, rel=1e-5)
    assert op.craft_electrical_power_w[sag] == pytest.approx(239.347, rel=1e-5)  # P_bus = V_bus I_bus,total
    assert op.rotor_count[sag] * op.shaft_power_w[sag] == pytest.approx(190.574, rel=1e-5)
    assert op.duty[stiff] == pytest.approx(0.507964, rel=1e-5)


@pytest.mark.parametrize("method", METHODS)
def test_full_throttle_headroom_op_5(op_system: dict[str, object], method: str) -> None:
    # OP-5 [CALC]: as OP-3 at d = 1; tol 1e-4
    op = drive.full_throttle(open_circuit_voltage_v=12.0, pack_resistance_ohm=0.030, rotor_count=4, method=method,
                             **op_system)  # type: ignore[arg-type]
    assert op.thrust_n == pytest.approx(10.5226, rel=1e-4)
    assert op.total_thrust_n / (2.0 * 9.80665) == pytest.approx(2.1460, rel=1e-4)
    assert 4.90332 / op.thrust_n == pytest.approx(0.4660, rel=1e-4)


def _scalar(system: dict[str, object], **pack: float) -> ref.ScalarSystem:
    motor, esc, table = system["motor"], system["esc"], system["propeller"]
    assert isinstance(motor, MotorParams) and isinstance(esc, EscParams) and isinstance(table, PropellerTable)
    valid = ~np.isnan(table.axis_values)
    return ref.ScalarSystem(
        kv_rpm_per_v=float(motor.kv_rpm_per_v), resistance_ohm=float(motor.resistance_ohm),
        no_load_current_a=float(motor.no_load_current_a), inductance_h=float(motor.inductance_h),
        axis_values=tuple(table.axis_values[valid]), thrust_coefficients=tuple(table.thrust_coefficient[valid]),
        power_coefficients=tuple(table.power_coefficient[valid]), diameter_m=float(table.diameter_m),
        axis=table.axis, on_path_resistance_ohm=float(esc.on_path_resistance_ohm),
        switching_frequency_hz=float(esc.switching_frequency_hz), transition_time_s=float(esc.transition_time_s),
        dead_time_s=float(esc.dead_time_s), body_diode_drop_v=float(esc.body_diode_drop_v),
        input_esr_ohm=float(esc.input_esr_ohm), pwm_loss_coefficient=float(esc.pwm_loss_coefficient), **pack)


@pytest.fixture
def full_system() -> dict[str, object]:
    # Default ESC losses, calibrated term on, and a measured static table versus rpm:
    # UIUC sf_10x4.7 static rows (Vol. 1, Brandt & Selig 2011; docs/model-reference.md#propeller-typical-values)
    table = PropellerTable.from_rows(0.254, [([2377.0, 4029.0, 5147.0, 6528.0], [0.1059, 0.1158, 0.1237, 0.1299],
                                              [0.0431, 0.0466, 0.0500, 0.0531])])
    return {"motor": MotorParams(920.0, 0.10, 0.5), "esc": EscParams(pwm_loss_coefficient=0.05),
            "propeller": PropellerTable(table.diameter_m[0], table.axis_values[0], table.thrust_coefficient[0],
                                        table.power_coefficient[0])}


@pytest.mark.parametrize("duty", [0.35, 0.62, 0.9, 1.0])
def test_duty_request_equals_scalar_brentq(full_system: dict[str, object], duty: float) -> None:
    # docs/model-reference.md#operating-point-scalar-reference (i)+(ii) with brentq; vectorised == scalar to 1e-6 rel
    pack = {"open_circuit_voltage_v": 16.0, "pack_resistance_ohm": 0.06, "rotor_count": 4.0}
    op = drive.at_duty(duty, **pack, **full_system)  # type: ignore[arg-type]
    expected = ref.at_duty(_scalar(full_system, **pack), duty)
    assert op.status == Status.OK
    assert op.omega_rad_s == pytest.approx(expected["omega"], rel=1e-6)
    assert op.bus_voltage_v == pytest.approx(expected["bus_voltage"], rel=1e-6)
    assert op.bus_current_a == pytest.approx(expected["bus_current"], rel=1e-6)
    assert op.thrust_n == pytest.approx(expected["thrust"], rel=1e-6)


@pytest.mark.parametrize("thrust", [2.0, 4.9, 8.0])
def test_thrust_request_equals_scalar_brentq(full_system: dict[str, object], thrust: float) -> None:
    # docs/model-reference.md#operating-point-scalar-reference (iii): duty for a thrust by brentq; vectorised ==
    # scalar to 1e-6 rel
    pack = {"open_circuit_voltage_v": 16.0, "pack_resistance_ohm": 0.06, "rotor_count": 4.0}
    op = drive.for_thrust(thrust, **pack, **full_system)  # type: ignore[arg-type]
    expected = ref.for_thrust(_scalar(full_system, **pack), thrust)
    assert expected is not None
    assert op.thrust_n == pytest.approx(thrust, rel=1e-9)
    assert op.duty == pytest.approx(expected["duty"], rel=1e-6)
    assert op.omega_rad_s == pytest.approx(expected["omega"], rel=1e-6)
    assert op.bus_voltage_v == pytest.approx(expected["bus_voltage"], rel=1e-6)


def test_forward_flight_cruise_against_scalar_brentq() -> None:
    # fixed-wing cruise: CT, CP from J = V/(nD); UIUC te_10x7 forward rows at 5018 rpm (Brandt & Selig 2011)
    table = PropellerTable.from_rows(0.254, [([0.15, 0.3, 0.45, 0.6], [0.1164, 0.0984, 0.0752, 0.0462],
                                              [0.0574, 0.0536, 0.0466, 0.0364])], axis="advance_ratio")
    system = {"motor": MotorParams(920.0, 0.10, 0.5), "esc": EscParams(), "propeller": PropellerTable(
        table.diameter_m[0], table.axis_values[0], table.thrust_coefficient[0], table.power_coefficient[0],
        "advance_ratio")}
    pack = {"open_circuit_voltage_v": 12.0, "pack_resistance_ohm": 0.03, "rotor_count": 1.0, "airspeed_m_s": 12.0}
    op = drive.for_thrust(2.0, **pack, **system)  # type: ignore[arg-type]
    expected = ref.for_thrust(_scalar(system, **pack), 2.0)
    assert expected is not None and op.status == Status.OK
    assert op.omega_rad_s == pytest.approx(expected["omega"], rel=1e-6)
    assert op.duty == pytest.approx(expected["duty"], rel=1e-6)
    j = 12.0 / (op.omega_rad_s / (2 * math.pi) * 0.254)
    assert 0.15 < j < 0.6  # inside the table: the J lookup is exercised, not the held ends


def test_infeasible_thrust_is_flagged_not_raised(op_system: dict[str, object]) -> None:
    # OP-5 shows 10.5226 N is the most this pack gives: 11 N needs d > 1
    op = drive.for_thrust([4.9, 11.0], open_circuit_voltage_v=12.0, pack_resistance_ohm=0.030, rotor_count=4,
                          **op_system)  # type: ignore[arg-type]
    assert op.status.tolist() == [Status.OK, Status.INFEASIBLE_THRUST]
    assert np.isnan(op.duty[1]) and np.isnan(op.bus_voltage_v[1])
    # and the scalar reference agrees that it is unreachable
    assert ref.for_thrust(_scalar(op_system, open_circuit_voltage_v=12.0, pack_resistance_ohm=0.03,
                                  rotor_count=4.0), 11.0) is None


def test_nan_inputs_and_bad_requests_get_status(op_system: dict[str, object]) -> None:
    op = drive.at_duty([0.5, np.nan, 0.0, 1.2, 0.004], open_circuit_voltage_v=11.1, **op_system)  # type: ignore[arg-type]
    # d = 0.004: 0.044 V < I0 R = 0.05 V -> the motor does not turn
    assert op.status.tolist() == [Status.OK, Status.NON_FINITE, Status.NO_SOLUTION, Status.NO_SOLUTION,
                                  Status.NO_SOLUTION]
    assert np.isfinite(op.thrust_n[0]) and np.isnan(op.thrust_n[1:]).all()
    nan_pack = drive.for_thrust(4.0, open_circuit_voltage_v=[np.nan, 11.1], **op_system)  # type: ignore[arg-type]
    assert nan_pack.status.tolist() == [Status.NON_FINITE, Status.OK]


def test_over_current_keeps_values(op_system: dict[str, object]) -> None:
    motor = MotorParams(920.0, 0.10, 0.5, inductance_h=np.inf, max_current_a=20.0)
    op = drive.at_duty([0.6, 1.0], open_circuit_voltage_v=11.1, motor=motor, esc=op_system["esc"],  # type: ignore[arg-type]
                       propeller=op_system["propeller"])  # type: ignore[arg-type]
    assert op.status.tolist() == [Status.OK, Status.OVER_CURRENT]  # OP-1 draws 26.1 A
    assert op.motor_current_a[1] == pytest.approx(26.1484, rel=1e-5)
    esc_limited = drive.at_duty(1.0, open_circuit_voltage_v=11.1, motor=op_system["motor"],  # type: ignore[arg-type]
                                esc=EscParams(on_path_resistance_ohm=0.0, max_current_a=25.0),
                                propeller=op_system["propeller"])  # type: ignore[arg-type]
    assert esc_limited.status == Status.OVER_CURRENT


def test_momentum_bound_violation_is_a_data_error(motor_920kv: MotorParams) -> None:
    # docs/model-reference.md#reference-model-v1 item 8: FM > 1 is a data error; CT = 0.2, CP = 0.02 gives FM = 3.6
    bad = PropellerTable.constant(0.254, 0.2, 0.02)
    op = drive.for_thrust(3.0, open_circuit_voltage_v=11.1, motor=motor_920kv, esc=EscParams(), propeller=bad)
    assert op.status == Status.DATA_ERROR
    assert op.shaft_power_w < 3.0**1.5 / math.sqrt(2 * 1.225 * math.pi * 0.254**2 / 4)


def test_broadcast_shape_and_padded_chunk_equal_one_by_one() -> None:
    # three candidates with different props in one padded chunk, against each evaluated alone
    # (UIUC static rows of docs/model-reference.md#propeller-typical-values: 10x4.7 slow-flyer, 10x7 slow-flyer,
    # 16x8 thin electric)
    rows = [([2377.0, 4029.0, 5147.0, 6528.0], [0.1059, 0.1158, 0.1237, 0.1299], [0.0431, 0.0466, 0.0500, 0.0531]),
            ([2283.0, 4034.0, 5015.0, 5987.0], [0.1409, 0.1512, 0.1564, 0.1606], [0.0678, 0.0725, 0.0763, 0.0797]),
            ([980.0, 2980.0, 4993.333], [0.077122, 0.091428, 0.095587], [0.029425, 0.027246, 0.028545])]
    library = PropellerTable.from_rows([0.254, 0.254, 0.4064], rows)
    chunk = library.take([0, 1, 2, 1])
    motor = MotorParams([920.0, 920.0, 400.0, 1100.0], [0.10, 0.10, 0.12, 0.08], 0.5)
    v_oc = np.array([[11.1], [14.8]])  # (2, 1) x (4,) -> (2, 4)
    op = drive.at_duty(0.75, motor=motor, esc=EscParams(), propeller=chunk, open_circuit_voltage_v=v_oc,
                       pack_resistance_ohm=0.02, rotor_count=4)
    assert op.thrust_n.shape == (2, 4)
    prop_of_candidate = [0, 1, 2, 1]
    for i, j in np.ndindex(2, 4):
        one = drive.at_duty(0.75, motor=MotorParams(motor.kv_rpm_per_v[j], motor.resistance_ohm[j], 0.5),
                            esc=EscParams(), propeller=library.take([prop_of_candidate[j]]),
                            open_circuit_voltage_v=v_oc[i, 0], pack_resistance_ohm=0.02, rotor_count=4)
        assert op.thrust_n[i, j] == pytest.approx(float(one.thrust_n[0]), rel=1e-12)
        assert op.bus_voltage_v[i, j] == pytest.approx(float(one.bus_voltage_v[0]), rel=1e-12)


def test_rpm_request_round_trips_duty_request(full_system: dict[str, object]) -> None:
    pack = {"open_circuit_voltage_v": 16.0, "pack_resistance_ohm": 0.06, "rotor_count": 6.0}
    by_duty = drive.at_duty([0.4, 0.7, 1.0], **pack, **full_system)  # type: ignore[arg-type]
    by_rpm = drive.at_rpm(by_duty.rpm, **pack, **full_system)  # type: ignore[arg-type]
    np.testing.assert_allclose(by_rpm.duty, [0.4, 0.7, 1.0], rtol=1e-9)
    np.testing.assert_allclose(by_rpm.electrical_power_w, by_duty.electrical_power_w, rtol=1e-9)


def test_result_reports_every_loss_term_and_closes_energy(full_system: dict[str, object]) -> None:
    # docs/model-reference.md#reference-model-v1 item 5: energy balance to 0.1 % (here it must close to rounding)
    op = drive.at_duty(0.55, open_circuit_voltage_v=16.0, pack_resistance_ohm=0.06, rotor_count=4,
                       **full_system)  # type: ignore[arg-type]
    losses = (op.motor_copper_loss_w + op.motor_no_load_loss_w + op.esc_conduction_loss_w + op.pwm_ripple_loss_w
              + op.switching_loss_w + op.dead_time_loss_w + op.input_capacitor_loss_w + op.calibrated_pwm_loss_w)
    assert min(op.pwm_ripple_loss_w, op.switching_loss_w, op.dead_time_loss_w, op.input_capacitor_loss_w,
               op.calibrated_pwm_loss_w) > 0.0
    supplied = op.open_circuit_voltage_v * op.pack_current_a
    used = op.pack_loss_w + op.rotor_count * (op.shaft_power_w + losses)
    assert used == pytest.approx(supplied, rel=1e-9)
    assert op.drive_efficiency == pytest.approx(op.shaft_power_w / op.electrical_power_w)
    assert op.specific_thrust_g_per_w == pytest.approx(1000 * op.thrust_n / 9.80665 / op.electrical_power_w)


def test_request_in_the_loss_step_band_below_full_throttle_returns_full_throttle() -> None:
    # P_sw and P_dt vanish only at d = 1 (docs/model-reference.md#known-limits), so just below the full-throttle thrust
    # no duty < 1 balances the bus; the solver must then report the d = 1 point (thrust >= request), with energy closed.
    system = {"motor": MotorParams(920.0, 0.10, 0.5), "esc": EscParams(), "open_circuit_voltage_v": 12.6,
              "propeller": PropellerTable.constant(0.254, 0.1564, 0.0763), "pack_resistance_ohm": 0.03,
              "rotor_count": 4}
    full = drive.full_throttle(**system)  # type: ignore[arg-type]
    request = float(full.thrust_n) * (1 - 1e-5)
    op = drive.for_thrust([request, 0.98 * float(full.thrust_n)], **system)  # type: ignore[arg-type]
    assert op.status.tolist() == [Status.OK, Status.OK]
    assert op.duty[0] == 1.0 and op.thrust_n[0] == pytest.approx(float(full.thrust_n), rel=1e-12)
    assert op.thrust_n[0] >= request
    assert op.duty[1] < 1.0 and op.thrust_n[1] == pytest.approx(0.98 * float(full.thrust_n), rel=1e-12)
    for k in range(2):
        used = op.pack_loss_w[k] + 4 * (op.shaft_power_w[k] + op.motor_copper_loss_w[k] + op.motor_no_load_loss_w[k]
                                        + op.esc_conduction_loss_w[k] + op.extra_loss_w[k])
        assert used == pytest.approx(op.pack_power_w[k], rel=1e-9)


@pytest.mark.parametrize("with_pwm_losses", [False, True])
def test_thrust_reachable_below_full_throttle_on_a_resistive_pack_is_solved_on_the_healthy_side(
        motor_920kv_no_ripple: MotorParams, prop_10x7_5015: PropellerTable, with_pwm_losses: bool) -> None:
    """A 3S pack with 1 Ω per cell: full throttle is past the pack's maximum-power point, so thrust falls as duty
    nears 1; a thrust that a duty well below 1 reaches must be solved there (not called unreachable).

    Scalar check: scipy's brentq on the duty of the reference at_duty solver between a low duty and the duty of
    the most thrust (found by a bounded scalar search), then at_duty at that duty must give the same point."""
    from scipy.optimize import brentq, minimize_scalar

    esc = EscParams() if with_pwm_losses else EscParams.lossless_switching()
    pack = {"open_circuit_voltage_v": 3 * 4.2, "pack_resistance_ohm": 3 * 1.0, "rotor_count": 1,
            "motor": motor_920kv_no_ripple, "esc": esc, "propeller": prop_10x7_5015}

    def thrust_at(duty: float) -> float:
        return float(drive.at_duty(duty, **pack).thrust_n)  # type: ignore[arg-type]

    peak = minimize_scalar(lambda d: -thrust_at(d), bounds=(0.05, 1.0), method="bounded", options={"xatol": 1e-9})
    assert peak.x < 0.9 and thrust_at(1.0) < -peak.fun  # past the maximum-power point at full throttle
    request = 0.9 * -peak.fun
    assert thrust_at(1.0) < request  # full throttle cannot give it; a lower duty can
    duty = brentq(lambda d: thrust_at(d) - request, 0.02, peak.x, xtol=1e-13)
    op = drive.for_thrust(request, **pack)  # type: ignore[arg-type]
    assert op.status == Status.OK
    assert float(op.duty) == pytest.approx(duty, rel=1e-6)
    assert float(op.thrust_n) == pytest.approx(request, rel=1e-9)
    assert float(op.bus_voltage_v) >= 0.5 * pack["open_circuit_voltage_v"]  # type: ignore[operator]
    # and more than the pack's most is still unreachable
    assert drive.for_thrust(1.01 * -peak.fun, **pack).status == Status.INFEASIBLE_THRUST  # type: ignore[arg-type]
