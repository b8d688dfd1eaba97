"""Heat and cold (server/physics/thermal.py) against hand calculations in docs/model-reference.md#heat and #cold."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from server.physics import drive, thermal
from server.physics._types import COPPER_TEMPERATURE_COEFFICIENT_PER_K
from server.physics.esc import EscParams
from server.physics.motor import MotorParams, resistance_at_temperature_ohm
from server.physics.propeller import PropellerTable


def test_copper_coefficient_is_the_handbook_value() -> None:
    # Standard (IACS) annealed copper at 20 °C: 3.93e-3 /°C (K. C. Agrawal, Industrial Power Engineering and
    # Applications Handbook, Newnes 2001, table of conductor properties; IEICE Handbook for Electronics,
    # Information and Communication Engineers vol. 1: 3930 ppm/°C)
    assert COPPER_TEMPERATURE_COEFFICIENT_PER_K == 3.93e-3
    # MOT-6 with the handbook coefficient: +31.44 % at 100 °C
    assert resistance_at_temperature_ohm(0.100, 100.0) / 0.100 == pytest.approx(1.3144, rel=1e-12)


def test_steady_winding_temperature_heat_1() -> None:
    # HEAT-1 [CALC]: T_air 40 °C, I = 10 A, R20 = 0.100 Ohm, I0 E = 5 W, R_th = 2 K/W
    t, runaway = thermal.steady_winding_temperature_c(40.0, 10.0, 0.100, 5.0, 2.0)
    assert not runaway
    # by hand: a = 10 (1 - 20 x 0.00393) + 5 = 14.214 W, b = 10 x 0.00393 = 0.0393 W/K,
    # T = (40 + 2 a) / (1 - 2 b) = 68.428 / 0.9214
    assert t == pytest.approx(74.2652, rel=1e-6)
    assert t == pytest.approx(68.428 / 0.9214, rel=1e-12)
    # it is the fixed point T = T_air + R_th P(T), with the copper loss at the hot resistance
    loss = thermal.winding_loss_w(10.0, resistance_at_temperature_ohm(0.100, t), 0.5, 10.0)
    assert 40.0 + 2.0 * loss == pytest.approx(t, rel=1e-12)


def test_burst_from_the_cruise_temperature_heat_2() -> None:
    # HEAT-2 [CALC]: from HEAT-1's 74.2652 °C, 20 s at I = 30 A (I0 E = 7 W), tau = 60 s
    start = 68.428 / 0.9214
    t = thermal.winding_temperature_after_c(start, 20.0, 40.0, 30.0, 0.100, 7.0, 2.0, 60.0)
    assert t == pytest.approx(137.1875, rel=1e-6)
    # the closed form equals a numerical integration of C dT/dt = P(T) - (T - T_air)/R_th (scipy solve_ivp)
    capacity = 60.0 / 2.0

    def rate(_: float, y: np.ndarray) -> list[float]:
        loss = 900.0 * 0.100 * (1.0 + 0.00393 * (y[0] - 20.0)) + 7.0
        return [(loss - (y[0] - 40.0) / 2.0) / capacity]

    ivp = solve_ivp(rate, (0.0, 20.0), [start], rtol=1e-12, atol=1e-10).y[0, -1]
    assert t == pytest.approx(ivp, rel=1e-9)
    # zero length: the start; very long: the steady state at that current
    assert thermal.winding_temperature_after_c(start, 0.0, 40.0, 30.0, 0.100, 7.0, 2.0, 60.0) == start
    steady, _ = thermal.steady_winding_temperature_c(40.0, 30.0, 0.100, 7.0, 2.0)
    assert thermal.winding_temperature_after_c(start, 1e5, 40.0, 30.0, 0.100, 7.0, 2.0, 60.0) == pytest.approx(
        steady, rel=1e-9)


def test_thermal_runaway_heat_3() -> None:
    # HEAT-3 [CALC]: R_th = 4 K/W at 30 A: R_th I^2 R20 alpha = 4 x 900 x 0.1 x 0.00393 = 1.4148 >= 1
    t, runaway = thermal.steady_winding_temperature_c(40.0, 30.0, 0.100, 7.0, 4.0)
    assert runaway and math.isnan(t)
    # a burst still has a finite end temperature, growing faster than linearly
    ends = thermal.winding_temperature_after_c(40.0, np.array([10.0, 20.0, 40.0]), 40.0, 30.0, 0.100, 7.0, 4.0,
                                               60.0)
    rises = ends - 40.0
    assert np.all(np.isfinite(ends)) and rises[1] > 2 * rises[0] and rises[2] > 2 * rises[1]
    # the boundary case (no net slope) is the linear limit: T0 + Q0 R_th / tau x t
    alpha = 1.0 / (4.0 * 900.0 * 0.100)
    t_lin = thermal.winding_temperature_after_c(40.0, 10.0, 40.0, 30.0, 0.100, 7.0, 4.0, 60.0, alpha)
    q0 = 900.0 * 0.100 * (1.0 + alpha * 20.0) + 7.0
    assert t_lin == pytest.approx(40.0 + q0 * 4.0 / 60.0 * 10.0, rel=1e-9)


def test_hot_winding_on_the_op_quad_heat_4() -> None:
    # HEAT-4 [CALC]: the OP-4/OP-5 quad (docs/model-reference.md#operating-point-check-cases) with R at 100 °C
    prop = PropellerTable.constant(0.254, 0.1564, 0.0763)
    esc = EscParams.lossless_switching(0.0)
    out = {}
    for temperature in (20.0, 100.0):
        motor = MotorParams(920.0, float(resistance_at_temperature_ohm(0.10, temperature)), 0.5, inductance_h=np.inf)
        common = {"motor": motor, "esc": esc, "propeller": prop, "open_circuit_voltage_v": 12.0,
                  "pack_resistance_ohm": 0.030, "rotor_count": 4}
        ft = drive.full_throttle(**common)  # type: ignore[arg-type]
        op = drive.for_thrust(2.0 * 9.80665 / 4, **common)  # type: ignore[arg-type]
        out[temperature] = (float(ft.total_thrust_n) / (2.0 * 9.80665), float(op.craft_electrical_power_w))
    assert out[20.0][0] == pytest.approx(2.1460, rel=1e-4)
    assert out[100.0][0] == pytest.approx(1.9897, rel=1e-4)  # T/W -7.3 %
    assert out[20.0][1] == pytest.approx(239.347, rel=1e-5)
    assert out[100.0][1] == pytest.approx(251.465, rel=1e-5)  # hover power +5.06 %
    assert out[100.0][1] / out[20.0][1] == pytest.approx(1.0506, rel=1e-4)


def test_cell_resistance_against_temperature_cold_1() -> None:
    # COLD-1 [PUB] + [CALC]: Arrhenius with the electrolyte conductivity's activation energy 17.1 kJ/mol
    # (Ecker et al., J. Electrochem. Soc. 162(9) A1836-A1848, 2015), reference 25 °C
    assert thermal.ELECTROLYTE_ACTIVATION_ENERGY_J_PER_MOL == 17_100.0
    factors = thermal.cell_resistance_factor(np.array([25.0, 15.0, 0.0, -10.0, -20.0]))
    assert factors[0] == 1.0
    assert factors[1:] == pytest.approx([1.2705, 1.8801, 2.5029, 3.4083], rel=1e-4)
    # by hand at 0 °C: exp(17100 / 8.314462618 x (1/273.15 - 1/298.15)) = exp(0.63136)
    assert factors[2] == pytest.approx(math.exp(17100 / 8.314462618 * (1 / 273.15 - 1 / 298.15)), rel=1e-12)


def test_thermal_resistance_fit_round_trip() -> None:
    # Synthetic steady points from known R_th = 2.5 K/W with scatter: the fit returns it within 2 standard errors,
    # and without scatter exactly, with a zero standard error (a round trip of the fitter, not a check value).
    rng = np.random.default_rng(7)
    loss = np.linspace(3.0, 40.0, 12)
    exact_value, exact_se = thermal.fit_thermal_resistance(2.5 * loss, loss)
    assert exact_value == pytest.approx(2.5, rel=1e-12) and exact_se == pytest.approx(0.0, abs=1e-12)
    noisy = 2.5 * loss + rng.normal(0.0, 1.5, loss.size)
    value, se = thermal.fit_thermal_resistance(noisy, loss)
    assert 0.0 < se < 0.1 and abs(value - 2.5) < 2 * se
    assert all(math.isnan(v) for v in thermal.fit_thermal_resistance([], []))
    one = thermal.fit_thermal_resistance([10.0], [4.0])
    assert one[0] == pytest.approx(2.5) and math.isnan(one[1])
