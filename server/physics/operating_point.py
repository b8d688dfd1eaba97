"""The result of an operating-point solve: per-rotor state, every loss term, and pack totals.

Kept apart from the solvers in :mod:`drive` so that the ranking engine can import the result type alone.
Every quantity is recomputed here from the solved speed and bus voltage, so the reported numbers are
mutually consistent (the energy balance of docs/model-reference.md#reference-model-v1 item 5 closes to rounding).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, fields

import numpy as np

from . import esc as esc_model
from . import forward_flight
from ._problem import Problem
from ._types import RPM_PER_RAD_S, ArrayLike, FloatArray, IntArray, Status
from .propeller import advance_ratio, coefficients_at, momentum_limit_ratio, outside_table, specific_thrust_g_per_w

LOSS_TERMS: tuple[tuple[str, str, str], ...] = (
    ("motor_copper_w", "motor_copper_loss_w", "motor copper"),
    ("motor_no_load_w", "motor_no_load_loss_w", "motor no-load"),
    ("esc_conduction_w", "esc_conduction_loss_w", "ESC conduction"),
    *((f.name, f"esc_terms.{f.name}", f.metadata["label"]) for f in fields(esc_model.PartialThrottleLosses)),
)
"""The loss terms of one rotor: (name in every API and page, where :func:`loss_value` reads it, label).

The ESC's partial-throttle terms come from :class:`.esc.PartialThrottleLosses`, so a term added there shows up
in predict, rankings and compare without another list to edit.
"""


def loss_value(op: OperatingPoint, where: str) -> FloatArray:
    """The loss array named by the second element of a :data:`LOSS_TERMS` entry. [W]"""
    value: object = op
    for part in where.split("."):
        value = getattr(value, part)
    return np.asarray(value, dtype=np.float64)


@dataclass(frozen=True)
class OperatingPoint:
    """Per-rotor operating point of a batch of candidates (all arrays of the broadcast shape).

    Powers are per rotor unless named ``pack_``; losses are in [W]. ``electrical_power_w`` is the ESC input
    power ``V_bus I_bus``; ``drive_efficiency`` = shaft ÷ electrical (motor + ESC); ``specific_thrust_g_per_w``
    is thrust per ESC input power. ``status`` holds :class:`Status` codes; values are NaN where the status
    is not OK, OVER_CURRENT or DATA_ERROR.
    """

    rpm: FloatArray
    omega_rad_s: FloatArray
    thrust_n: FloatArray
    torque_nm: FloatArray
    shaft_power_w: FloatArray
    duty: FloatArray
    motor_current_a: FloatArray
    motor_voltage_v: FloatArray
    bus_voltage_v: FloatArray
    bus_current_a: FloatArray
    electrical_power_w: FloatArray
    motor_copper_loss_w: FloatArray
    motor_no_load_loss_w: FloatArray
    esc_conduction_loss_w: FloatArray
    esc_terms: esc_model.PartialThrottleLosses
    drive_efficiency: FloatArray
    specific_thrust_g_per_w: FloatArray
    thrust_coefficient: FloatArray
    power_coefficient: FloatArray
    open_circuit_voltage_v: FloatArray
    rotor_count: FloatArray
    pack_current_a: FloatArray
    pack_loss_w: FloatArray
    momentum_limit_ratio: FloatArray
    """Propeller efficiency over what momentum theory allows (FM static, eta_p / eta_Froude in flight); > 1 is a
    ``DATA_ERROR``. [-]"""
    outside_table: np.ndarray
    """True where the propeller coefficients were read outside the table's measured range (ends held)."""
    status: IntArray

    def map(self, fn: Callable[..., ArrayLike], *others: OperatingPoint) -> OperatingPoint:
        """Apply ``fn(a, *b)`` to every array of this point (and the same arrays of ``others``)."""
        values: dict[str, object] = {}
        for f in fields(self):
            if f.name == "esc_terms":
                values[f.name] = esc_model.PartialThrottleLosses(**{
                    t.name: np.asarray(fn(getattr(self.esc_terms, t.name), *(getattr(o.esc_terms, t.name)
                                                                            for o in others)))
                    for t in fields(esc_model.PartialThrottleLosses)})
            else:
                values[f.name] = np.asarray(fn(getattr(self, f.name), *(getattr(o, f.name) for o in others)))
        return OperatingPoint(**values)  # type: ignore[arg-type]

    @property
    def extra_loss_w(self) -> FloatArray:
        """All partial-throttle ESC losses of one rotor (P_extra including P_pwm). [W]"""
        return self.esc_terms.total_w

    # The terms of the first reference model under their attribute names (each is also in esc_terms).
    @property
    def pwm_ripple_loss_w(self) -> FloatArray:
        return self.esc_terms.pwm_ripple_w

    @property
    def switching_loss_w(self) -> FloatArray:
        return self.esc_terms.switching_w

    @property
    def dead_time_loss_w(self) -> FloatArray:
        return self.esc_terms.dead_time_w

    @property
    def input_capacitor_loss_w(self) -> FloatArray:
        return self.esc_terms.input_capacitor_w

    @property
    def calibrated_pwm_loss_w(self) -> FloatArray:
        return self.esc_terms.calibrated_pwm_w

    @property
    def total_thrust_n(self) -> FloatArray:
        """Thrust of all rotors. [N]"""
        return self.rotor_count * self.thrust_n

    @property
    def pack_power_w(self) -> FloatArray:
        """Power drawn from the cells ``V_oc I_pack`` (includes the pack's own loss). [W]"""
        return self.open_circuit_voltage_v * self.pack_current_a

    @property
    def craft_electrical_power_w(self) -> FloatArray:
        """ESC input power of all rotors ``N V_bus I_bus``. [W]"""
        return self.rotor_count * self.electrical_power_w



def motor_side(p: Problem, omega: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Coefficients and motor state at speed Ω: (ct, cp, current I, motor voltage V_m = E + I R')."""
    ct, cp = coefficients_at(p.table, omega, p.airspeed_m_s)
    n = omega / (2.0 * math.pi)
    torque = cp * p.density_kg_m3 * n * n * p.diameter_m**5 / (2.0 * math.pi)
    if p.flight is not None:
        corrected = forward_flight.shaft_torque_nm(torque, omega, 0.5 * p.diameter_m, p.flight)
        torque = corrected if p.flight_off is None else np.where(p.flight_off, torque, corrected)
    current = p.no_load_current_a + torque * p.kv_rad_s_per_v
    motor_voltage = omega / p.kv_rad_s_per_v + current * p.series_resistance_ohm
    return ct, cp, current, motor_voltage


def assemble(p: Problem, omega: FloatArray, bus: FloatArray, status: IntArray) -> OperatingPoint:
    """Every reported quantity from the solved speed and bus voltage (NaN where status is not OK)."""
    solved = status == Status.OK
    omega = np.where(solved, omega, np.nan)
    bus = np.where(solved, bus, np.nan)
    shape = p.shape
    with np.errstate(invalid="ignore", divide="ignore"):
        ct, cp, current, motor_voltage = motor_side(p, omega)
        duty = motor_voltage / bus
        n = omega / (2.0 * math.pi)
        thrust = ct * p.density_kg_m3 * n * n * p.diameter_m**4
        torque = (current - p.no_load_current_a) / p.kv_rad_s_per_v  # Kt (I - I0), Kt = 1/Kv_SI
        shaft = torque * omega
        losses = esc_model.partial_throttle_losses(bus, duty, current, p.resistance_ohm, p.inductance_h, p.esc)
        bus_current = esc_model.bus_current_a(bus, duty, current, losses.total_w)
        electrical = bus * bus_current
        pack_current = p.rotor_count * bus_current
        efficiency = shaft / electrical
        # Momentum bound: a static point with FM > 1 means the propeller data are wrong.
        # Momentum bound: a point whose propeller does better than momentum theory allows (FM > 1 static,
        # eta_p above the Froude efficiency in axial flight) has wrong data, or data used outside their range.
        j = np.where(p.airspeed_m_s > 0.0, advance_ratio(p.airspeed_m_s, n, p.diameter_m), 0.0)
        momentum = momentum_limit_ratio(ct, cp, j)
        impossible = solved & (momentum > 1.0)
        outside = outside_table(p.table, omega, p.airspeed_m_s) & solved
    limit = np.minimum(p.max_current_a, p.esc.max_current_a)
    status = status.copy()
    status[solved & (current > limit)] = Status.OVER_CURRENT
    status[impossible] = Status.DATA_ERROR

    def out(a: ArrayLike) -> FloatArray:
        return np.broadcast_to(np.asarray(a, dtype=np.float64), (p.size,)).reshape(shape).copy()

    return OperatingPoint(
        rpm=out(omega * RPM_PER_RAD_S), omega_rad_s=out(omega), thrust_n=out(thrust), torque_nm=out(torque),
        shaft_power_w=out(shaft), duty=out(duty), motor_current_a=out(current), motor_voltage_v=out(motor_voltage),
        bus_voltage_v=out(bus), bus_current_a=out(bus_current), electrical_power_w=out(electrical),
        motor_copper_loss_w=out(current**2 * p.resistance_ohm),
        motor_no_load_loss_w=out(p.no_load_current_a * omega / p.kv_rad_s_per_v),
        esc_conduction_loss_w=out(current**2 * p.esc.on_path_resistance_ohm),
        esc_terms=esc_model.PartialThrottleLosses(**{f.name: out(getattr(losses, f.name))
                                                     for f in fields(esc_model.PartialThrottleLosses)}),
        drive_efficiency=out(efficiency), specific_thrust_g_per_w=out(specific_thrust_g_per_w(thrust, electrical)),
        thrust_coefficient=out(ct), power_coefficient=out(cp),
        open_circuit_voltage_v=out(p.open_circuit_voltage_v), rotor_count=out(p.rotor_count),
        pack_current_a=out(pack_current), pack_loss_w=out(p.pack_resistance_ohm * pack_current**2),
        momentum_limit_ratio=out(momentum), outside_table=np.broadcast_to(outside, (p.size,)).reshape(shape).copy(),
        status=status.reshape(shape),
    )
