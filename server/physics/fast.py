"""Fast paths that reuse the physics engine's own integrator with operating points solved elsewhere.

:func:`server.physics.endurance.constant_thrust` re-solves the operating point at every SOC node with the
bracketed root finder, one node after the other. Its nodes are known in advance (a fixed SOC step from the
initial SOC down to ``1 - usable_fraction``), so a caller that can solve many operating points at once (the
ranking engine's closed forms and Newton steps) solves every node of every candidate in one vectorised call and
hands the values to the **same** march (:func:`server.physics.endurance._march`: trapezoid rule in SOC, event
location by interpolation or extrapolation, stop reasons). The discharge is then the same simulation, with the
operating point re-solved as the pack sags; only the per-node solver differs.

- :func:`constant_thrust_nodes` the SOC nodes the march visits (an array per candidate),
- :func:`march_constant_thrust` the march of :func:`~server.physics.endurance.constant_thrust` on node values,
- :func:`constant_thrust` the whole discharge of one system (or of draws of one) from the physics engine's own
  parameter objects: every node solved at once by the screening solver
  (:func:`server.physics.drive_screen.cruise_point`, the function the ranking's refinement uses), the march above,
  and the reference :func:`~server.physics.endurance.constant_thrust` for any propeller the segment model refuses.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ._types import SECONDS_PER_HOUR_S, ArrayLike, FloatArray, as_float_array
from .battery import PackParams, peukert_effective_current_a
from .endurance import DEFAULT_SOC_STEP, EnduranceResult, StopReason, _broadcast_pack, _crossing
from .esc import EscParams
from .forward_flight import FlightState
from .motor import MotorParams
from .propeller import PropellerTable
from .system_batch import SystemBatch


def _steps(initial_soc: FloatArray, final_soc: FloatArray, soc_step: float) -> int:
    """Upper bound of the march's step count (it stops earlier when every candidate has stopped)."""
    span = np.where(np.isfinite(initial_soc - final_soc), initial_soc - final_soc, 0.0)
    return int(np.ceil(np.max(span, initial=0.0) / soc_step - 1e-9)) if span.size else 0


def constant_thrust_nodes(initial_state_of_charge: ArrayLike, pack: PackParams, shape: tuple[int, ...],
                          soc_step: float = DEFAULT_SOC_STEP) -> FloatArray:
    """SOC of every node the constant-thrust march may visit, shape ``shape + (K + 1,)``.

    Node 0 is the initial SOC; node k is ``max(s0 - k ΔSOC, 1 - usable_fraction)``, the expression the march
    itself evaluates, so the values are bit-identical to the SOCs it asks for.
    """
    pk = _broadcast_pack(pack, shape)
    s0 = np.broadcast_to(as_float_array(initial_state_of_charge), shape).astype(np.float64)
    final = 1.0 - pk.usable_fraction
    steps = _steps(s0, final, soc_step)
    nodes = np.empty(shape + (steps + 1,))
    nodes[..., 0] = s0
    for k in range(1, steps + 1):
        nodes[..., k] = np.maximum(s0 - k * soc_step, final)
    return nodes


def march_constant_thrust(nodes: FloatArray, pack_current_a: FloatArray, bus_voltage_v: FloatArray,
                          duty: FloatArray, reachable: np.ndarray, invalid: np.ndarray, *, pack: PackParams,
                          soc_step: float = DEFAULT_SOC_STEP) -> EnduranceResult:
    """Constant-thrust discharge from operating points solved at ``nodes`` (see :func:`constant_thrust_nodes`).

    Parameters
    ----------
    nodes : ndarray, shape ``B + (K + 1,)``
        SOC nodes from :func:`constant_thrust_nodes` (same pack, initial SOC and step).
    pack_current_a, bus_voltage_v, duty : ndarray, shape ``B + (K + 1,)``
        Pack current, bus (terminal) voltage and duty of the operating point at each node.
    reachable : ndarray of bool, shape ``B + (K + 1,)``
        False where the thrust needs d > 1 or has no solution (``INFEASIBLE_THRUST`` / ``NO_SOLUTION``); the
        other values of such a node are ignored.
    invalid : ndarray of bool, shape ``B + (K + 1,)``
        Non-finite inputs (``NON_FINITE``).
    pack : PackParams
        The pack, as given to :func:`~server.physics.endurance.constant_thrust`.

    Returns
    -------
    EnduranceResult
        What :func:`~server.physics.endurance.constant_thrust` returns without the start and end points.
    """
    result, _, _ = _march_nodes(nodes, pack_current_a, bus_voltage_v, duty, reachable, invalid, pack=pack,
                                soc_step=soc_step)
    return result


def _march_nodes(nodes: FloatArray, pack_current_a: FloatArray, bus_voltage_v: FloatArray, duty: FloatArray,
                 reachable: np.ndarray, invalid: np.ndarray, *, pack: PackParams,
                 soc_step: float) -> tuple[EnduranceResult, FloatArray, FloatArray]:
    """:func:`march_constant_thrust`, plus the SOC of each candidate's last valid node and of its stop.

    The step loop of :func:`server.physics.endurance._march` with every node known in advance: a candidate runs
    until the first node that violates a margin (or is invalid, or reaches the final SOC), so its previous nodes
    are simply the ones before, and the whole march is a few gathers and one cumulative sum (the trapezoids added
    in the loop's order). Same nodes, rates, event location and stop reasons as the loop
    (``tests/physics/test_fast_discharge.py`` holds the two to 1e-12 relative).
    """
    shape = nodes.shape[:-1]
    pk = _broadcast_pack(pack, shape)

    def col(a: FloatArray) -> FloatArray:
        return np.asarray(a)[..., np.newaxis]

    # Like the physics engine's operating point, a node without a solution has no current or voltage (NaN): the
    # march then extrapolates its events from the previous nodes and holds the rate of the last valid one.
    current = np.where(reachable, pack_current_a, np.nan)
    voltage = np.where(reachable, bus_voltage_v, np.nan)
    invalid = np.broadcast_to(invalid, nodes.shape)
    reasons = np.array([StopReason.CUTOFF_VOLTAGE, StopReason.THRUST_UNREACHABLE], dtype=np.int8)
    with np.errstate(invalid="ignore", divide="ignore"):
        margins = np.stack(np.broadcast_arrays(voltage / col(pk.cells_series) - col(pk.cutoff_voltage_per_cell_v),
                                               np.where(reachable, 1.0 - duty, -np.inf)))
        rate = SECONDS_PER_HOUR_S * col(pk.capacity_ah) / peukert_effective_current_a(
            current, col(pk.capacity_ah), col(pk.peukert_exponent), col(pk.peukert_rated_hours_h))
    s0 = np.array(nodes[..., 0])
    final = 1.0 - pk.usable_fraction
    # The first node decides whether a candidate flies at all.
    violated0 = margins[..., 0] < 0.0
    invalid0 = invalid[..., 0]
    reason = np.full(shape, StopReason.USABLE_CAPACITY, dtype=np.int8)
    reason[invalid0] = StopReason.INVALID_INPUT
    for j, code in enumerate(reasons):
        reason[~invalid0 & violated0[j] & (reason == StopReason.USABLE_CAPACITY)] = code
    running = ~invalid0 & ~np.any(violated0, axis=0) & (s0 > final)
    steps = int(np.ceil(np.nanmax(np.where(running, s0 - final, 0.0), initial=0.0) / soc_step - 1e-9))
    steps = min(steps, nodes.shape[-1] - 1)
    time = np.zeros(shape)
    stop_soc, last_valid = s0.copy(), s0.copy()
    end_current, end_voltage = current[..., 0].copy(), voltage[..., 0].copy()
    if steps > 0 and running.any():
        later = slice(1, steps + 1)
        violated = np.any(margins[..., later] < 0.0, axis=0) | invalid[..., later]
        ends = violated | (nodes[..., later] <= col(final))
        last = np.where(ends.any(axis=-1), np.argmax(ends, axis=-1) + 1, steps)  # the last node the march visits

        def at(a: np.ndarray, k: np.ndarray) -> np.ndarray:
            return np.take_along_axis(a, k[..., np.newaxis], axis=-1)[..., 0]

        before, before2 = last - 1, np.maximum(last - 2, 0)
        s_now, s_prev, s_prev2 = at(nodes, last), at(nodes, before), at(nodes, before2)
        invalid_now = at(invalid, last)
        hit = running & (np.any([at(m, last) < 0.0 for m in margins], axis=0) | invalid_now)
        # Earliest event of a candidate that hit one inside its last step.
        crossings = np.stack([np.where((at(m, last) < 0.0) | invalid_now, _crossing(
            s_prev, s_now, at(m, before), at(m, last), s_prev2, at(m, before2)), -np.inf) for m in margins])
        s_stop = np.where(hit, np.max(crossings, axis=0), s_now)
        h_now, h_prev = at(rate, last), at(rate, before)
        with np.errstate(invalid="ignore", divide="ignore"):
            h_stop = np.where(np.isfinite(h_now), h_prev + (h_now - h_prev) * (s_prev - s_stop) / np.where(
                s_prev > s_now, s_prev - s_now, 1.0), h_prev)
            trapezoids = 0.5 * (rate[..., :steps] + rate[..., later]) * (nodes[..., :steps] - nodes[..., later])
        k = np.arange(1, steps + 1)
        last_trapezoid = 0.5 * (h_prev + np.where(hit, h_stop, h_now)) * (s_prev - s_stop)
        trapezoids = np.where(k < col(last), trapezoids, np.where(k == col(last), col(last_trapezoid), 0.0))
        time = np.where(running, np.cumsum(trapezoids, axis=-1)[..., -1], time)
        stop_soc = np.where(running, s_stop, stop_soc)
        reason = np.where(hit, reasons[np.argmax(crossings, axis=0)], reason).astype(np.int8)
        valid_node = np.where(hit, before, last)
        last_valid = np.where(running, at(nodes, valid_node), last_valid)
        end_current = np.where(running, at(current, valid_node), end_current)
        end_voltage = np.where(running, at(voltage, valid_node), end_voltage)
    result = EnduranceResult(time, stop_soc, reason, np.array(current[..., 0]), end_current,
                             np.array(voltage[..., 0]), end_voltage)
    return result, last_valid, stop_soc

@dataclass(frozen=True)
class DischargePoint:
    """The operating point of a discharge at one state of charge (start or end), per candidate.

    Attributes
    ----------
    duty : ndarray
        PWM duty. [-]
    bus_voltage_v : ndarray
        Pack terminal (bus) voltage. [V]
    pack_current_a : ndarray
        Pack current of all rotors. [A]
    motor_current_a : ndarray
        Motor current per rotor. [A]
    """

    duty: FloatArray
    bus_voltage_v: FloatArray
    pack_current_a: FloatArray
    motor_current_a: FloatArray


@dataclass(frozen=True)
class FastThrustResult(EnduranceResult):
    """:func:`constant_thrust`: the discharge, its start and end points (as the reference reports them: the end is
    the stop's point, or the last valid node's where the stop has none), and which candidates the screening solver
    flew (the others went through the reference solver)."""

    start: DischargePoint | None = None
    end: DischargePoint | None = None
    screened: np.ndarray | None = None


def constant_thrust(thrust_n: ArrayLike, *, pack: PackParams, motor: MotorParams, esc: EscParams,
                    propeller: PropellerTable, rotor_count: float = 1.0, density_kg_m3: float = 1.225,
                    airspeed_m_s: float = 0.0, initial_state_of_charge: float = 1.0,
                    soc_step: float = DEFAULT_SOC_STEP, current_factor: ArrayLike = 1.0,
                    flight: FlightState | None = None) -> FastThrustResult:
    """The discharge of :func:`server.physics.endurance.constant_thrust` with every SOC node solved at once.

    Same physics, nodes, march and stop reasons (docs/model-reference.md#endurance); the operating point at the
    nodes comes from :func:`server.physics.drive_screen.cruise_point` (the speed for the thrust on the propeller
    segment, then the sagged bus by Newton with every partial-throttle ESC loss: the ranking refinement's solver,
    equal to the reference's bracketed roots to rounding, ``tests/physics/test_fast_discharge.py``). A candidate
    whose propeller table the segment model cannot solve (:attr:`PropModel.solvable`) or whose inputs are not finite is
    solved by :func:`server.physics.drive.for_thrust` at the same nodes.

    Parameters
    ----------
    thrust_n, pack, motor, esc, propeller
        As for :func:`server.physics.endurance.constant_thrust`; every array broadcasts to one flat candidate axis
        (or is a scalar), a table has one row or one row per candidate.
    rotor_count, density_kg_m3, airspeed_m_s, initial_state_of_charge : float
        Rotors on the pack [-], air density [kg/m^3], axial airspeed [m/s], SOC at take-off [-].
    soc_step : float, default 0.01
        SOC step of the march. [-]
    current_factor : array_like, default 1
        Multiplies the pack current that drains the capacity (a model-discrepancy draw); voltages, stop events and
        the reported points are the model's own. [-]
    flight : FlightState, optional
        Multirotor flight state of the thrust (as for :func:`server.physics.endurance.constant_thrust`; the same for
        every candidate).

    Returns
    -------
    FastThrustResult
        Time, final SOC, stop reason, start and end points (shape (n,)), and the screened mask.
    """
    shapes = [np.shape(thrust_n), np.shape(current_factor), propeller.batch_shape,
              *(np.shape(getattr(x, f.name)) for x in (pack, motor, esc) for f in fields(x))]
    n = int(np.prod(np.broadcast_shapes(*shapes), dtype=np.int64))
    pk = _broadcast_pack(pack, (n,))
    system = SystemBatch(motor=motor, esc=esc, propeller=propeller, pack_resistance_ohm=pk.resistance_ohm,
                         rotor_count=rotor_count, density_kg_m3=density_kg_m3, airspeed_m_s=airspeed_m_s,
                         batch_shapes=((n,),))
    thrust = np.broadcast_to(as_float_array(thrust_n), (n,))[:, np.newaxis]
    nodes = constant_thrust_nodes(initial_state_of_charge, pk, (n,), soc_step)  # (n, K + 1)
    voc = pk.open_circuit_voltage_v(np.moveaxis(nodes, -1, 0)).T  # the reference's expression, node axis last
    at_nodes = system.for_thrust(thrust, voc, flight)
    factor = np.broadcast_to(as_float_array(current_factor), (n,))[:, np.newaxis]
    result, last_valid, stop = _march_nodes(nodes, rotor_count * at_nodes.bus_current_a * factor,
                                            at_nodes.bus_voltage_v, at_nodes.duty, at_nodes.reachable,
                                            at_nodes.invalid, pack=pk, soc_step=soc_step)
    # Start, stop and last valid node in one more call; the end is the stop's point where it has one, else the last
    # valid node's (as endurance.constant_thrust reports it).
    marks = np.stack([nodes[:, 0], stop, last_valid], axis=-1)
    at = system.for_thrust(thrust, pk.open_circuit_voltage_v(marks.T).T, flight)

    def point(i: int) -> DischargePoint:
        return DischargePoint(duty=at.duty[:, i], bus_voltage_v=at.bus_voltage_v[:, i],
                              pack_current_a=rotor_count * at.bus_current_a[:, i],
                              motor_current_a=at.motor_current_a[:, i])

    start, at_stop, at_last = point(0), point(1), point(2)
    end = DischargePoint(*(np.where(at.reachable[:, 1], getattr(at_stop, f.name), getattr(at_last, f.name))
                           for f in fields(DischargePoint)))
    return FastThrustResult(**{f.name: getattr(result, f.name) for f in fields(EnduranceResult)}, start=start,
                            end=end, screened=system.screened)
