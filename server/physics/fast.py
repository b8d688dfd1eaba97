"""Fast paths that reuse the physics engine's own integrator with operating points solved elsewhere.

:func:`server.physics.endurance.constant_thrust` re-solves the operating point at every SOC node with the
bracketed root finder, one node after the other. Its nodes are known in advance (a fixed SOC step from the
initial SOC down to ``1 - usable_fraction``), so a caller that can solve many operating points at once (the
ranking engine's closed forms and Newton steps) solves every node of every candidate in one vectorised call and
hands the values to the **same** march (:func:`server.physics.endurance._march`: trapezoid rule in SOC, event
location by interpolation or extrapolation, stop reasons). The discharge is then the same simulation, with the
operating point re-solved as the pack sags; only the per-node solver differs.

- :func:`constant_thrust_nodes` the SOC nodes the march visits (an array per candidate),
- :func:`march_constant_thrust` the march of :func:`~server.physics.endurance.constant_thrust` on node values.
"""

from __future__ import annotations

from dataclasses import fields

import numpy as np

from ._types import ArrayLike, FloatArray, as_float_array
from .battery import PackParams
from .endurance import DEFAULT_SOC_STEP, EnduranceResult, StopReason, _broadcast_pack, _march, _Node


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
    shape = nodes.shape[:-1]
    pk = _broadcast_pack(pack, shape)
    # Like the physics engine's operating point, a node without a solution has no current or voltage (NaN): the
    # march then extrapolates its events from the previous nodes and holds the rate of the last valid one.
    pack_current_a = np.where(reachable, pack_current_a, np.nan)
    bus_voltage_v = np.where(reachable, bus_voltage_v, np.nan)
    with np.errstate(invalid="ignore"):
        duty_margin = np.where(reachable, 1.0 - duty, -np.inf)
        cutoff_margin = bus_voltage_v / pk.cells_series[..., np.newaxis] - pk.cutoff_voltage_per_cell_v[
            ..., np.newaxis]
    calls = iter(range(nodes.shape[-1]))

    def node_at(soc: FloatArray) -> _Node:
        k = next(calls)
        if not np.array_equal(soc, nodes[..., k], equal_nan=True):
            raise ValueError("the march asked for a SOC that is not the precomputed node")
        return _Node(pack_current_a[..., k], bus_voltage_v[..., k], (cutoff_margin[..., k], duty_margin[..., k]),
                     invalid[..., k])

    result, _, _ = _march(node_at, np.array(nodes[..., 0]), 1.0 - pk.usable_fraction, pk.capacity_ah,
                          (pk.peukert_exponent, pk.peukert_rated_hours_h), soc_step,
                          (StopReason.CUTOFF_VOLTAGE, StopReason.THRUST_UNREACHABLE))
    return EnduranceResult(**{f.name: getattr(result, f.name) for f in fields(EnduranceResult)})
