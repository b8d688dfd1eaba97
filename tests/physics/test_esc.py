"""ESC partial-throttle losses: ESC-1..5 (Mohan 2003 / Erickson 2001 formulas) and their limits."""

from __future__ import annotations

import numpy as np
import pytest

from server.physics import drive
from server.physics import esc as esc_model
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

# ESC-1 [CALC]: the motor current and the 2S/3S duty of the worked comparison
I_MOTOR = 13.7170
L_H, F_HZ = 30e-6, 24e3


def test_terms_at_esc_2_operating_point() -> None:
    # ESC-2 [PUB] Mohan 2003 / Erickson 2001 formulas + [CALC]; absolute 1e-4 W on losses
    duty, bus = 2.0 / 3.0, 11.4
    ripple = esc_model.ripple_current_a(bus, duty, L_H, F_HZ)
    assert ripple == pytest.approx(3.5185, abs=1e-4)
    assert esc_model.rms_current_a(I_MOTOR, ripple) == pytest.approx(13.7546, abs=1e-4)
    assert esc_model.input_capacitor_rms_current_a(I_MOTOR, duty) == pytest.approx(6.4663, abs=1e-4)
    losses = esc_model.partial_throttle_losses(bus, duty, I_MOTOR, 0.10, L_H, EscParams())
    assert losses.pwm_ripple_w == pytest.approx(0.1135, abs=1e-4)  # (R + R_on) ΔI^2 / 12
    assert losses.switching_w == pytest.approx(0.3753, abs=1e-4)  # 0.5 V I f (t_on + t_off)
    assert losses.dead_time_w == pytest.approx(0.2634, abs=1e-4)  # V_SD I 2 t_dead f
    assert losses.input_capacitor_w == pytest.approx(0.8363, abs=1e-4)  # ESR I^2 d (1 - d)
    assert losses.calibrated_pwm_w == 0.0  # k_pwm = 0 in the worked example
    assert losses.total_w == pytest.approx(1.5884, abs=1e-4)
    assert esc_model.bus_current_a(bus, duty, I_MOTOR, losses.total_w) == pytest.approx(9.28402, rel=1e-4)


def test_worst_case_ripple_esc_4() -> None:
    # ESC-4 [CALC]: V_bus/(4 L f) at d = 0.5
    assert esc_model.ripple_current_a(11.4, 0.5, L_H, F_HZ) == pytest.approx(3.9583, rel=1e-5)
    duties = np.linspace(0.05, 0.95, 19)
    assert np.argmax(esc_model.ripple_current_a(11.4, duties, L_H, F_HZ)) == 9  # d = 0.5


def test_non_synchronous_freewheel_esc_5() -> None:
    # ESC-5 [CALC]: V_F I (1 - d) at the ESC-2 point
    assert esc_model.freewheel_diode_loss_w(I_MOTOR, 2.0 / 3.0, 0.8) == pytest.approx(3.6579, rel=1e-4)
    assert esc_model.freewheel_diode_loss_w(I_MOTOR, 1.0, 0.8) == 0.0


def test_every_partial_throttle_term_vanishes_at_full_throttle() -> None:
    # docs/model-reference.md#esc: at d = 1 the bridge does not chop, so P_sw = P_dt = P_rip = P_cap = P_pwm = 0
    esc = EscParams(pwm_loss_coefficient=0.3)
    at_one = esc_model.partial_throttle_losses(11.4, 1.0, I_MOTOR, 0.1, L_H, esc)
    just_below = esc_model.partial_throttle_losses(11.4, 0.99, I_MOTOR, 0.1, L_H, esc)
    for name in ("pwm_ripple_w", "switching_w", "dead_time_w", "input_capacitor_w", "calibrated_pwm_w"):
        assert getattr(at_one, name) == 0.0
        assert getattr(just_below, name) > 0.0


def test_calibrated_pwm_term() -> None:
    # docs/model-reference.md#reference-model-v1 item 4: P_pwm = k_pwm V_bus I d (1 - d), default k_pwm = 0
    losses = esc_model.partial_throttle_losses(11.4, 0.5, I_MOTOR, 0.1, L_H, EscParams(pwm_loss_coefficient=0.1))
    assert losses.calibrated_pwm_w == pytest.approx(0.1 * 11.4 * I_MOTOR * 0.25)
    assert EscParams().pwm_loss_coefficient == 0.0


def test_defaults_are_reference_model_v1() -> None:
    # docs/model-reference.md#reference-model-v1 item 4
    esc = EscParams()
    assert (float(esc.on_path_resistance_ohm), float(esc.switching_frequency_hz), float(esc.transition_time_s),
            float(esc.dead_time_s), float(esc.body_diode_drop_v), float(esc.input_esr_ohm)) == (
        0.010, 24e3, 200e-9, 0.5e-6, 0.8, 0.020)


def test_loss_terms_broadcast_and_propagate_nan() -> None:
    losses = esc_model.partial_throttle_losses(np.array([[7.6], [11.4]]), np.array([0.5, np.nan, 1.0]), I_MOTOR,
                                               0.1, L_H, EscParams())
    assert losses.total_w.shape == (2, 3)
    assert np.isnan(losses.total_w[:, 1]).all()
    np.testing.assert_array_equal(losses.total_w[:, 2], 0.0)


# --- the worked comparison through the full operating-point solver ---------------------------------

@pytest.fixture
def system() -> dict[str, object]:
    # docs/model-reference.md#esc-check-cases worked comparison: MOT motor, PROP-1 prop, L = 30 µH, ESC defaults
    return {"motor": MotorParams(920.0, 0.10, 0.5, inductance_h=L_H), "esc": EscParams(),
            "propeller": PropellerTable.constant(0.254, 0.1564, 0.0763)}


def test_two_cell_full_throttle_esc_1(system: dict[str, object]) -> None:
    # ESC-1 [CALC]: 2S, V_bus = 7.6 V, d = 1; tol 1e-5
    op = drive.at_duty(1.0, open_circuit_voltage_v=7.6, **system)  # type: ignore[arg-type]
    assert op.omega_rad_s == pytest.approx(586.8323, rel=1e-5)
    assert op.rpm == pytest.approx(5603.84, rel=1e-5)
    assert op.motor_current_a == pytest.approx(13.7170, rel=1e-5)
    assert op.thrust_n == pytest.approx(6.95626, rel=1e-5)
    assert op.shaft_power_w == pytest.approx(80.5066, rel=1e-5)
    assert op.electrical_power_w == pytest.approx(104.2495, rel=1e-5)
    assert op.motor_copper_loss_w == pytest.approx(18.8157, rel=1e-5)
    assert op.esc_conduction_loss_w == pytest.approx(1.8816, rel=1e-4)  # printed to 5 digits
    assert op.drive_efficiency == pytest.approx(0.7722, rel=1e-4)
    assert op.extra_loss_w == 0.0


def test_three_cell_same_speed_esc_2(system: dict[str, object]) -> None:
    # ESC-2 [PUB] Mohan 2003 / Erickson 2001 + [CALC]: 3S at the ESC-1 speed; 1e-4 (abs 1e-4 W losses)
    two_cell = drive.at_duty(1.0, open_circuit_voltage_v=7.6, **system)  # type: ignore[arg-type]
    op = drive.at_rpm(two_cell.rpm, open_circuit_voltage_v=11.4, **system)  # type: ignore[arg-type]
    assert op.duty == pytest.approx(0.666667, rel=1e-4)
    assert op.motor_current_a == pytest.approx(two_cell.motor_current_a, rel=1e-12)
    assert op.pwm_ripple_loss_w == pytest.approx(0.1135, abs=1e-4)
    assert op.switching_loss_w == pytest.approx(0.3753, abs=1e-4)
    assert op.dead_time_loss_w == pytest.approx(0.2634, abs=1e-4)
    assert op.input_capacitor_loss_w == pytest.approx(0.8363, abs=1e-4)
    assert op.extra_loss_w == pytest.approx(1.5884, abs=1e-4)
    assert op.electrical_power_w == pytest.approx(105.8379, rel=1e-4)
    assert op.electrical_power_w / two_cell.electrical_power_w - 1 == pytest.approx(0.01524, abs=1e-4)
    assert op.bus_current_a == pytest.approx(9.28402, rel=1e-4)
    assert op.duty * op.motor_current_a == pytest.approx(9.14469, rel=1e-4)
    assert op.drive_efficiency == pytest.approx(0.7607, rel=1e-4)
    # docs/model-reference.md#esc: P_bus(3S, partial d) - P_bus(2S, d = 1) = P_extra exactly
    assert op.electrical_power_w - two_cell.electrical_power_w == pytest.approx(op.extra_loss_w, rel=1e-9)


def test_pack_internal_loss_esc_3(system: dict[str, object]) -> None:
    # ESC-3 [CALC], r = 10 mΩ/cell [MEM]: pack I^2 R at the ESC-1 / ESC-2 points
    two_cell = drive.at_duty(1.0, open_circuit_voltage_v=7.6, **system)  # type: ignore[arg-type]
    three_cell = drive.at_rpm(two_cell.rpm, open_circuit_voltage_v=11.4, **system)  # type: ignore[arg-type]
    loss_2s = 0.020 * two_cell.bus_current_a**2
    loss_3s_ideal_cap = 0.030 * three_cell.bus_current_a**2
    loss_3s_no_cap = 0.030 * three_cell.duty * three_cell.motor_current_a**2  # I_bus,rms^2 = d I^2
    assert loss_2s == pytest.approx(3.7631, rel=1e-4)
    assert loss_3s_ideal_cap == pytest.approx(2.5858, rel=1e-4)
    assert loss_3s_no_cap == pytest.approx(3.7631, rel=1e-4)
    assert two_cell.electrical_power_w + loss_2s == pytest.approx(108.0126, rel=1e-4)
    assert three_cell.electrical_power_w + loss_3s_ideal_cap == pytest.approx(108.4237, rel=1e-4)
