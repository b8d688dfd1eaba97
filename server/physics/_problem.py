"""Flattened, broadcast inputs of an operating-point solve (internal to :mod:`drive`).

Every per-candidate quantity is stored as a 1-D array of length 1 (shared by all candidates) or n (one per
candidate), so a chunk where all candidates share a propeller table does not copy the table n times, and a
root finder can gather the rows of the elements it still iterates on with :meth:`Problem.take`.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace

import numpy as np

from ._types import ArrayLike, FloatArray, as_float_array
from .esc import EscParams
from .forward_flight import FlightState
from .motor import MotorParams
from .propeller import PropellerAxis, PropellerTable


def _flat(value: ArrayLike, shape: tuple[int, ...]) -> FloatArray:
    a = as_float_array(value)
    if a.size == 1:
        return a.reshape(1)
    return np.ascontiguousarray(np.broadcast_to(a, shape)).reshape(-1)


def _flat_table(value: FloatArray, shape: tuple[int, ...]) -> FloatArray:
    k = value.shape[-1]
    if int(np.prod(value.shape[:-1], dtype=np.int64)) == 1:
        return value.reshape(1, k)
    return np.ascontiguousarray(np.broadcast_to(value, shape + (k,))).reshape(-1, k)


def _rows(a: FloatArray, idx: np.ndarray) -> FloatArray:
    return a if a.shape[0] == 1 else a[idx]


@dataclass(frozen=True)
class Problem:
    """Flat inputs; arrays have length 1 or ``size`` along their first axis."""

    shape: tuple[int, ...]
    size: int
    kv_rad_s_per_v: FloatArray
    resistance_ohm: FloatArray
    no_load_current_a: FloatArray
    inductance_h: FloatArray
    max_current_a: FloatArray
    esc: EscParams
    diameter_m: FloatArray
    axis_values: FloatArray
    thrust_coefficient: FloatArray
    power_coefficient: FloatArray
    table_points: FloatArray
    axis: PropellerAxis
    open_circuit_voltage_v: FloatArray
    pack_resistance_ohm: FloatArray
    rotor_count: FloatArray
    density_kg_m3: FloatArray
    airspeed_m_s: FloatArray
    flight: FlightState | None = None
    """Multirotor flight state (arrays flat like the rest): the torque is the static table's corrected to the
    flight's shaft power (:func:`.forward_flight.shaft_torque_nm`); None: the table's torque as it is."""
    flight_off: np.ndarray | None = None
    """Elements that use the table's torque as it is although ``flight`` is set (full throttle stays static)."""

    @property
    def series_resistance_ohm(self) -> FloatArray:
        """Motor plus ESC conduction resistance R' = R + R_on_path. [Ω]"""
        return self.resistance_ohm + self.esc.on_path_resistance_ohm

    @property
    def table(self) -> PropellerTable:
        return PropellerTable(self.diameter_m, self.axis_values, self.thrust_coefficient, self.power_coefficient,
                              self.axis)

    def take(self, idx: np.ndarray) -> Problem:
        """The sub-problem of elements ``idx`` (shared length-1 arrays stay shared)."""
        esc = EscParams(**{f.name: _rows(getattr(self.esc, f.name), idx) for f in fields(self.esc)})
        changes: dict[str, object] = {"size": int(idx.size), "shape": (int(idx.size),), "esc": esc}
        if self.flight is not None:
            changes["flight"] = FlightState(**{f.name: _rows(getattr(self.flight, f.name), idx)
                                               for f in fields(self.flight)})
        for f in fields(self):
            if f.name == "flight":
                continue
            value = getattr(self, f.name)
            if isinstance(value, np.ndarray):
                changes[f.name] = _rows(value, idx)
        return replace(self, **changes)  # type: ignore[arg-type]

    def finite_inputs(self) -> np.ndarray:
        """Elements whose inputs are all usable (NaN padding of tables aside)."""
        ok = np.ones(self.size, dtype=bool)
        for a in (self.kv_rad_s_per_v, self.resistance_ohm, self.no_load_current_a, self.diameter_m,
                  self.open_circuit_voltage_v, self.pack_resistance_ohm, self.rotor_count, self.density_kg_m3,
                  self.airspeed_m_s, *(getattr(self.esc, f.name) for f in fields(self.esc)
                                       if f.name != "max_current_a")):
            ok &= np.broadcast_to(np.isfinite(a), (self.size,))
        for a in (self.inductance_h, self.max_current_a, self.esc.max_current_a):
            ok &= np.broadcast_to(~np.isnan(a), (self.size,))
        ok &= np.broadcast_to(self.table_points >= 1, (self.size,))
        return ok


def build_problem(motor: MotorParams, esc: EscParams, propeller: PropellerTable, open_circuit_voltage_v: ArrayLike,
                  pack_resistance_ohm: ArrayLike, rotor_count: ArrayLike, density_kg_m3: ArrayLike,
                  airspeed_m_s: ArrayLike, *requests: ArrayLike,
                  flight: FlightState | None = None) -> tuple[Problem, list[FloatArray]]:
    """Broadcast everything to one shape and flatten; returns the problem and the flat requests."""
    flight_arrays = [] if flight is None else [getattr(flight, f.name) for f in fields(flight)]
    scalars = [*flight_arrays, motor.kv_rpm_per_v, motor.resistance_ohm, motor.no_load_current_a, motor.inductance_h,
               motor.max_current_a, propeller.diameter_m, open_circuit_voltage_v, pack_resistance_ohm,
               rotor_count, density_kg_m3, airspeed_m_s, *requests,
               *(getattr(esc, f.name) for f in fields(esc))]
    shape = np.broadcast_shapes(*(np.shape(s) for s in scalars), propeller.batch_shape)
    size = int(np.prod(shape, dtype=np.int64))
    k = propeller.axis_values.shape[-1]
    table_shape = propeller.batch_shape + (k,)
    grid = np.broadcast_to(propeller.axis_values, table_shape)
    points = np.sum(~np.isnan(grid), axis=-1).astype(np.float64)
    problem = Problem(
        shape=shape, size=size,
        kv_rad_s_per_v=_flat(motor.kv_rad_s_per_v, shape),
        resistance_ohm=_flat(motor.resistance_ohm, shape),
        no_load_current_a=_flat(motor.no_load_current_a, shape),
        inductance_h=_flat(motor.inductance_h, shape),
        max_current_a=_flat(motor.max_current_a, shape),
        esc=EscParams(**{f.name: _flat(getattr(esc, f.name), shape) for f in fields(esc)}),
        diameter_m=_flat(propeller.diameter_m, shape),
        axis_values=_flat_table(grid, shape),
        thrust_coefficient=_flat_table(np.broadcast_to(propeller.thrust_coefficient, table_shape), shape),
        power_coefficient=_flat_table(np.broadcast_to(propeller.power_coefficient, table_shape), shape),
        table_points=_flat(points, shape),
        axis=propeller.axis,
        open_circuit_voltage_v=_flat(open_circuit_voltage_v, shape),
        pack_resistance_ohm=_flat(pack_resistance_ohm, shape),
        rotor_count=_flat(rotor_count, shape),
        density_kg_m3=_flat(density_kg_m3, shape),
        airspeed_m_s=_flat(airspeed_m_s, shape),
        flight=None if flight is None else FlightState(**{f.name: _flat(getattr(flight, f.name), shape)
                                                          for f in fields(flight)}),
    )
    flat_requests = [np.broadcast_to(_flat(r, shape), (size,)) for r in requests]
    return problem, flat_requests
