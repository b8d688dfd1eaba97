"""Operating points of N identical rotors (motor + ESC + propeller) on one shared, sagging pack bus.

Per rotor, the averaged model is ``d V_bus = E + I (R + R_on_path)`` with ``E = Ω / Kv`` and the torque balance
``Kt (I - I0) = kQ Ω^2`` (kQ from CP at the working point). The bus is shared:

``V_bus = V_oc - R_pack I_pack``,  ``I_pack = N (d I + P_extra(V_bus, d, I) / V_bus)``

where P_extra holds every partial-throttle ESC loss (:mod:`esc`, zero at d = 1). Requests:

- :func:`at_duty` (``duty=1`` is full throttle): 1-D root on Ω of the bus residual,
- :func:`for_thrust`: Ω from the thrust (closed form or root), then 1-D root on V_bus (d > 1: infeasible;
  in the thin band just below full-throttle thrust where the switching losses' step at d = 1 leaves no
  balanced duty below 1, the full-throttle point is returned, whose thrust exceeds the request slightly),
- :func:`at_rpm`: the same bus solve at a given speed.

Closed forms of docs/model-reference.md#operating-point are used where they are exact (constant CT/CP and no
partial-throttle loss); otherwise ``scipy.optimize.elementwise.find_root`` (bracketed, vectorised) solves every
element at once.
Nothing raises: each element carries a :class:`~._types.Status` and NaN where it has no solution.

References
----------
.. [1] M. Drela, "First-Order DC Electric Motor Model", MIT Aero & Astro, 2007.
.. [2] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003.
.. [3] J. G. Leishman, *Principles of Helicopter Aerodynamics*, 2nd ed., Cambridge University Press, 2006.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Literal

import numpy as np
from scipy.optimize import elementwise

from . import esc as esc_model
from ._problem import Problem, build_problem
from ._types import RPM_PER_RAD_S, ArrayLike, FloatArray, IntArray, Status
from .esc import EscParams
from .forward_flight import FlightState
from .motor import MotorParams
from .operating_point import OperatingPoint, assemble, motor_side
from .propeller import PropellerTable, coefficients_at

SolveMethod = Literal["auto", "root"]
ROOT_TOLERANCES = {"xrtol": 1e-12, "xatol": 1e-12, "fatol": 1e-13}
"""Tolerances of the vectorised bracketed root finder (far below the 1e-6 the tests demand)."""


# --- pieces shared by the residuals and the result ------------------------------------------------------

def _extra_loss(p: Problem, bus_voltage: FloatArray, duty: FloatArray, current: FloatArray) -> FloatArray:
    return esc_model.extra_loss_w(bus_voltage, duty, current, p.resistance_ohm, p.inductance_h, p.esc)


def _has_pwm_losses(p: Problem) -> np.ndarray:
    """Elements whose ESC/motor parameters give a non-zero P_extra below full throttle."""
    return np.broadcast_to(esc_model.has_partial_throttle_losses(p.esc, p.inductance_h), (p.size,))


def _constant_table(p: Problem) -> np.ndarray:
    return np.broadcast_to(p.table_points == 1, (p.size,))


Residual = Callable[..., FloatArray]


def _find_root(residual: Residual, p: Problem, lower: FloatArray, upper: FloatArray,
               *extras: FloatArray) -> tuple[FloatArray, np.ndarray]:
    """Vectorised bracketed root of ``residual(x, subproblem, *extras)``; returns x and a success mask.

    ``extras`` are per-element arrays (length ``p.size``); like the problem they are gathered for the
    elements the root finder still iterates on.
    """
    if p.size == 0:
        return np.empty(0), np.empty(0, dtype=bool)

    def f(x: FloatArray, idx: np.ndarray) -> FloatArray:
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return residual(x, p.take(idx), *(e[idx] for e in extras))

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        res = elementwise.find_root(f, (lower, upper), args=(np.arange(p.size),), tolerances=ROOT_TOLERANCES)
    return np.asarray(res.x, dtype=np.float64), np.asarray(res.success, dtype=bool)


def _solve_subset(mask: np.ndarray, p: Problem, residual: Residual, lower: FloatArray, upper: FloatArray,
                  out: FloatArray, ok: np.ndarray, *extras: FloatArray) -> None:
    """Run :func:`_find_root` on the elements of ``mask`` and scatter into ``out`` / ``ok``."""
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return
    x, success = _find_root(residual, p.take(idx), lower[idx], upper[idx], *(e[idx] for e in extras))
    out[idx] = x
    ok[idx] = success


# --- bus solve for a known motor state (rpm and thrust requests) ----------------------------------------

def _bus_residual(v: FloatArray, q: Problem, motor_voltage: FloatArray, current: FloatArray) -> FloatArray:
    """``g(V) = V - V_oc + R N (V_m I + P_extra(V, V_m/V, I)) / V`` (zero on the consistent bus)."""
    extra = _extra_loss(q, v, motor_voltage / v, current)
    return v - q.open_circuit_voltage_v + q.pack_resistance_ohm * q.rotor_count * (
        motor_voltage * current + extra) / v


def _solve_bus(p: Problem, motor_voltage: FloatArray, current: FloatArray, active: np.ndarray,
               method: SolveMethod) -> tuple[FloatArray, IntArray]:
    """Bus voltage for known per-rotor V_m and I; returns (V_bus, status) with INFEASIBLE_THRUST for d > 1.

    ``V g(V) = V^2 - V_oc V + R N (V_m I + P_extra)`` has two roots when the pack can deliver the power: the
    healthy one (high voltage, below the pack's maximum-power point) and the collapsed one. We solve on the
    healthy side, ``V >= max(V_m, V_oc / 2)`` (d <= 1, and at least half the open-circuit voltage, the same
    boundary as the ranking's ``bus_collapse``), so a thrust a duty below 1 reaches on a very resistive pack is
    never called unreachable. g > 0 at V_oc, so the bracket ``[max(V_m, V_oc/2), V_oc]`` holds the healthy root
    exactly when g <= 0 at its lower end; otherwise the request needs d > 1 (or a collapsed bus).
    """
    n = p.size
    v_oc = np.broadcast_to(p.open_circuit_voltage_v, (n,))
    r_pack = np.broadcast_to(p.pack_resistance_ohm, (n,))
    load = np.broadcast_to(p.rotor_count * p.pack_resistance_ohm, (n,))
    status = np.full(n, Status.NO_SOLUTION, dtype=np.int8)
    # Slack of the bus at d = 1; a rounding-level slack is full throttle itself (e.g. the rpm of a d = 1 point).
    slack = v_oc - motor_voltage - load * current
    rounding = 1e-12 * v_oc
    half = 0.5 * v_oc
    lower = np.maximum(motor_voltage, half)
    at_duty_one = motor_voltage >= half  # the bracket starts at d = 1
    with np.errstate(invalid="ignore", divide="ignore"):
        g_lower = np.where(at_duty_one, -slack, _bus_residual(lower, p, motor_voltage, current))
    stiff_ok = (r_pack == 0.0) & (motor_voltage <= v_oc)
    feasible = active & (stiff_ok | np.where(at_duty_one, slack >= -rounding, g_lower <= 0.0))
    status[active & ~feasible] = Status.INFEASIBLE_THRUST
    bus = np.full(n, np.nan)
    at_full = feasible & at_duty_one & (np.abs(slack) <= rounding)
    bus[at_full] = motor_voltage[at_full]
    stiff = feasible & ~at_full & (r_pack == 0.0)
    bus[stiff] = v_oc[stiff]
    closed = feasible & ~stiff & ~at_full & ~_has_pwm_losses(p) if method == "auto" else np.zeros(n, dtype=bool)
    # Closed form without partial-throttle loss: V^2 - V_oc V + R N V_m I = 0, high-voltage root.
    with np.errstate(invalid="ignore"):
        disc = v_oc**2 - 4.0 * load * motor_voltage * current
        bus[closed] = 0.5 * (v_oc + np.sqrt(disc))[closed]
    ok = stiff | closed | at_full
    rooted = feasible & ~ok
    _solve_subset(rooted, p, _bus_residual, lower, v_oc, bus, ok, motor_voltage, current)
    status[ok] = Status.OK
    bus[~ok] = np.nan
    return bus, status


# --- the duty request -----------------------------------------------------------------------------------

def _duty_residual(omega: FloatArray, q: Problem, duty: FloatArray) -> FloatArray:
    """``F(Ω) = V_oc - V_bus - R N I_bus`` with ``V_bus = V_m(Ω) / d``; decreasing in Ω."""
    _, _, current, motor_voltage = motor_side(q, omega)
    bus = motor_voltage / duty
    bus_current = duty * current + _extra_loss(q, bus, duty, current) / bus
    return q.open_circuit_voltage_v - bus - q.pack_resistance_ohm * q.rotor_count * bus_current


def _closed_form_omega_for_duty(p: Problem, duty: FloatArray) -> FloatArray:
    """Stiff-bus quadratic with the pack folded in: V_m -> d V_oc, R' -> R' + N d^2 R_b.

    See docs/model-reference.md#operating-point-equations.
    """
    ct, cp = coefficients_at(p.table, np.zeros(p.size), p.airspeed_m_s)  # one-point tables: any speed
    k_q = cp * p.density_kg_m3 * p.diameter_m**5 / (8.0 * math.pi**3)
    resistance = p.series_resistance_ohm + p.rotor_count * duty**2 * p.pack_resistance_ohm
    a = k_q * p.kv_rad_s_per_v * resistance
    b = 1.0 / p.kv_rad_s_per_v
    c = p.no_load_current_a * resistance - duty * p.open_circuit_voltage_v
    with np.errstate(invalid="ignore"):
        # -2c / (b + sqrt(b^2 - 4ac)) is the positive root without cancellation (and a = 0 safe).
        omega = -2.0 * c / (b + np.sqrt(b * b - 4.0 * a * c))
    return np.where(c < 0.0, omega, np.nan)


def _solve_duty(p: Problem, duty: FloatArray, method: SolveMethod) -> tuple[FloatArray, FloatArray, IntArray]:
    n = p.size
    status = np.full(n, Status.NO_SOLUTION, dtype=np.int8)
    active = p.finite_inputs() & np.isfinite(duty)
    status[~active] = Status.NON_FINITE
    active &= (duty > 0.0) & (duty <= 1.0)
    omega = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)
    if method == "auto":
        closed = active & _constant_table(p) & ((duty == 1.0) | ~_has_pwm_losses(p))
        omega[closed] = _closed_form_omega_for_duty(p.take(np.flatnonzero(closed)), duty[closed])
        ok[closed] = np.isfinite(omega[closed])
    else:
        closed = np.zeros(n, dtype=bool)
    rooted = active & ~closed
    with np.errstate(invalid="ignore", divide="ignore"):
        start = _duty_residual(np.zeros(n), p, duty)  # > 0 when the motor can turn at all
    rooted &= start > 0.0
    upper = np.broadcast_to(p.kv_rad_s_per_v * p.open_circuit_voltage_v, (n,)) * duty
    _solve_subset(rooted, p, _duty_residual, np.zeros(n), upper, omega, ok, duty)
    omega[~ok] = np.nan
    status[ok] = Status.OK
    _, _, current, motor_voltage = motor_side(p, omega)
    with np.errstate(invalid="ignore", divide="ignore"):
        bus = motor_voltage / duty
    return omega, bus, status


# --- speed from thrust -------------------------------------------------------------------------------------

def _thrust_residual(omega: FloatArray, q: Problem, thrust: FloatArray) -> FloatArray:
    ct, _ = coefficients_at(q.table, omega, q.airspeed_m_s)
    n = omega / (2.0 * math.pi)
    return ct * q.density_kg_m3 * n * n * q.diameter_m**4 - thrust


def _omega_for_thrust(p: Problem, thrust: FloatArray, active: np.ndarray,
                      method: SolveMethod) -> tuple[FloatArray, np.ndarray]:
    """Ω that makes the requested thrust; bracketed by the table's extreme CT (and its first J)."""
    n = p.size
    ct_valid = np.where(np.isnan(p.thrust_coefficient), np.nan, p.thrust_coefficient)
    with np.errstate(all="ignore"):
        ct_max = np.broadcast_to(np.nanmax(ct_valid, axis=-1), (n,))
        ct_first = np.broadcast_to(p.thrust_coefficient[:, 0], (n,))
        ct_min = np.broadcast_to(np.nanmin(ct_valid, axis=-1), (n,))
        scale = np.broadcast_to(p.density_kg_m3 * p.diameter_m**4 / (4.0 * math.pi**2), (n,))
        def omega_at(ct: FloatArray) -> FloatArray:  # Ω where T = ct rho n^2 D^4
            return np.sqrt(thrust / (ct * scale))

        if p.axis == "rpm":
            lower, upper = omega_at(ct_max) * 0.999, omega_at(ct_min) * 1.001
            good = active & (ct_min > 0.0)
        else:
            # Speeds above 2πV/(J_first D) sit in the held first row of a table versus J.
            j_first = np.broadcast_to(np.maximum(p.axis_values[:, 0], 1e-3), (n,))
            beyond = 2.0 * math.pi * np.broadcast_to(p.airspeed_m_s / p.diameter_m, (n,)) / j_first
            lower = omega_at(ct_max) * 0.999
            upper = 1.5 * np.maximum(beyond, omega_at(ct_first))
            good = active & (ct_max > 0.0) & (ct_first > 0.0)
    good &= thrust > 0.0
    omega = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)
    constant = good & _constant_table(p) if method == "auto" else np.zeros(n, dtype=bool)
    omega[constant] = omega_at(ct_first)[constant]
    ok[constant] = True
    _solve_subset(good & ~constant, p, _thrust_residual, lower, upper, omega, ok, thrust)
    return omega, ok


_COMMON_DOC = """
    motor : MotorParams
        Motor parameters (broadcast over candidates).
    esc : EscParams
        ESC parameters; ``EscParams()`` gives the defaults of docs/model-reference.md#reference-model-v1.
    propeller : PropellerTable
        CT, CP versus rpm (static) or versus advance ratio (forward flight).
    open_circuit_voltage_v : array_like
        Pack open-circuit voltage ``S OCV(SOC)``, or a bench supply's voltage. [V]
    pack_resistance_ohm : array_like, default 0
        Pack plus wiring resistance; 0 is a stiff supply. [Ω]
    rotor_count : array_like, default 1
        Identical rotors N sharing the bus. [-]
    density_kg_m3 : array_like, default 1.225
        Air density. [kg/m^3]
    airspeed_m_s : array_like, default 0
        Axial airspeed (used by tables versus advance ratio; 0 for hover). [m/s]
    method : {"auto", "root"}, default "auto"
        "auto" uses closed forms where exact; "root" forces the vectorised root finder everywhere.

    Returns
    -------
    OperatingPoint
        Arrays of the broadcast shape with a per-element ``status``.
"""


def at_duty(duty: ArrayLike, *, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
            open_circuit_voltage_v: ArrayLike, pack_resistance_ohm: ArrayLike = 0.0, rotor_count: ArrayLike = 1,
            density_kg_m3: ArrayLike = 1.225, airspeed_m_s: ArrayLike = 0.0,
            method: SolveMethod = "auto") -> OperatingPoint:
    """Operating point at a given PWM duty (``duty=1`` is full throttle), bus sag solved consistently.

    Parameters
    ----------
    duty : array_like
        PWM duty in (0, 1]. [-]
    """
    p, (d,) = build_problem(motor, esc, propeller, open_circuit_voltage_v, pack_resistance_ohm, rotor_count,
                            density_kg_m3, airspeed_m_s, duty)
    omega, bus, status = _solve_duty(p, d, method)
    return assemble(p, omega, bus, status)


def for_thrust(thrust_n: ArrayLike, *, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
               open_circuit_voltage_v: ArrayLike, pack_resistance_ohm: ArrayLike = 0.0, rotor_count: ArrayLike = 1,
               density_kg_m3: ArrayLike = 1.225, airspeed_m_s: ArrayLike = 0.0,
               method: SolveMethod = "auto", flight: FlightState | None = None) -> OperatingPoint:
    """Operating point that gives a required thrust per rotor (duty solved; d > 1 is INFEASIBLE_THRUST).

    Parameters
    ----------
    thrust_n : array_like
        Required thrust per rotor (> 0). [N]
    flight : FlightState, optional
        Multirotor flight state of the point (its thrust is ``thrust_n``; broadcasts with the rest): the speed
        is the static table's for the thrust, the torque the table's corrected to the flight's shaft power
        (:func:`.forward_flight.shaft_torque_nm`, docs/model-reference.md#multirotor-flight-state). In the thin
        band where the request falls to full throttle, the full-throttle point is static.
    """
    p, (thrust,) = build_problem(motor, esc, propeller, open_circuit_voltage_v, pack_resistance_ohm, rotor_count,
                                 density_kg_m3, airspeed_m_s, thrust_n, flight=flight)
    active = p.finite_inputs() & np.isfinite(thrust)
    omega, found = _omega_for_thrust(p, thrust, active, method)
    return _at_speed(p, omega, active, found, method)


def at_rpm(rpm: ArrayLike, *, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
           open_circuit_voltage_v: ArrayLike, pack_resistance_ohm: ArrayLike = 0.0, rotor_count: ArrayLike = 1,
           density_kg_m3: ArrayLike = 1.225, airspeed_m_s: ArrayLike = 0.0,
           method: SolveMethod = "auto") -> OperatingPoint:
    """Operating point at a given shaft speed (duty solved; d > 1 is INFEASIBLE_THRUST).

    Parameters
    ----------
    rpm : array_like
        Shaft speed (> 0). [rpm]
    """
    p, (speed,) = build_problem(motor, esc, propeller, open_circuit_voltage_v, pack_resistance_ohm, rotor_count,
                                density_kg_m3, airspeed_m_s, rpm)
    active = p.finite_inputs() & np.isfinite(speed)
    omega = speed / RPM_PER_RAD_S
    return _at_speed(p, omega, active, active & (omega > 0.0), method)


for _f in (at_duty, for_thrust, at_rpm):
    _f.__doc__ = (_f.__doc__ or "") + _COMMON_DOC


def _at_speed(p: Problem, omega: FloatArray, active: np.ndarray, found: np.ndarray,
              method: SolveMethod) -> OperatingPoint:
    _, _, current, motor_voltage = motor_side(p, np.where(found, omega, np.nan))
    bus, status = _solve_bus(p, motor_voltage, current, found, method)
    # P_sw and P_dt drop to zero only *at* d = 1, so the bus balance jumps there: in a thin band of requests just
    # below the full-throttle thrust (or rpm) no duty below 1 balances, and the bracket collapses onto d = 1.
    # The ESC then runs at full throttle, which delivers at least the request: report that point.
    with np.errstate(invalid="ignore", divide="ignore"):
        residual = _bus_residual(bus, p, motor_voltage, current)
    jump = (status == Status.OK) & ~(np.abs(residual) <= 1e-9 * np.broadcast_to(p.open_circuit_voltage_v, bus.shape))
    if jump.any():
        idx = np.flatnonzero(jump)
        sub = p.take(idx)
        if p.flight is not None:  # full throttle stays static: the point reported is the table's own
            sub = replace(sub, flight_off=np.ones(idx.size, dtype=bool))
            off = np.zeros(p.size, dtype=bool) if p.flight_off is None else np.array(
                np.broadcast_to(p.flight_off, (p.size,)))
            off[idx] = True
            p = replace(p, flight_off=off)
        omega_full, bus_full, status_full = _solve_duty(sub, np.ones(idx.size), method)
        omega, bus = omega.copy(), bus.copy()
        omega[idx], bus[idx], status[idx] = omega_full, bus_full, status_full
    status[~active] = Status.NON_FINITE
    return assemble(p, omega, bus, status)


def full_throttle(*, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
                  open_circuit_voltage_v: ArrayLike, pack_resistance_ohm: ArrayLike = 0.0,
                  rotor_count: ArrayLike = 1, density_kg_m3: ArrayLike = 1.225, airspeed_m_s: ArrayLike = 0.0,
                  method: SolveMethod = "auto") -> OperatingPoint:
    """Full-throttle point ``at_duty(1.0, ...)``: maximum thrust (headroom) and maximum current."""
    return at_duty(1.0, motor=motor, esc=esc, propeller=propeller, open_circuit_voltage_v=open_circuit_voltage_v,
                   pack_resistance_ohm=pack_resistance_ohm, rotor_count=rotor_count, density_kg_m3=density_kg_m3,
                   airspeed_m_s=airspeed_m_s, method=method)
