"""Propeller: coefficient form, coefficient tables for many candidates, and momentum theory.

``T = CT rho n^2 D^4`` and ``P = CP rho n^3 D^5`` (propeller convention, n in rev/s). Measured CT and CP
drift 10-15 % with rpm (Reynolds number), so they are stored as tables: versus rpm for static (hover)
use, versus advance ratio ``J = V/(nD)`` for forward flight. A table is held constant outside its range.

Tables for many candidates are padded 2-D arrays: ``axis_values`` has shape ``batch + (K,)``, ascending
along the last axis, padded at the end with NaN when a propeller has fewer than K points. A constant
coefficient pair is a table with one point. This lets one vectorised call evaluate a chunk of
candidates that all use different propellers.

References
----------
.. [1] J. G. Leishman, *Principles of Helicopter Aerodynamics*, 2nd ed., Cambridge University Press, 2006
   (momentum theory, figure of merit, axial climb).
.. [2] J. B. Brandt and M. S. Selig, "Propeller Performance Data at Low Reynolds Numbers",
   AIAA Paper 2011-1255, 2011 (UIUC Propeller Database Vol. 1; CT, CP definitions).
.. [3] R. W. Deters, G. K. Ananda, M. S. Selig, "Reynolds Number Effects on the Performance of Small-Scale
   Propellers", AIAA Paper 2014-2151, 2014 (UIUC Vol. 2).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np

from ._types import RPM_PER_RAD_S, STANDARD_GRAVITY_M_S2, ArrayLike, FloatArray, as_float_array

PropellerAxis = Literal["rpm", "advance_ratio"]


@dataclass(frozen=True)
class PropellerTable:
    """CT and CP of one or many propellers, tabulated versus rpm or advance ratio.

    Parameters
    ----------
    diameter_m : array_like
        Propeller diameter, batch shape ``B``. [m]
    axis_values : array_like
        Table abscissae, shape ``B + (K,)`` (or broadcastable), ascending, NaN padded at the end.
        [rpm] for ``axis="rpm"``, [-] for ``axis="advance_ratio"``.
    thrust_coefficient, power_coefficient : array_like
        CT and CP at the abscissae, same shape as ``axis_values``. [-]
    axis : {"rpm", "advance_ratio"}
        What the table is a function of.
    """

    diameter_m: FloatArray
    axis_values: FloatArray
    thrust_coefficient: FloatArray
    power_coefficient: FloatArray
    axis: PropellerAxis = "rpm"

    def __post_init__(self) -> None:
        if self.axis not in ("rpm", "advance_ratio"):
            raise ValueError(f"unknown propeller table axis {self.axis!r}")
        for name in ("diameter_m", "axis_values", "thrust_coefficient", "power_coefficient"):
            object.__setattr__(self, name, as_float_array(getattr(self, name)))
        if self.axis_values.ndim == 0:
            raise ValueError("axis_values needs a last axis (use PropellerTable.constant for one point)")

    @classmethod
    def constant(cls, diameter_m: ArrayLike, thrust_coefficient: ArrayLike,
                 power_coefficient: ArrayLike) -> PropellerTable:
        """Constant CT, CP (a one-point table, held constant everywhere)."""
        ct = as_float_array(thrust_coefficient)[..., np.newaxis]
        cp = as_float_array(power_coefficient)[..., np.newaxis]
        axis_values = np.zeros(np.broadcast_shapes(ct.shape, cp.shape))
        return cls(as_float_array(diameter_m), axis_values, ct, cp, "rpm")

    @classmethod
    def from_rows(cls, diameter_m: ArrayLike, rows: Sequence[tuple[ArrayLike, ArrayLike, ArrayLike]],
                  axis: PropellerAxis = "rpm") -> PropellerTable:
        """Stack 1-D tables ``(axis_values, ct, cp)`` of different lengths into one NaN-padded table.

        Each row is sorted by its abscissa. ``diameter_m`` has one entry per row (or is a scalar).
        """
        width = max((np.size(r[0]) for r in rows), default=1)
        padded = np.full((3, len(rows), width), np.nan)
        for i, (x, ct, cp) in enumerate(rows):
            x_arr = as_float_array(x).ravel()
            order = np.argsort(x_arr, kind="stable")
            padded[0, i, : x_arr.size] = x_arr[order]
            padded[1, i, : x_arr.size] = as_float_array(ct).ravel()[order]
            padded[2, i, : x_arr.size] = as_float_array(cp).ravel()[order]
        diameter = np.broadcast_to(as_float_array(diameter_m), (len(rows),)).copy()
        return cls(diameter, padded[0], padded[1], padded[2], axis)

    @property
    def batch_shape(self) -> tuple[int, ...]:
        """Broadcast batch shape of the table (without the table axis)."""
        return np.broadcast_shapes(self.diameter_m.shape, self.axis_values.shape[:-1],
                                   self.thrust_coefficient.shape[:-1], self.power_coefficient.shape[:-1])

    def take(self, index: ArrayLike) -> PropellerTable:
        """Rows of a 1-D library of propellers for a chunk of candidates (``index`` into the batch axis)."""
        idx = np.asarray(index, dtype=np.intp)
        shape = self.batch_shape
        k = self.axis_values.shape[-1]

        def pick(a: FloatArray, table: bool) -> FloatArray:
            full = np.broadcast_to(a, shape + (k,) if table else shape)
            return full[idx]

        return PropellerTable(pick(self.diameter_m, False), pick(self.axis_values, True),
                              pick(self.thrust_coefficient, True), pick(self.power_coefficient, True),
                              self.axis)


def interpolate_rows(x: ArrayLike, axis_values: ArrayLike, *tables: ArrayLike) -> tuple[FloatArray, ...]:
    """Row-wise linear interpolation in NaN-padded tables, held constant outside each row's range.

    Parameters
    ----------
    x : array_like
        Query points, broadcastable with ``axis_values.shape[:-1]``.
    axis_values : array_like
        Abscissae, shape ``B + (K,)``, ascending, NaN padded at the end.
    *tables : array_like
        Ordinates with the shape of ``axis_values``.

    Returns
    -------
    tuple of ndarray
        One interpolated array per table, shape ``broadcast(x, B)``; NaN where x is NaN or a row is empty.
    """
    xq = as_float_array(x)
    grid = as_float_array(axis_values)
    k = grid.shape[-1]
    shape = np.broadcast_shapes(xq.shape, grid.shape[:-1], *(np.shape(t)[:-1] for t in tables))
    xq = np.broadcast_to(xq, shape)
    grid = np.broadcast_to(grid, shape + (k,))
    n_valid = np.sum(~np.isnan(grid), axis=-1)
    # Position of x among the valid abscissae: NaN padding never compares true.
    count = np.sum(grid <= xq[..., np.newaxis], axis=-1)
    # Upper bracket index in 1..n_valid-1; a one-point row gets hi = lo = 0 (a constant).
    hi = np.maximum(np.minimum(np.maximum(count, 1), n_valid - 1), 0)
    lo = np.maximum(hi - 1, 0)
    x_lo = np.take_along_axis(grid, lo[..., np.newaxis], axis=-1)[..., 0]
    x_hi = np.take_along_axis(grid, hi[..., np.newaxis], axis=-1)[..., 0]
    span = x_hi - x_lo
    with np.errstate(invalid="ignore", divide="ignore"):
        weight = np.where(span > 0.0, (xq - x_lo) / np.where(span > 0.0, span, 1.0), 1.0)
    weight = np.clip(weight, 0.0, 1.0)  # holds the end values outside the table
    bad = (n_valid == 0) | np.isnan(xq)
    out = []
    for table in tables:
        values = np.broadcast_to(as_float_array(table), shape + (k,))
        v_lo = np.take_along_axis(values, lo[..., np.newaxis], axis=-1)[..., 0]
        v_hi = np.take_along_axis(values, hi[..., np.newaxis], axis=-1)[..., 0]
        result = v_lo + weight * (v_hi - v_lo)
        out.append(np.where(bad, np.nan, result))
    return tuple(out)


def advance_ratio(airspeed_m_s: ArrayLike, speed_rev_s: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Advance ratio ``J = V / (n D)``; infinite at n = 0 (table lookups then hold the last row). [-]"""
    v = as_float_array(airspeed_m_s)
    with np.errstate(divide="ignore", invalid="ignore"):
        return v / (as_float_array(speed_rev_s) * as_float_array(diameter_m))


def coefficients_at(table: PropellerTable, omega_rad_s: ArrayLike,
                    airspeed_m_s: ArrayLike = 0.0) -> tuple[FloatArray, FloatArray]:
    """CT and CP of ``table`` at shaft speed Ω (and airspeed V for a table versus J).

    Parameters
    ----------
    table : PropellerTable
        Coefficients of one or many propellers.
    omega_rad_s : array_like
        Shaft speed. [rad/s]
    airspeed_m_s : array_like, default 0
        Axial airspeed; only used by tables versus advance ratio. [m/s]

    Returns
    -------
    ct, cp : ndarray
        Thrust and power coefficients (propeller convention). [-]
    """
    omega = as_float_array(omega_rad_s)
    if table.axis == "rpm":
        x = omega * RPM_PER_RAD_S
    else:
        x = np.abs(advance_ratio(airspeed_m_s, omega / (2.0 * math.pi), table.diameter_m))
    ct, cp = interpolate_rows(x, table.axis_values, table.thrust_coefficient, table.power_coefficient)
    return ct, cp


def outside_table(table: PropellerTable, omega_rad_s: ArrayLike, airspeed_m_s: ArrayLike = 0.0) -> np.ndarray:
    """True where the lookup of :func:`coefficients_at` falls outside the table's measured range (its end values
    are held there). A one-point table is a constant, valid at any speed, so never outside."""
    omega = as_float_array(omega_rad_s)
    if table.axis == "rpm":
        x = omega * RPM_PER_RAD_S
    else:
        x = np.abs(advance_ratio(airspeed_m_s, omega / (2.0 * math.pi), table.diameter_m))
    grid = as_float_array(table.axis_values)
    with np.errstate(invalid="ignore"):
        first = np.nanmin(grid, axis=-1)
        last = np.nanmax(grid, axis=-1)
        points = np.sum(~np.isnan(grid), axis=-1)
        outside: np.ndarray = (points > 1) & ((x < first) | (x > last))
    return outside


def momentum_limit_ratio(ct: ArrayLike, cp: ArrayLike, advance_ratio_: ArrayLike = 0.0) -> FloatArray:
    """Propeller efficiency as a fraction of the most momentum theory allows at the same thrust loading. [-]

    Static (J = 0) this is the figure of merit ``sqrt(2/pi) CT^1.5 / CP``; in axial flight it is
    ``eta_p / eta_ideal`` with ``eta_p = J CT / CP`` and the Froude efficiency
    ``eta_ideal = 2 / (1 + sqrt(1 + 8 CT / (pi J^2)))`` (Leishman 2006, ch. 2), which tends to the figure of merit
    as J -> 0. Above 1 the coefficients are wrong, or are used outside the range they were measured in. Zero
    where the propeller makes no thrust (CT <= 0).
    """
    ct_ = as_float_array(ct)
    cp_ = as_float_array(cp)
    j = np.abs(as_float_array(advance_ratio_))
    with np.errstate(divide="ignore", invalid="ignore"):
        positive = np.where(ct_ > 0.0, ct_, np.nan)
        static = math.sqrt(2.0 / math.pi) * positive**1.5 / cp_
        forward = j * positive / cp_ * 0.5 * (1.0 + np.sqrt(1.0 + 8.0 * positive / (math.pi * j * j)))
        ratio = np.where(j > 0.0, forward, static)
    out: FloatArray = np.where(ct_ > 0.0, ratio, np.where(np.isnan(ct_) | np.isnan(cp_), np.nan, 0.0))
    return out


def disk_area_m2(diameter_m: ArrayLike) -> FloatArray:
    """Disk area ``A = pi D^2 / 4``. [m^2]"""
    d = as_float_array(diameter_m)
    return 0.25 * math.pi * d * d


def thrust_n(ct: ArrayLike, density_kg_m3: ArrayLike, speed_rev_s: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Thrust ``T = CT rho n^2 D^4``. [N]"""
    n = as_float_array(speed_rev_s)
    return as_float_array(ct) * as_float_array(density_kg_m3) * n * n * as_float_array(diameter_m) ** 4


def shaft_power_w(cp: ArrayLike, density_kg_m3: ArrayLike, speed_rev_s: ArrayLike,
                  diameter_m: ArrayLike) -> FloatArray:
    """Shaft power ``P = CP rho n^3 D^5``. [W]"""
    n = as_float_array(speed_rev_s)
    return as_float_array(cp) * as_float_array(density_kg_m3) * n**3 * as_float_array(diameter_m) ** 5


def torque_nm(cp: ArrayLike, density_kg_m3: ArrayLike, speed_rev_s: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Shaft torque ``Q = P / (2 pi n) = CP rho n^2 D^5 / (2 pi)`` (never ``P / n``). [N m]"""
    n = as_float_array(speed_rev_s)
    return as_float_array(cp) * as_float_array(density_kg_m3) * n * n * as_float_array(diameter_m) ** 5 / (
        2.0 * math.pi)


def torque_coefficient(cp: ArrayLike) -> FloatArray:
    """Torque coefficient ``CQ = CP / (2 pi)``. [-]"""
    return as_float_array(cp) / (2.0 * math.pi)


def thrust_constant_n_s2(ct: ArrayLike, density_kg_m3: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """``kT = CT rho D^4 / (4 pi^2)`` so that ``T = kT Ω^2``. [N s^2/rad^2]"""
    return as_float_array(ct) * as_float_array(density_kg_m3) * as_float_array(diameter_m) ** 4 / (
        4.0 * math.pi**2)


def torque_constant_nm_s2(cp: ArrayLike, density_kg_m3: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """``kQ = CP rho D^5 / (8 pi^3)`` so that ``Q = kQ Ω^2``. [N m s^2/rad^2]"""
    return as_float_array(cp) * as_float_array(density_kg_m3) * as_float_array(diameter_m) ** 5 / (
        8.0 * math.pi**3)


def propeller_efficiency(advance_ratio_: ArrayLike, ct: ArrayLike, cp: ArrayLike) -> FloatArray:
    """Propeller efficiency ``eta_p = T V / P = J CT / CP`` (0 at J = 0). [-]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        return as_float_array(advance_ratio_) * as_float_array(ct) / as_float_array(cp)


def induced_velocity_hover_m_s(thrust_n_: ArrayLike, density_kg_m3: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Momentum-theory induced velocity in hover ``v_h = sqrt(T / (2 rho A))``. [m/s]"""
    return np.sqrt(as_float_array(thrust_n_) / (2.0 * as_float_array(density_kg_m3) * disk_area_m2(diameter_m)))


def ideal_hover_power_w(thrust_n_: ArrayLike, density_kg_m3: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Ideal (momentum-theory) hover power ``P = T^1.5 / sqrt(2 rho A)``: a lower bound on shaft power. [W]

    References
    ----------
    .. [1] Leishman 2006, ch. 2.
    """
    t = as_float_array(thrust_n_)
    return t * induced_velocity_hover_m_s(t, density_kg_m3, diameter_m)


def ideal_climb_power_w(thrust_n_: ArrayLike, climb_speed_m_s: ArrayLike, density_kg_m3: ArrayLike,
                        diameter_m: ArrayLike) -> FloatArray:
    """Ideal power in axial climb ``P = T [Vc/2 + sqrt((Vc/2)^2 + v_h^2)]`` (Leishman 2006). [W]"""
    t = as_float_array(thrust_n_)
    half_vc = 0.5 * as_float_array(climb_speed_m_s)
    v_h = induced_velocity_hover_m_s(t, density_kg_m3, diameter_m)
    return t * (half_vc + np.sqrt(half_vc**2 + v_h**2))


def figure_of_merit(ct: ArrayLike, cp: ArrayLike) -> FloatArray:
    """Static figure of merit from propeller coefficients ``FM = sqrt(2/pi) CT^1.5 / CP``. [-]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        return math.sqrt(2.0 / math.pi) * as_float_array(ct) ** 1.5 / as_float_array(cp)


def figure_of_merit_from_power(thrust_n_: ArrayLike, shaft_power_w_: ArrayLike, density_kg_m3: ArrayLike,
                               diameter_m: ArrayLike) -> FloatArray:
    """Figure of merit ``FM = P_ideal / P_shaft`` of a hover point. [-]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        return ideal_hover_power_w(thrust_n_, density_kg_m3, diameter_m) / as_float_array(shaft_power_w_)


def rotor_thrust_coefficient(ct: ArrayLike) -> FloatArray:
    """Rotorcraft convention ``C_T = T / (rho A (Ω R)^2) = CT 4 / pi^3``. [-]"""
    return as_float_array(ct) * 4.0 / math.pi**3


def rotor_power_coefficient(cp: ArrayLike) -> FloatArray:
    """Rotorcraft convention ``C_P = P / (rho A (Ω R)^3) = CP 4 / pi^4``. [-]"""
    return as_float_array(cp) * 4.0 / math.pi**4


def figure_of_merit_rotor(rotor_ct: ArrayLike, rotor_cp: ArrayLike) -> FloatArray:
    """Figure of merit from rotorcraft coefficients ``FM = C_T^1.5 / (sqrt(2) C_P)``. [-]"""
    return as_float_array(rotor_ct) ** 1.5 / (math.sqrt(2.0) * as_float_array(rotor_cp))


def froude_efficiency(thrust_n_: ArrayLike, airspeed_m_s: ArrayLike, density_kg_m3: ArrayLike,
                      diameter_m: ArrayLike) -> FloatArray:
    """Ideal (Froude) propulsive efficiency ``2 / (1 + sqrt(1 + T / (0.5 rho V^2 A)))``. [-]"""
    v = as_float_array(airspeed_m_s)
    with np.errstate(divide="ignore"):
        loading = as_float_array(thrust_n_) / (0.5 * as_float_array(density_kg_m3) * v * v
                                               * disk_area_m2(diameter_m))
    return 2.0 / (1.0 + np.sqrt(1.0 + loading))


def specific_thrust_g_per_w(thrust_n_: ArrayLike, power_w: ArrayLike) -> FloatArray:
    """Thrust per power in the trade unit gram-force per watt ``1000 T / (g0 P)``. [g/W]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        return 1000.0 * as_float_array(thrust_n_) / (STANDARD_GRAVITY_M_S2 * as_float_array(power_w))


def tip_speed_m_s(omega_rad_s: ArrayLike, diameter_m: ArrayLike) -> FloatArray:
    """Blade tip speed ``Ω D / 2``. [m/s]"""
    return as_float_array(omega_rad_s) * 0.5 * as_float_array(diameter_m)


def tip_mach_number(omega_rad_s: ArrayLike, diameter_m: ArrayLike, speed_of_sound_m_s: ArrayLike) -> FloatArray:
    """Tip Mach number ``Ω (D/2) / a`` (keep below about 0.6-0.7 [MEM]). [-]"""
    return tip_speed_m_s(omega_rad_s, diameter_m) / as_float_array(speed_of_sound_m_s)


def blade_reynolds_number(omega_rad_s: ArrayLike, diameter_m: ArrayLike, chord_m: ArrayLike,
                          density_kg_m3: ArrayLike, dynamic_viscosity_pa_s: ArrayLike) -> FloatArray:
    """Blade Reynolds number at 0.75 R ``Re = rho (0.75 Ω D/2) c / mu``. [-]"""
    speed = 0.75 * tip_speed_m_s(omega_rad_s, diameter_m)
    return as_float_array(density_kg_m3) * speed * as_float_array(chord_m) / as_float_array(dynamic_viscosity_pa_s)
