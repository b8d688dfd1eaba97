"""Endurance: discharge a pack at constant thrust (operating point re-solved as the pack sags) or power.

The pack current depends only on the state of charge (constant thrust, constant air density, zeroth-order
cell model), so ``dt/dSOC = -3600 C / I_eff(SOC)`` and the flight time is a quadrature over SOC. We march
every candidate at once on SOC nodes ``s0, s0 - ΔSOC, ...`` (fixed step, default 0.01, which lands on the
5 % knots of the OCV table), re-solve the operating point at each node, accumulate time with the
trapezoid rule, and stop each candidate at the first of:

- ``USABLE_CAPACITY``: SOC reaches ``1 - usable_fraction``,
- ``CUTOFF_VOLTAGE``: the terminal (bus) voltage per cell under load falls below the cut-off,
- ``THRUST_UNREACHABLE``: the required duty exceeds 1 (``POWER_LIMIT`` for constant power).

An event inside a step is located by linear interpolation of its margin between the two nodes (or by
extrapolation from the two previous nodes when the margin does not exist at the new node, e.g. d > 1).
Peukert's correction (k = 1 disables it) scales the current that drains the rated capacity.

References
----------
.. [1] G. L. Plett, *Battery Management Systems, Vol. I: Battery Modeling*, Artech House, 2015 (coulomb counting).
.. [2] W. Peukert, Elektrotechnische Zeitschrift 18 (1897) 287-288.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, fields, replace
from enum import IntEnum

import numpy as np

from . import drive
from ._types import SECONDS_PER_HOUR_S, ArrayLike, FloatArray, IntArray, Status, as_float_array
from .battery import PackParams, current_for_power_a, peukert_effective_current_a
from .esc import EscParams
from .forward_flight import FlightState
from .motor import MotorParams
from .operating_point import OperatingPoint
from .propeller import PropellerTable

DEFAULT_SOC_STEP = 0.01


class StopReason(IntEnum):
    """Why a discharge ended."""

    USABLE_CAPACITY = 0
    CUTOFF_VOLTAGE = 1
    THRUST_UNREACHABLE = 2
    POWER_LIMIT = 3
    INVALID_INPUT = 4


@dataclass(frozen=True)
class EnduranceResult:
    """Discharge outcome per candidate.

    Attributes
    ----------
    time_s : ndarray
        Flight time until the stop. [s]
    final_state_of_charge : ndarray
        SOC at the stop. [-]
    stop_reason : ndarray of int8
        :class:`StopReason` codes.
    start_current_a, end_current_a : ndarray
        Pack current at start and stop. [A]
    start_voltage_v, end_voltage_v : ndarray
        Pack terminal (bus) voltage at start and stop. [V]
    """

    time_s: FloatArray
    final_state_of_charge: FloatArray
    stop_reason: IntArray
    start_current_a: FloatArray
    end_current_a: FloatArray
    start_voltage_v: FloatArray
    end_voltage_v: FloatArray


@dataclass(frozen=True)
class ThrustEnduranceResult(EnduranceResult):
    """Constant-thrust discharge, with the full operating points at the start and at the stop."""

    start: OperatingPoint | None = None
    end: OperatingPoint | None = None


@dataclass(frozen=True)
class _Node:
    """What the integrator needs from one SOC node: current, margins (≥ 0 fine), and the node's payload."""

    pack_current_a: FloatArray
    terminal_voltage_v: FloatArray
    margins: tuple[FloatArray, ...]
    invalid: np.ndarray


def _crossing(s_prev: FloatArray, s_now: FloatArray, m_prev: FloatArray, m_now: FloatArray,
              s_prev2: FloatArray, m_prev2: FloatArray) -> FloatArray:
    """SOC in [s_now, s_prev] where a margin crosses zero (interpolate, else extrapolate, else s_prev)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        inter = s_prev + (s_now - s_prev) * m_prev / (m_prev - m_now)
        extra = s_prev + (s_prev - s_prev2) * m_prev / (m_prev2 - m_prev)
    s = np.where(np.isfinite(m_now), inter, np.where(np.isfinite(extra), extra, s_prev))
    return np.clip(np.where(np.isfinite(s), s, s_prev), s_now, s_prev)


def _march(node_at: Callable[[FloatArray], _Node], initial_soc: FloatArray, final_soc: FloatArray,
           capacity_ah: FloatArray, peukert: tuple[FloatArray, FloatArray], soc_step: float,
           reasons: tuple[StopReason, ...]) -> tuple[EnduranceResult, FloatArray, FloatArray]:
    """March all candidates over SOC; returns the result plus the SOC of the last valid node and the stop SOC."""
    shape = initial_soc.shape
    k_exp, rated_h = peukert

    def rate(node: _Node) -> FloatArray:  # dt/dSOC magnitude [s per unit SOC]
        i_eff = peukert_effective_current_a(node.pack_current_a, capacity_ah, k_exp, rated_h)
        with np.errstate(divide="ignore", invalid="ignore"):
            return SECONDS_PER_HOUR_S * capacity_ah / i_eff

    first = node_at(initial_soc)
    time = np.zeros(shape)
    stop_soc = initial_soc.copy()
    reason = np.full(shape, StopReason.USABLE_CAPACITY, dtype=np.int8)
    violated0 = [m < 0.0 for m in first.margins]
    running = ~first.invalid & ~np.any(violated0, axis=0) & (initial_soc > final_soc)
    reason[first.invalid] = StopReason.INVALID_INPUT
    for j, v in enumerate(violated0):
        reason[~first.invalid & v & (reason == StopReason.USABLE_CAPACITY)] = reasons[j]
    end_current, end_voltage = first.pack_current_a.copy(), first.terminal_voltage_v.copy()
    last_valid_soc = initial_soc.copy()
    s_prev, s_prev2 = initial_soc.copy(), initial_soc.copy()
    h_prev, prev, prev2 = rate(first), first, first
    steps = int(np.ceil(np.nanmax(np.where(running, initial_soc - final_soc, 0.0), initial=0.0) / soc_step - 1e-9))
    for k in range(1, steps + 1):
        if not running.any():
            break
        s_now = np.maximum(initial_soc - k * soc_step, final_soc)
        node = node_at(s_now)
        h_now = rate(node)
        violated = np.stack([m < 0.0 for m in node.margins]) | node.invalid[np.newaxis]
        hit = running & np.any(violated, axis=0)
        # Earliest event of each candidate that hit one inside this step.
        crossings = np.stack([
            np.where(violated[j], _crossing(s_prev, s_now, prev.margins[j], node.margins[j], s_prev2,
                                            prev2.margins[j]), -np.inf) for j in range(len(reasons))])
        which = np.argmax(crossings, axis=0)
        s_stop = np.where(hit, np.max(crossings, axis=0), s_now)
        h_stop = np.where(np.isfinite(h_now), h_prev + (h_now - h_prev) * (s_prev - s_stop) / np.where(
            s_prev > s_now, s_prev - s_now, 1.0), h_prev)
        h_end = np.where(hit, h_stop, h_now)
        time = np.where(running, time + 0.5 * (h_prev + h_end) * (s_prev - s_stop), time)
        stop_soc = np.where(running, s_stop, stop_soc)
        reason = np.where(hit, np.asarray(reasons, dtype=np.int8)[which], reason).astype(np.int8)
        ok_now = running & ~hit
        end_current = np.where(ok_now, node.pack_current_a, end_current)
        end_voltage = np.where(ok_now, node.terminal_voltage_v, end_voltage)
        last_valid_soc = np.where(ok_now, s_now, last_valid_soc)
        running = ok_now & (s_now > final_soc)
        s_prev2, s_prev = np.where(ok_now, s_prev, s_prev2), np.where(ok_now, s_now, s_prev)
        prev2 = _where_node(ok_now, prev, prev2)
        prev = _where_node(ok_now, node, prev)
        h_prev = np.where(ok_now, h_now, h_prev)
    result = EnduranceResult(np.asarray(time), np.asarray(stop_soc), np.asarray(reason),
                             np.asarray(first.pack_current_a), np.asarray(end_current),
                             np.asarray(first.terminal_voltage_v), np.asarray(end_voltage))
    return result, last_valid_soc, stop_soc


def _where_node(mask: np.ndarray, a: _Node, b: _Node) -> _Node:
    return _Node(np.where(mask, a.pack_current_a, b.pack_current_a),
                 np.where(mask, a.terminal_voltage_v, b.terminal_voltage_v),
                 tuple(np.where(mask, x, y) for x, y in zip(a.margins, b.margins, strict=True)),
                 np.where(mask, a.invalid, b.invalid))


def _broadcast_pack(pack: PackParams, shape: tuple[int, ...]) -> PackParams:
    return replace(pack, **{f.name: np.broadcast_to(getattr(pack, f.name), shape) for f in fields(pack)})


def constant_power(power_w: ArrayLike, *, pack: PackParams, initial_state_of_charge: ArrayLike = 1.0,
                   soc_step: float = DEFAULT_SOC_STEP) -> EnduranceResult:
    """Discharge at constant terminal power until usable capacity, cut-off or the pack's power limit.

    Parameters
    ----------
    power_w : array_like
        Power at the pack terminals. [W]
    pack : PackParams
        Pack (OCV table, resistance, usable fraction, cut-off, Peukert).
    initial_state_of_charge : array_like, default 1
        SOC at take-off. [-]
    soc_step : float, default 0.01
        SOC step of the march. [-]

    Returns
    -------
    EnduranceResult
        Time, final SOC, stop reason, and start/end current and terminal voltage.
    """
    shape = np.broadcast_shapes(np.shape(power_w), np.shape(initial_state_of_charge),
                                *(np.shape(getattr(pack, f.name)) for f in fields(pack)))
    pk = _broadcast_pack(pack, shape)
    power = np.broadcast_to(as_float_array(power_w), shape)

    def node_at(soc: FloatArray) -> _Node:
        v_oc = pk.open_circuit_voltage_v(soc)
        r = pk.resistance_ohm
        current, status = current_for_power_a(v_oc, r, power)
        terminal = v_oc - current * r
        with np.errstate(divide="ignore", invalid="ignore"):
            headroom = (v_oc**2 - 4.0 * r * power) / v_oc**2  # < 0: the pack cannot deliver the power
        return _Node(current, terminal, (terminal / pk.cells_series - pk.cutoff_voltage_per_cell_v, headroom),
                     (status == Status.NON_FINITE) | ~np.isfinite(v_oc))

    s0 = np.broadcast_to(as_float_array(initial_state_of_charge), shape)
    result, _, _ = _march(node_at, s0.astype(np.float64), 1.0 - pk.usable_fraction, pk.capacity_ah,
                          (pk.peukert_exponent, pk.peukert_rated_hours_h), soc_step,
                          (StopReason.CUTOFF_VOLTAGE, StopReason.POWER_LIMIT))
    return result


def constant_thrust(thrust_n: ArrayLike, *, pack: PackParams, motor: MotorParams, esc: EscParams,
                    propeller: PropellerTable, rotor_count: ArrayLike = 1, density_kg_m3: ArrayLike = 1.225,
                    airspeed_m_s: ArrayLike = 0.0, initial_state_of_charge: ArrayLike = 1.0,
                    soc_step: float = DEFAULT_SOC_STEP, flight: FlightState | None = None) -> ThrustEnduranceResult:
    """Hover/cruise endurance at constant thrust per rotor, the operating point re-solved as the pack sags.

    Parameters
    ----------
    thrust_n : array_like
        Thrust per rotor. [N]
    pack : PackParams
        Pack (OCV table, resistance, usable fraction, cut-off per cell, Peukert).
    motor, esc, propeller
        As for :func:`drive.for_thrust`.
    rotor_count : array_like, default 1
        Rotors N on the pack. [-]
    density_kg_m3 : array_like, default 1.225
        Air density. [kg/m^3]
    airspeed_m_s : array_like, default 0
        Axial airspeed (forward tables). [m/s]
    initial_state_of_charge : array_like, default 1
        SOC at take-off. [-]
    soc_step : float, default 0.01
        SOC step of the march. [-]
    flight : FlightState, optional
        Multirotor flight state (as for :func:`drive.for_thrust`; broadcasts with the candidates).

    Returns
    -------
    ThrustEnduranceResult
        Time, stop reason, and the operating points at start and stop.
    """
    def solve(soc: ArrayLike) -> OperatingPoint:
        return drive.for_thrust(thrust_n, motor=motor, esc=esc, propeller=propeller,
                                open_circuit_voltage_v=pack.open_circuit_voltage_v(soc),
                                pack_resistance_ohm=pack.resistance_ohm, rotor_count=rotor_count,
                                density_kg_m3=density_kg_m3, airspeed_m_s=airspeed_m_s, flight=flight)

    start = solve(initial_state_of_charge)
    shape = np.broadcast_shapes(start.status.shape, np.shape(initial_state_of_charge),
                                *(np.shape(getattr(pack, f.name)) for f in fields(pack)))
    pk = _broadcast_pack(pack, shape)
    # Every SOC the march may visit is known in advance: solve them all in one vectorised call (node axis first, so
    # it broadcasts with any batch shape), then hand the march the node it asks for. Same solver, same roots.
    from .fast import constant_thrust_nodes

    nodes = np.moveaxis(constant_thrust_nodes(initial_state_of_charge, pack, shape, soc_step), -1, 0)
    full = nodes.shape
    solved = solve(nodes)
    at_nodes = [np.broadcast_to(a, full) for a in (solved.pack_current_a, solved.bus_voltage_v, solved.duty,
                                                    solved.status)]
    visit = iter(range(full[0]))

    def node_at(soc: FloatArray) -> _Node:
        k = next(visit, None)
        if k is None or not np.array_equal(nodes[k], soc):
            op = solve(soc)
            current, voltage, duty, status = op.pack_current_a, op.bus_voltage_v, op.duty, op.status
        else:
            current, voltage, duty, status = (a[k] for a in at_nodes)
        unreachable = (status == Status.INFEASIBLE_THRUST) | (status == Status.NO_SOLUTION)
        duty_margin = np.where(unreachable, -np.inf, 1.0 - duty)
        cutoff_margin = voltage / pk.cells_series - pk.cutoff_voltage_per_cell_v
        return _Node(np.broadcast_to(current, shape), np.broadcast_to(voltage, shape),
                     (np.broadcast_to(cutoff_margin, shape), np.broadcast_to(duty_margin, shape)),
                     np.broadcast_to(status == Status.NON_FINITE, shape))

    s0 = np.broadcast_to(as_float_array(initial_state_of_charge), shape).astype(np.float64)
    result, last_valid, stop = _march(node_at, s0, 1.0 - pk.usable_fraction, pk.capacity_ah,
                                      (pk.peukert_exponent, pk.peukert_rated_hours_h), soc_step,
                                      (StopReason.CUTOFF_VOLTAGE, StopReason.THRUST_UNREACHABLE))
    both = solve(np.stack([stop, last_valid]))  # one vectorised solve for the stop and the last valid node
    at_stop, at_last = (both.map(lambda a, i=i: np.broadcast_to(a, np.broadcast_shapes(np.shape(a), (2, *shape)))[i])
                        for i in (0, 1))
    solved_at_stop = np.isin(at_stop.status, (Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR))
    end = at_stop.map(lambda stop, last: np.where(solved_at_stop, stop, last), at_last)
    return ThrustEnduranceResult(**{f.name: getattr(result, f.name) for f in fields(EnduranceResult)},
                                 start=start, end=end)
