"""Motor: Drela's first-order model, MOT-1..6 (motor Kv 920 rpm/V, R 0.10 Ω, I0 0.5 A)."""

from __future__ import annotations

import numpy as np
import pytest

from server.physics import motor as mot
from server.physics.motor import MotorParams

KV, R, I0 = 920.0, 0.10, 0.5


def test_unit_conversion_mot_1() -> None:
    # MOT-1 [CALC]; tol 1e-6
    assert mot.kv_rad_s_per_v(KV) == pytest.approx(96.34217, rel=1e-6)
    assert mot.torque_constant_nm_per_a(KV) == pytest.approx(9.5493 / 920, rel=1e-5)  # 9.5493 is rounded
    assert mot.torque_constant_nm_per_a(KV) == pytest.approx(0.010380, rel=1e-4)  # printed to 5 digits
    params = MotorParams(KV, R, I0)
    assert params.kv_rad_s_per_v == pytest.approx(96.34217, rel=1e-6)
    assert params.torque_constant_nm_per_a * params.kv_rad_s_per_v == pytest.approx(1.0, rel=1e-15)


def test_operating_state_mot_2() -> None:
    # MOT-2 [PUB] Drela 2007 model + [CALC]; tol 1e-5
    omega = 8000 * 2 * np.pi / 60
    assert omega == pytest.approx(837.7580, rel=1e-6)
    assert mot.back_emf_v(omega, KV) == pytest.approx(8.69565, rel=1e-5)
    current = mot.current_a(11.1, omega, KV, R)
    assert current == pytest.approx(24.0435, rel=1e-5)
    # printed as 0.24437 (5 digits): the exact 0.2443735 is 1.4e-5 rel away, so compare to the printed digit
    assert mot.torque_nm(current, I0, KV) == pytest.approx(0.24437, abs=0.5e-5)
    assert mot.shaft_power_w(current, 11.1, I0, R) == pytest.approx(204.726, rel=1e-5)
    assert 11.1 * current == pytest.approx(266.883, rel=1e-5)
    assert mot.efficiency(current, 11.1, I0, R) == pytest.approx(0.76710, rel=1e-5)
    # torque x speed is the same shaft power as (I - I0)(V - I R)
    assert mot.torque_nm(current, I0, KV) * omega == pytest.approx(mot.shaft_power_w(current, 11.1, I0, R), rel=1e-12)


def test_peak_efficiency_mot_3() -> None:
    # MOT-3 [CALC]; tol 1e-5
    i_star = mot.max_efficiency_current_a(11.1, I0, R)
    assert i_star == pytest.approx(7.44983, rel=1e-5)
    assert mot.max_efficiency(11.1, I0, R) == pytest.approx(0.87027, rel=1e-5)
    assert mot.efficiency(i_star, 11.1, I0, R) == pytest.approx(mot.max_efficiency(11.1, I0, R), rel=1e-12)
    omega_star = mot.speed_rad_s(11.1, i_star, KV, R)
    assert omega_star == pytest.approx(997.625, rel=1e-5)
    assert omega_star * 60 / (2 * np.pi) == pytest.approx(9526.6, rel=1e-5)
    # it really is the maximum: efficiency is lower on both sides
    assert mot.efficiency(i_star * 1.05, 11.1, I0, R) < mot.max_efficiency(11.1, I0, R)
    assert mot.efficiency(i_star * 0.95, 11.1, I0, R) < mot.max_efficiency(11.1, I0, R)


def test_no_load_stall_and_torque_mot_4() -> None:
    # MOT-4 [CALC]; tol 1e-5
    assert mot.no_load_speed_rad_s(11.1, KV, I0, R) * 60 / (2 * np.pi) == pytest.approx(10166.0, rel=1e-5)
    assert mot.stall_current_a(11.1, R) == pytest.approx(111.0, rel=1e-12)
    assert mot.torque_nm(20.0, I0, KV) == pytest.approx(0.202404, rel=1e-5)
    assert mot.current_for_torque_a(0.202404, I0, KV) == pytest.approx(20.0, rel=1e-5)


def test_least_squares_round_trip_mot_5() -> None:
    # MOT-5 [CALC] numpy.linalg.lstsq on synthetic points; tol 1e-9
    volts = np.array([11.1, 11.1, 8.0])
    amps = np.array([10.0, 20.0, 5.0])
    omega = mot.speed_rad_s(volts, amps, KV, R)
    np.testing.assert_allclose(omega, [973.0560, 876.7138, 722.5663], rtol=1e-7)
    kv_fit, r_fit = mot.fit_first_order(volts, amps, omega)
    assert kv_fit == pytest.approx(920.0, rel=1e-9)
    assert r_fit == pytest.approx(0.1, rel=1e-9)


def test_hot_resistance_mot_6() -> None:
    # MOT-6 [CALC], alpha_Cu = 0.00393/K (IEC 60028 value, from memory [MEM])
    np.testing.assert_allclose(mot.resistance_at_temperature_ohm(0.100, [80.0, 100.0]), [0.12358, 0.13144], rtol=1e-4)
    assert mot.resistance_at_temperature_ohm(0.100, 20.0) == pytest.approx(0.100, rel=1e-15)


def test_arrays_broadcast_and_nan_propagates() -> None:
    volts = np.array([[11.1], [8.0]])
    omega = np.array([500.0, np.nan, 800.0])
    current = mot.current_a(volts, omega, KV, R)
    assert current.shape == (2, 3)
    assert np.isnan(current[:, 1]).all() and np.isfinite(current[:, [0, 2]]).all()
    assert current[0, 2] == mot.current_a(11.1, 800.0, KV, R)


def test_params_accept_arrays_per_candidate() -> None:
    params = MotorParams([920.0, 2300.0], [0.1, 0.05], 0.5)
    np.testing.assert_allclose(params.kv_rad_s_per_v, np.array([920.0, 2300.0]) * 2 * np.pi / 60)
    assert params.inductance_h == pytest.approx(30e-6)  # docs/model-reference.md#reference-model-v1 default
