"""Slow scalar reference path: the operating point re-derived with scipy.optimize.brentq, one point at a time.

Written independently of ``server.physics.drive`` (it shares no code with it, only the equations of
docs/model-reference.md#operating-point and #esc) so that the vectorised solvers can be cross-checked against it,
as pvlib cross-checks its ``'chandrupatla'`` path against ``'brentq'``. It follows
docs/model-reference.md#operating-point-scalar-reference: (i) Ω from the torque balance on ``[0, Kv V_m]``, (ii) V_bus
from the bus balance, (iii) duty / speed for a thrust.
Used by tests and by ``benchmarks/operating_points.py`` only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

_TOL = {"xtol": 1e-14, "rtol": 4 * np.finfo(float).eps, "maxiter": 200}


@dataclass(frozen=True)
class ScalarSystem:
    """One power system: motor, ESC, propeller (1-D table), pack and air, all plain floats."""

    kv_rpm_per_v: float
    resistance_ohm: float
    no_load_current_a: float
    axis_values: tuple[float, ...]
    thrust_coefficients: tuple[float, ...]
    power_coefficients: tuple[float, ...]
    diameter_m: float
    open_circuit_voltage_v: float
    pack_resistance_ohm: float = 0.0
    rotor_count: float = 1.0
    density_kg_m3: float = 1.225
    airspeed_m_s: float = 0.0
    axis: str = "rpm"
    inductance_h: float = 30e-6
    on_path_resistance_ohm: float = 0.010
    switching_frequency_hz: float = 24e3
    transition_time_s: float = 200e-9
    dead_time_s: float = 0.5e-6
    body_diode_drop_v: float = 0.8
    input_esr_ohm: float = 0.020
    pwm_loss_coefficient: float = 0.0

    @property
    def kv_si(self) -> float:
        return self.kv_rpm_per_v * 2.0 * math.pi / 60.0

    def coefficients(self, omega: float) -> tuple[float, float]:
        if self.axis == "rpm":
            x = omega * 60.0 / (2.0 * math.pi)
        else:
            x = math.inf if omega == 0 else self.airspeed_m_s / (omega / (2.0 * math.pi) * self.diameter_m)
        # numpy.interp holds the end values outside the table, as the reference model asks.
        return (float(np.interp(x, self.axis_values, self.thrust_coefficients)),
                float(np.interp(x, self.axis_values, self.power_coefficients)))

    def torque(self, omega: float) -> float:
        cp = self.coefficients(omega)[1]
        n = omega / (2.0 * math.pi)
        return cp * self.density_kg_m3 * n * n * self.diameter_m**5 / (2.0 * math.pi)

    def thrust(self, omega: float) -> float:
        ct = self.coefficients(omega)[0]
        n = omega / (2.0 * math.pi)
        return ct * self.density_kg_m3 * n * n * self.diameter_m**4

    def extra_loss(self, bus_v: float, duty: float, current: float) -> float:
        if duty >= 1.0:
            return 0.0
        chop = duty * (1.0 - duty)
        ripple = bus_v * chop / (self.inductance_h * self.switching_frequency_hz)
        return ((self.resistance_ohm + self.on_path_resistance_ohm) * ripple**2 / 12.0
                + 0.5 * bus_v * current * self.switching_frequency_hz * self.transition_time_s
                + self.body_diode_drop_v * current * 2.0 * self.dead_time_s * self.switching_frequency_hz
                + self.input_esr_ohm * current**2 * chop
                + self.pwm_loss_coefficient * bus_v * current * chop)


def speed_at_motor_voltage(s: ScalarSystem, motor_voltage: float) -> float:
    """Recipe (i): Ω with ``(V_m - Ω/Kv)/R' - I0 - Kv Q(Ω) = 0`` on ``[0, Kv V_m]``."""
    r_series = s.resistance_ohm + s.on_path_resistance_ohm

    def f(omega: float) -> float:
        return (motor_voltage - omega / s.kv_si) / r_series - s.no_load_current_a - s.kv_si * s.torque(omega)

    return float(brentq(f, 0.0, s.kv_si * motor_voltage, **_TOL))


def current_at_speed(s: ScalarSystem, omega: float) -> float:
    return s.no_load_current_a + s.kv_si * s.torque(omega)


def at_duty(s: ScalarSystem, duty: float) -> dict[str, float]:
    """Recipe (ii): V_bus from ``V_oc - R N I_bus(V) - V = 0`` with Ω solved at each trial V."""
    r_series = s.resistance_ohm + s.on_path_resistance_ohm

    def state(bus_v: float) -> tuple[float, float, float]:
        omega = speed_at_motor_voltage(s, duty * bus_v)
        current = current_at_speed(s, omega)
        return omega, current, duty * current + s.extra_loss(bus_v, duty, current) / bus_v

    if s.pack_resistance_ohm == 0.0:
        bus = s.open_circuit_voltage_v
    else:
        def g(bus_v: float) -> float:
            return s.open_circuit_voltage_v - s.pack_resistance_ohm * s.rotor_count * state(bus_v)[2] - bus_v

        lowest = s.no_load_current_a * r_series / duty * (1.0 + 1e-9)
        bus = float(brentq(g, lowest, s.open_circuit_voltage_v, **_TOL))
    omega, current, bus_current = state(bus)
    return {"omega": omega, "current": current, "bus_voltage": bus, "duty": duty, "bus_current": bus_current,
            "thrust": s.thrust(omega)}


def at_speed(s: ScalarSystem, omega: float) -> dict[str, float] | None:
    """V_bus for a known speed: ``V_oc - R N (V_m I + P_extra)/V - V = 0`` on ``[V_m, V_oc]``; None if d > 1."""
    r_series = s.resistance_ohm + s.on_path_resistance_ohm
    current = current_at_speed(s, omega)
    motor_voltage = omega / s.kv_si + current * r_series
    if s.pack_resistance_ohm == 0.0:
        bus = s.open_circuit_voltage_v
        if motor_voltage > bus:
            return None
    else:
        def g(bus_v: float) -> float:
            extra = s.extra_loss(bus_v, motor_voltage / bus_v, current)
            return (s.open_circuit_voltage_v - s.pack_resistance_ohm * s.rotor_count
                    * (motor_voltage * current + extra) / bus_v - bus_v)

        if g(motor_voltage) <= 0.0:
            return None
        bus = float(brentq(g, motor_voltage, s.open_circuit_voltage_v, **_TOL))
    duty = motor_voltage / bus
    return {"omega": omega, "current": current, "bus_voltage": bus, "duty": duty,
            "bus_current": duty * current + s.extra_loss(bus, duty, current) / bus, "thrust": s.thrust(omega)}


def for_thrust(s: ScalarSystem, thrust: float) -> dict[str, float] | None:
    """Recipe (iii): Ω for the thrust by brentq, then the bus for that speed."""
    omega = float(brentq(lambda w: s.thrust(w) - thrust, 1e-6, 1e6, **_TOL))
    return at_speed(s, omega)
