"""Operating points of many candidates at once: the cruise (hover) point and the full-throttle points.

This is the screening form of :mod:`.drive` (reference model v1): the same equations (propeller segments of
:mod:`.propeller_segments`, the motor of :mod:`.motor`, every ESC loss term through
:func:`.esc.loss_coefficients`) solved with closed forms and Newton steps instead of bracketing:

- **Cruise point** at ``cruise_state_of_charge``: the speed for the required thrust comes from the
  propeller's segment polynomial (:mod:`.propmodel`), then torque, motor current ``I = I0 + Kv Q``, motor
  voltage ``V_m = E + I (R + R_on)``; the shared bus satisfies
  ``h(V) = V^2 - V_oc V + N R_pack (V_m I + P_extra(V)) = 0`` with every partial-throttle ESC loss of
  docs/model-reference.md#esc (``P_extra = P_rip + P_sw + P_dt + P_cap + P_pwm`` at ``d = V_m / V``). Newton's method
  from the high root of the quadratic without the duty-dependent terms converges in a few steps.
- **Full throttle** (d = 1, no P_extra): ``V_oc - E - (R + R_on + N R_pack) I = 0`` on the propeller segment.
  :func:`full_throttle_points` solves the low and full states of charge in one call and, on a cube, each distinct
  ESC R_on once (ESCs without loss data share the default).

Every array argument broadcasts, so a block of candidates laid out as (pack configuration, ESC, motor,
propeller) axes computes what depends on fewer axes once. Elementwise arithmetic only: the result of a
candidate does not depend on which other candidates share its chunk.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace

import numpy as np

from . import esc as esc_model
from . import forward_flight
from .motor import MotorParams
from .propeller_segments import PropModel

BUS_RTOL = 1e-14
"""Relative Newton step on the bus voltage at which the cruise solve stops."""
BUS_MAX_ITER = 60
BUS_CONVERGED_RTOL = 1e-10
"""Last Newton step (relative) below which a cruise bus voltage counts as solved."""
FULL_THROTTLE_SLACK_RTOL = 1e-12
"""Bus slack (relative to V_oc) treated as exactly full throttle, as :func:`.drive.for_thrust` does."""


@dataclass(frozen=True)
class Batch:
    """Parameters of a batch of candidates; every field broadcasts to the batch shape.

    Pack configuration (pack x k in parallel): open-circuit voltages at the cruise, low and full states of
    charge [V], pack resistance ``S r / (P k)`` [Ω], total capacity [Ah], allowed continuous pack current
    [A]. ESC: conduction resistance [Ω], switching ``0.5 f t`` [1/1], dead-time ``2 V_SD t_dt f`` [V],
    ``1 / (12 f^2)`` [s^2], ESR [Ω], k_pwm [-], continuous rating [A]. Motor: Kv [(rad/s)/V], R [Ω], I0 [A],
    L [H], rating [A], winding-to-air thermal resistance [K/W], thermal time constant [s], highest winding
    temperature [°C] (read only by the heat model, :mod:`server.selection.temperature`). ``q``: propeller index
    into the :class:`PropModel`. ``mass_kg``: all-up mass [kg].
    ``cells_series`` and ``full_voltage_per_cell_v`` [V]: the pack's open-circuit voltage at any state of charge
    (flight profiles).
    """

    voc_cruise_v: np.ndarray
    voc_low_v: np.ndarray
    voc_full_v: np.ndarray
    pack_resistance_ohm: np.ndarray
    capacity_ah: np.ndarray
    pack_limit_a: np.ndarray
    r_on_ohm: np.ndarray
    switching_coef: np.ndarray
    dead_time_coef_v: np.ndarray
    ripple_coef_s2: np.ndarray
    esr_ohm: np.ndarray
    k_pwm: np.ndarray
    esc_rating_a: np.ndarray
    kv_si: np.ndarray
    motor_resistance_ohm: np.ndarray
    no_load_current_a: np.ndarray
    inductance_h: np.ndarray
    motor_rating_a: np.ndarray
    thermal_resistance_k_per_w: np.ndarray
    thermal_time_constant_s: np.ndarray
    max_winding_temperature_c: np.ndarray
    q: np.ndarray
    mass_kg: np.ndarray
    cells_series: np.ndarray
    full_voltage_per_cell_v: np.ndarray

    @property
    def shape(self) -> tuple[int, ...]:
        return np.broadcast_shapes(*(np.shape(getattr(self, f.name)) for f in fields(self)))

    @property
    def esc_constants(self) -> esc_model.EscConstants:
        """The ESC fields as :class:`.esc.EscConstants` (what the loss terms need)."""
        return esc_model.EscConstants(
            on_path_resistance_ohm=self.r_on_ohm, switching_per_v_a=self.switching_coef,
            dead_time_v=self.dead_time_coef_v, ripple_s2=self.ripple_coef_s2, input_esr_ohm=self.esr_ohm,
            pwm_loss_coefficient=self.k_pwm)

    def loss_coefficients(self, motor_current_a: np.ndarray, motor_voltage_v: np.ndarray) -> esc_model.LossCoefficients:
        """Coefficients of every partial-throttle loss term (:func:`.esc.loss_coefficients`)."""
        return esc_model.loss_coefficients(self.esc_constants, self.motor_resistance_ohm, self.inductance_h,
                                           motor_current_a, motor_voltage_v)

    def take(self, mask: np.ndarray) -> Batch:
        """The candidates where ``mask`` (batch shape) is true, as a flat batch."""
        shape = self.shape
        return Batch(**{f.name: np.broadcast_to(getattr(self, f.name), shape)[mask] for f in fields(self)})


def batch_of(motor: MotorParams, esc: esc_model.EscParams, *, open_circuit_voltage_v: np.ndarray,
             pack_resistance_ohm: np.ndarray, q: np.ndarray) -> Batch:
    """A batch from the physics engine's own parameter objects (one system, or draws of one), for the operating points.

    The fields only the ranking reads (low/full-charge voltages, capacity, current limits, mass, heat, the pack's
    cells for flight profiles) are NaN;
    ``open_circuit_voltage_v`` is the cruise field :func:`cruise_point` reads. Every argument broadcasts.
    """
    constants = esc_model.EscConstants.of(esc)
    nan = np.full((), np.nan)
    return Batch(voc_cruise_v=np.asarray(open_circuit_voltage_v, dtype=np.float64), voc_low_v=nan, voc_full_v=nan,
                 pack_resistance_ohm=np.asarray(pack_resistance_ohm, dtype=np.float64), capacity_ah=nan,
                 pack_limit_a=nan, r_on_ohm=constants.on_path_resistance_ohm,
                 switching_coef=constants.switching_per_v_a, dead_time_coef_v=constants.dead_time_v,
                 ripple_coef_s2=constants.ripple_s2, esr_ohm=constants.input_esr_ohm,
                 k_pwm=constants.pwm_loss_coefficient, esc_rating_a=nan, kv_si=motor.kv_rad_s_per_v,
                 motor_resistance_ohm=motor.resistance_ohm, no_load_current_a=motor.no_load_current_a,
                 inductance_h=motor.inductance_h, motor_rating_a=nan, thermal_resistance_k_per_w=nan,
                 thermal_time_constant_s=nan, max_winding_temperature_c=nan, q=np.asarray(q, dtype=np.intp),
                 mass_kg=nan, cells_series=nan, full_voltage_per_cell_v=nan)


@dataclass(frozen=True)
class FullThrottle:
    """Full-throttle point per rotor (d = 1) at one pack state of charge."""

    speed: np.ndarray
    omega_rad_s: np.ndarray
    thrust_n: np.ndarray
    motor_current_a: np.ndarray
    bus_voltage_v: np.ndarray
    momentum_ratio: np.ndarray
    """:func:`.propeller.momentum_limit_ratio` of the point (above 1: data outside their range). [-]"""
    outside_table: np.ndarray
    """The propeller coefficients were read beyond the table's measured range (ends held)."""


@dataclass(frozen=True)
class Cruise:
    """Cruise (hover) point per rotor; ``reachable`` false where the thrust needs d > 1 or has no solution."""

    thrust_n: np.ndarray
    speed: np.ndarray
    omega_rad_s: np.ndarray
    torque_nm: np.ndarray
    motor_current_a: np.ndarray
    motor_voltage_v: np.ndarray
    bus_voltage_v: np.ndarray
    duty: np.ndarray
    extra_loss_w: np.ndarray
    bus_current_a: np.ndarray
    reachable: np.ndarray
    momentum_ratio: np.ndarray
    outside_table: np.ndarray


def full_throttle(batch: Batch, model: PropModel, rotor_count: float, open_circuit_v: np.ndarray) -> FullThrottle:
    """Full-throttle point (d = 1, sag from ``rotor_count`` rotors) at pack open-circuit voltage ``open_circuit_v``."""
    n_r = float(rotor_count)
    sag = n_r * batch.pack_resistance_ohm
    loop = (batch.motor_resistance_ohm + batch.r_on_ohm) + sag
    y, seg = model.full_throttle(open_circuit_v, loop, batch.kv_si, batch.no_load_current_a, batch.q)
    ct, cp = model.coefficients(batch.q, seg, y)
    y2 = y * y
    current = batch.no_load_current_a + batch.kv_si * (model.kq[batch.q] * cp * y2)
    return FullThrottle(speed=y, omega_rad_s=model.omega_rad_s(y), thrust_n=model.kt[batch.q] * ct * y2,
                        motor_current_a=current, bus_voltage_v=open_circuit_v - sag * current,
                        momentum_ratio=model.momentum_ratio(batch.q, seg, y), outside_table=model.outside(batch.q, seg))


def full_throttle_points(batch: Batch, model: PropModel, rotor_count: float,
                         open_circuit_v: tuple[np.ndarray, ...]) -> list[FullThrottle]:
    """Full-throttle points at several open-circuit voltages (e.g. low and full state of charge), solved together.

    The full-throttle point depends on the ESC only through R_on, so on a cube whose ESC axis (axis 1) holds
    repeated R_on values (every ESC without loss data has the default) each distinct R_on is solved once and the
    results are gathered back along that axis: the arithmetic of every candidate is unchanged.
    """
    r_on = np.asarray(batch.r_on_ohm)
    inverse = None
    if r_on.ndim == 4 and r_on.shape[1] > 1 and r_on.size == r_on.shape[1]:
        distinct, inv = np.unique(r_on.ravel(), return_inverse=True)
        if distinct.size < r_on.shape[1]:
            batch = replace(batch, r_on_ohm=distinct.reshape(1, -1, 1, 1))
            inverse = inv.ravel()
    ft = full_throttle(batch, model, rotor_count, np.stack(np.broadcast_arrays(*open_circuit_v)))
    values = {}
    for f in fields(ft):
        value = np.asarray(getattr(ft, f.name))
        if inverse is not None:
            value = np.take(value, inverse, axis=value.ndim - 3)
        values[f.name] = value
    return [FullThrottle(**{name: value[i] for name, value in values.items()}) for i in range(len(open_circuit_v))]


def cruise_point(batch: Batch, model: PropModel, rotor_count: float, thrust_n: np.ndarray,
                 flight: forward_flight.FlightState | None = None) -> Cruise:
    """Cruise (hover) point: duty for thrust ``thrust_n`` per rotor on the sagged bus, with every ESC loss.

    With a multirotor ``flight`` state (broadcasting with the batch; its thrust is ``thrust_n``) the torque is the
    static table's corrected to the flight's shaft power (:func:`.forward_flight.shaft_torque_nm`); the speed is
    the static table's for the thrust.
    """
    n_r = float(rotor_count)
    thrust = thrust_n
    y, seg = model.speed_for_thrust(thrust, batch.q)
    _, cp = model.coefficients(batch.q, seg, y)
    torque = (model.kq[batch.q] * cp) * (y * y)
    if flight is not None:
        torque = forward_flight.shaft_torque_nm(torque, model.omega_rad_s(y), 0.5 * model.diameter_m[batch.q], flight)
    current = batch.no_load_current_a + batch.kv_si * torque
    motor_v = y * model.emf_per_y(batch.kv_si) + current * (batch.motor_resistance_ohm + batch.r_on_ohm)
    voc = batch.voc_cruise_v
    load = n_r * batch.pack_resistance_ohm
    coefs = batch.loss_coefficients(current, motor_v)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        slack = voc - motor_v - load * current
        # h(V) = V^2 - V_oc V + N R_pack (V_m I + P_extra(V)) = 0 on the high root (esc.extra_loss_below_full_w,
        # slope from esc.extra_loss_slope_w_per_v). Newton from the high root without P_extra, which lies above.
        shape = np.broadcast_shapes(np.shape(voc), np.shape(load), np.shape(motor_v), np.shape(current))
        drawn = load * (motor_v * current)
        bus = np.array(np.broadcast_to(0.5 * (voc + np.sqrt(voc * voc - 4.0 * drawn)), shape))
        change = np.zeros(shape)
        for _ in range(BUS_MAX_ITER if bus.size else 0):
            h = bus * (bus - voc) + drawn + load * esc_model.extra_loss_below_full_w(coefs, bus, motor_v)
            dh = 2.0 * bus - voc + load * esc_model.extra_loss_slope_w_per_v(coefs, bus, motor_v)
            step = h / dh
            bus -= step
            change = np.abs(step) / bus
            if not np.nanmax(change, initial=0.0) > BUS_RTOL:
                break
        converged = change <= BUS_CONVERGED_RTOL  # where the bus has no balanced voltage Newton does not settle
        # The healthy root lies in [max(V_m, V_oc/2), V_oc] (as in drive._solve_bus): it exists when h <= 0 at the
        # lower end, which is d = 1 (the slack test) when V_m >= V_oc/2, else V_oc/2 itself.
        rounding = FULL_THROTTLE_SLACK_RTOL * voc
        half = 0.5 * voc
        at_duty_one = motor_v >= half
        h_half = half * (half - voc) + drawn + load * esc_model.extra_loss_below_full_w(coefs, half, motor_v)
        feasible = np.isfinite(slack) & np.where(at_duty_one, slack >= -rounding, h_half <= 0.0)
        at_full = feasible & at_duty_one & (slack <= rounding)
        # Just below full throttle the step of P_sw + P_dt at d = 1 can leave no balanced duty below 1:
        # the physics engine then reports the full-throttle point (thrust slightly above the request).
        step_at_full = esc_model.extra_loss_below_full_w(coefs, motor_v, motor_v)  # the loss step at d = 1
        jump = feasible & at_duty_one & ~at_full & (load * step_at_full >= motor_v * slack) & (load > 0)
        bus = np.where(at_full, motor_v, bus)
        duty = motor_v / bus
        solved = feasible & ~jump & (converged | at_full) & np.isfinite(bus) & (duty > 0) & (duty <= 1.0)
        extra = np.where(at_full, 0.0, esc_model.extra_loss_below_full_w(coefs, bus, motor_v))
        bus_current = duty * current + extra / bus
        # Where no balanced bus voltage exists the bus values are those of an unfinished iteration (how far it got
        # depends on the other candidates iterated with it): NaN instead, so every check on them fails alike.
        reachable = solved | jump
        bus, duty, extra, bus_current = (np.where(reachable, a, np.nan) for a in (bus, duty, extra, bus_current))
    cruise = Cruise(thrust_n=thrust, speed=y, omega_rad_s=model.omega_rad_s(y), torque_nm=torque,
                    motor_current_a=current, motor_voltage_v=motor_v, bus_voltage_v=bus, duty=duty,
                    extra_loss_w=extra, bus_current_a=bus_current, reachable=reachable,
                    momentum_ratio=model.momentum_ratio(batch.q, seg, y), outside_table=model.outside(batch.q, seg))
    if np.any(jump):
        cruise = _saturate(cruise, jump, batch, model, n_r)
    return cruise


def _saturate(cruise: Cruise, jump: np.ndarray, batch: Batch, model: PropModel, rotor_count: float) -> Cruise:
    """Replace the candidates in the loss-step band just below d = 1 by their full-throttle point."""
    shape = np.broadcast_shapes(jump.shape, cruise.duty.shape)
    where = np.nonzero(np.broadcast_to(jump, shape))
    sub = Batch(**{f.name: np.broadcast_to(getattr(batch, f.name), shape)[where] for f in fields(batch)})
    ft = full_throttle(sub, model, rotor_count, sub.voc_cruise_v)
    values = {}
    for f in fields(cruise):
        value = getattr(cruise, f.name)
        # The cruise arrays are fresh results of cruise_point: overwrite them in place where they are full-size.
        if not (isinstance(value, np.ndarray) and value.shape == shape and value.flags.writeable
                and value.flags.owndata):
            value = np.array(np.broadcast_to(value, shape))
        values[f.name] = value
    torque = (ft.motor_current_a - sub.no_load_current_a) / sub.kv_si
    motor_v = ft.bus_voltage_v
    for name, value in (("thrust_n", ft.thrust_n), ("speed", ft.speed), ("omega_rad_s", ft.omega_rad_s),
                        ("torque_nm", torque), ("motor_current_a", ft.motor_current_a), ("motor_voltage_v", motor_v),
                        ("bus_voltage_v", ft.bus_voltage_v), ("duty", np.ones_like(motor_v)),
                        ("extra_loss_w", np.zeros_like(motor_v)), ("bus_current_a", ft.motor_current_a),
                        ("reachable", np.isfinite(ft.bus_voltage_v)), ("momentum_ratio", ft.momentum_ratio),
                        ("outside_table", ft.outside_table)):
        values[name][where] = value
    return Cruise(**values)
