"""Operating points of one power system, or of many draws of one, by the screening solver (reference where it cannot).

:mod:`.drive` solves an operating point by bracketed root finding (``scipy.optimize.elementwise.find_root``): exact,
but each call costs milliseconds of iteration overhead whatever its size. The ranking engine solves the same
equations with closed forms and Newton steps (:mod:`.drive_screen` on the segment tables of
:mod:`.propeller_segments`), equal to the reference to rounding (``tests/selection/test_fast_paths.py``). This
module puts the physics engine's own parameter objects (:class:`.motor.MotorParams`, :class:`.esc.EscParams`, a
:class:`.propeller.PropellerTable`, a pack resistance) into that solver, for a flat batch of ``n`` systems (one
system, or the draws of its uncertain parameters):

- :meth:`SystemBatch.for_thrust`: the point that gives a thrust per rotor (:func:`.drive_screen.cruise_point`),
- :meth:`SystemBatch.full_throttle`: the point at duty 1 (:func:`.drive_screen.full_throttle`),
- :func:`operating_points`: one system's full :class:`.operating_point.OperatingPoint` at several thrusts (or at full
  throttle), the speed and bus voltage from the screening solver, everything else from the reference's own
  :func:`.operating_point.assemble` (what :func:`.drive.for_thrust` reports, without its root finding),

each at open-circuit voltages of shape ``(n, m)``. A system whose table the segment model cannot solve
(:attr:`.propeller_segments.PropModel.solvable`: not monotone, NaN inside) or whose parameters are not finite is
solved by the reference (:func:`.drive.for_thrust`, :func:`.drive.at_duty`) in the same call. A thrust point may
carry a multirotor flight state (:mod:`.forward_flight`), which both solvers apply alike (full throttle static).
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any

import numpy as np

from . import drive, forward_flight
from ._problem import build_problem
from ._types import ArrayLike, FloatArray, Status, as_float_array
from .drive_screen import Batch, batch_of, cruise_point
from .drive_screen import full_throttle as screen_full_throttle
from .esc import EscParams
from .motor import MotorParams
from .operating_point import OperatingPoint, assemble, motor_side
from .propeller import PropellerTable
from .propeller_segments import PropModel


@dataclass(frozen=True)
class Points:
    """Operating points per rotor, shape (n, m); NaN where ``reachable`` is false.

    ``reachable``: solved with a duty of at most 1 (the reference's statuses OK, OVER_CURRENT and DATA_ERROR);
    ``invalid``: non-finite inputs (NON_FINITE); ``data_error``: the point is beyond the momentum bound (DATA_ERROR,
    :func:`.propeller.momentum_limit_ratio` above 1).
    """

    thrust_n: FloatArray
    omega_rad_s: FloatArray
    duty: FloatArray
    bus_voltage_v: FloatArray
    bus_current_a: FloatArray
    motor_current_a: FloatArray
    reachable: np.ndarray
    invalid: np.ndarray
    data_error: np.ndarray

    @property
    def electrical_power_w(self) -> FloatArray:
        """ESC input power per rotor ``V_bus I_bus``. [W]"""
        power: FloatArray = self.bus_voltage_v * self.bus_current_a
        return power


_VALUES = ("thrust_n", "omega_rad_s", "duty", "bus_voltage_v", "bus_current_a", "motor_current_a")


class SystemBatch:
    """``n`` systems (every parameter array broadcasts to a flat axis of n, or is a scalar; a table has one row or
    one row per system) on ``rotor_count`` rotors sharing a pack of resistance ``pack_resistance_ohm`` [Ω], in air of
    ``density_kg_m3`` [kg/m^3] at axial airspeed ``airspeed_m_s`` [m/s]."""

    def __init__(self, *, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
                 pack_resistance_ohm: ArrayLike, rotor_count: float = 1.0, density_kg_m3: float = 1.225,
                 airspeed_m_s: float = 0.0, batch_shapes: tuple[tuple[int, ...], ...] = ()) -> None:
        shapes = [np.shape(pack_resistance_ohm), propeller.batch_shape, *batch_shapes,
                  *(np.shape(getattr(x, f.name)) for x in (motor, esc) for f in fields(x))]
        n = self.n = int(np.prod(np.broadcast_shapes(*shapes), dtype=np.int64))
        column = (n, 1)

        def flat(a: ArrayLike) -> FloatArray:
            return np.broadcast_to(as_float_array(a), (n,)).reshape(column)

        self.motor = MotorParams(*(flat(getattr(motor, f.name)) for f in fields(motor)))
        self.esc = EscParams(*(flat(getattr(esc, f.name)) for f in fields(esc)))
        self.resistance = flat(pack_resistance_ohm)
        self.rotor_count, self.density, self.airspeed = float(rotor_count), float(density_kg_m3), float(airspeed_m_s)
        k = propeller.axis_values.shape[-1]
        rows = int(np.prod(propeller.batch_shape, dtype=np.int64))
        if rows not in (1, n):
            raise ValueError("the propeller table needs one row, or one row per system")

        def take(a: FloatArray, width: tuple[int, ...]) -> FloatArray:
            return np.broadcast_to(a, propeller.batch_shape + width).reshape((rows, *width))

        self.table = PropellerTable(take(propeller.diameter_m, ()), take(propeller.axis_values, (k,)),
                                    take(propeller.thrust_coefficient, (k,)), take(propeller.power_coefficient, (k,)),
                                    propeller.axis)
        self.model = PropModel.build(self.table, self.table.diameter_m, density_kg_m3=self.density,
                                     airspeed_m_s=self.airspeed, forward=propeller.axis == "advance_ratio")
        q = np.zeros(column, dtype=np.intp) if rows == 1 else np.arange(n).reshape(column)
        batch = batch_of(self.motor, self.esc, open_circuit_voltage_v=np.full(column, np.nan),
                         pack_resistance_ohm=self.resistance, q=q)
        finite = np.isfinite(self.resistance) & ~np.isnan(batch.inductance_h)
        for name in ("r_on_ohm", "switching_coef", "dead_time_coef_v", "ripple_coef_s2", "esr_ohm", "k_pwm", "kv_si",
                     "motor_resistance_ohm", "no_load_current_a"):
            finite &= np.isfinite(getattr(batch, name))
        self.screened = (self.model.solvable[q] & finite).ravel()
        """Systems the screening solver solves (the reference solves the others)."""
        self._screen = Batch(**{f.name: np.broadcast_to(getattr(batch, f.name), column)[self.screened]
                                for f in fields(batch)})
        self._reference = np.flatnonzero(~self.screened)

    def for_thrust(self, thrust_n: ArrayLike, open_circuit_voltage_v: ArrayLike,
                   flight: forward_flight.FlightState | None = None) -> Points:
        """The points that give ``thrust_n`` per rotor [N] at open-circuit voltages ``open_circuit_voltage_v`` [V]
        (both broadcast to (n, m)); d > 1 is unreachable, and in the thin band just below full throttle where no duty
        below 1 balances the bus the full-throttle point is reported (as :func:`.drive.for_thrust` does).

        ``flight``: the multirotor flight state of the thrust (the same for every system: it broadcasts with
        ``thrust_n`` of shape (1, m) or a scalar), as :func:`.drive.for_thrust` and :func:`.drive_screen.cruise_point`
        take it."""
        shape, thrust, voc = self._shape(thrust_n, open_circuit_voltage_v)
        if flight is not None and any(np.ndim(v) == 2 and np.shape(v)[0] > 1 for v in vars(flight).values()):
            raise ValueError("the flight state is the thrust's: one row for every system")
        out = self._empty(shape, ~np.isfinite(thrust) | ~np.isfinite(voc))
        if self._screen.q.size:
            sub = replace(self._screen, voc_cruise_v=voc[self.screened])
            cruise = cruise_point(sub, self.model, self.rotor_count, thrust[self.screened], flight)
            self._scatter(out, self.screened, cruise.reachable, {name: getattr(cruise, name) for name in _VALUES},
                          cruise.momentum_ratio > 1.0)
        if self._reference.size:
            rows = self._reference
            op = drive.for_thrust(thrust[rows], **self._reference_kwargs(rows, voc), flight=flight)
            self._scatter_reference(out, rows, op)
        return Points(**out)

    def full_throttle(self, open_circuit_voltage_v: ArrayLike) -> Points:
        """The points at duty 1 at open-circuit voltages ``open_circuit_voltage_v`` [V] (broadcast to (n, m))."""
        shape, _, voc = self._shape(0.0, open_circuit_voltage_v)
        out = self._empty(shape, ~np.isfinite(voc))
        if self._screen.q.size:
            ft = screen_full_throttle(self._screen, self.model, self.rotor_count, voc[self.screened])
            reachable = np.isfinite(ft.bus_voltage_v)
            values = {"thrust_n": ft.thrust_n, "omega_rad_s": ft.omega_rad_s, "duty": np.where(reachable, 1.0, np.nan),
                      "bus_voltage_v": ft.bus_voltage_v, "bus_current_a": ft.motor_current_a,
                      "motor_current_a": ft.motor_current_a}
            self._scatter(out, self.screened, reachable, values, ft.momentum_ratio > 1.0)
        if self._reference.size:
            rows = self._reference
            op = drive.at_duty(1.0, **self._reference_kwargs(rows, voc))
            self._scatter_reference(out, rows, op)
        return Points(**out)

    # --- helpers -----------------------------------------------------------------------------------------------

    def _shape(self, thrust_n: ArrayLike, voc: ArrayLike) -> tuple[tuple[int, int], FloatArray, FloatArray]:
        shape = np.broadcast_shapes(np.shape(thrust_n), np.shape(voc), (self.n, 1))
        if len(shape) != 2:
            raise ValueError("thrust and open-circuit voltage broadcast to (n, m)")
        return ((shape[0], shape[1]), np.broadcast_to(as_float_array(thrust_n), shape),
                np.broadcast_to(as_float_array(voc), shape))

    @staticmethod
    def _empty(shape: tuple[int, int], invalid: np.ndarray) -> dict[str, np.ndarray]:
        out: dict[str, np.ndarray] = {name: np.full(shape, np.nan) for name in _VALUES}
        out |= {"reachable": np.zeros(shape, dtype=bool), "invalid": np.array(invalid),
                "data_error": np.zeros(shape, dtype=bool)}
        return out

    @staticmethod
    def _scatter(out: dict[str, np.ndarray], rows: np.ndarray, reachable: np.ndarray,
                 values: dict[str, np.ndarray], data_error: np.ndarray) -> None:
        size = out["reachable"][rows].shape
        ok = np.broadcast_to(reachable, size) & ~out["invalid"][rows]
        for name, value in values.items():
            out[name][rows] = np.where(ok, np.broadcast_to(value, size), np.nan)
        out["reachable"][rows] = ok
        out["data_error"][rows] = ok & np.broadcast_to(data_error, size)

    def _reference_kwargs(self, rows: np.ndarray, voc: FloatArray) -> dict[str, Any]:
        table = self.table if self.table.diameter_m.shape[0] == 1 else self.table.take(rows[:, np.newaxis])
        return {"motor": MotorParams(*(getattr(self.motor, f.name)[rows] for f in fields(self.motor))),
                "esc": EscParams(*(getattr(self.esc, f.name)[rows] for f in fields(self.esc))), "propeller": table,
                "open_circuit_voltage_v": voc[rows], "pack_resistance_ohm": self.resistance[rows],
                "rotor_count": self.rotor_count, "density_kg_m3": self.density, "airspeed_m_s": self.airspeed}

    @staticmethod
    def _scatter_reference(out: dict[str, np.ndarray], rows: np.ndarray, op: OperatingPoint) -> None:
        status = op.status
        ok = np.isin(status, [Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR])
        for name in _VALUES:
            out[name][rows] = np.where(ok, getattr(op, name), np.nan)
        out["reachable"][rows] = ok
        out["invalid"][rows] |= status == Status.NON_FINITE
        out["data_error"][rows] = status == Status.DATA_ERROR


def operating_points(kind: str, values: FloatArray, *, motor: MotorParams, esc: EscParams, propeller: PropellerTable,
                     open_circuit_voltage_v: float, pack_resistance_ohm: float = 0.0, rotor_count: float = 1.0,
                     density_kg_m3: float = 1.225, airspeed_m_s: float = 0.0,
                     flight: forward_flight.FlightState | None = None) -> OperatingPoint:
    """:func:`.drive.for_thrust` (``kind="thrust_n"``) or :func:`.drive.at_duty` (``kind="throttle"``) of one system
    at the 1-D ``values`` (thrust per rotor [N] or duty [-]), the same :class:`.operating_point.OperatingPoint`.

    Where the screening solver finds the point strictly below full throttle (a thrust) or at duty 1 (full throttle),
    its speed and bus voltage go through the reference's :func:`.operating_point.assemble` (every reported value,
    loss term, status, over-current and momentum check as the reference computes them; at duty 1 the bus is the
    motor voltage, as :func:`.drive.at_duty` sets it). Every other value (a partial duty, an unreachable thrust, the
    thin band just below full throttle, a table the segments cannot solve) is the reference solver's own.
    """
    values = np.asarray(values, dtype=np.float64).ravel()
    common: dict[str, Any] = {"motor": motor, "esc": esc, "propeller": propeller,
              "open_circuit_voltage_v": open_circuit_voltage_v,
              "pack_resistance_ohm": pack_resistance_ohm, "rotor_count": rotor_count, "density_kg_m3": density_kg_m3,
              "airspeed_m_s": airspeed_m_s}
    if kind not in ("thrust_n", "throttle"):
        raise ValueError(f"unknown kind {kind!r}")
    batch = SystemBatch(motor=motor, esc=esc, propeller=propeller, pack_resistance_ohm=pack_resistance_ohm,
                        rotor_count=rotor_count, density_kg_m3=density_kg_m3, airspeed_m_s=airspeed_m_s)
    if batch.n != 1:
        raise ValueError("operating_points solves one system")

    def flight_of(mask: np.ndarray) -> forward_flight.FlightState | None:
        if flight is None:
            return None
        return forward_flight.FlightState(**{name: np.broadcast_to(value, values.shape)[mask]
                                             for name, value in vars(flight).items()})

    if kind == "thrust_n":
        pts = batch.for_thrust(values[np.newaxis, :], open_circuit_voltage_v, flight)
        fast = pts.reachable[0] & (pts.duty[0] < 1.0)
    else:
        pts = batch.full_throttle(np.full((1, values.size), float(open_circuit_voltage_v)))
        fast = pts.reachable[0] & (values == 1.0)
    fast &= bool(batch.screened[0]) & np.isfinite(values)
    parts: list[tuple[np.ndarray, OperatingPoint]] = []
    if fast.any():
        p, _ = build_problem(motor, esc, propeller, open_circuit_voltage_v, pack_resistance_ohm, rotor_count,
                             density_kg_m3, airspeed_m_s, values[fast], flight=flight_of(fast))
        omega = pts.omega_rad_s[0][fast]
        bus = pts.bus_voltage_v[0][fast] if kind == "thrust_n" else motor_side(p, omega)[3]
        parts.append((fast, assemble(p, omega, bus, np.full(int(fast.sum()), Status.OK, dtype=np.int8))))
    if not fast.all():
        rest = ~fast
        if kind == "thrust_n":
            op = drive.for_thrust(values[rest], **common, flight=flight_of(rest))
        else:
            op = drive.at_duty(values[rest], **common)
        parts.append((rest, op))
    first = parts[0][1]
    merged = first.map(lambda a: np.zeros(values.size, dtype=np.asarray(a).dtype))
    for mask, op in parts:
        def scatter(full: np.ndarray, part: np.ndarray, mask: np.ndarray = mask) -> np.ndarray:
            out = np.array(full)
            out[mask] = np.ravel(part)
            return out

        merged = merged.map(scatter, op)
    return merged
