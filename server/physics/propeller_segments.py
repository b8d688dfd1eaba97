"""Propeller tables turned into exact per-segment polynomials for one flight condition (air density, airspeed).

This is the screening form of :func:`.propeller.coefficients_at` (the reference interpolation): the reference
model (docs/model-reference.md#reference-model-v1 item 2) interpolates CT and CP linearly in a table versus rpm
(static) or advance ratio J (forward flight), held constant outside. Between two knots CT and CP are therefore
straight lines ``a + b x``, so within a segment:

- thrust for a speed is a polynomial, and the speed for a thrust is the root of a cubic (rpm tables, a few
  Newton steps) or of a quadratic in J (closed form);
- the full-throttle torque balance is a cubic in rpm (Newton) or a quadratic in n (closed form).

The segment is found without a search per element: the thrust (or the torque-balance residual) at every knot
is compared with the request, one vectorised comparison per knot, and the comparisons are counted (in a uint8
counter: adding booleans into an intp array costs more than the comparison itself). Every
function takes a propeller index array ``q`` that broadcasts with the other arguments, so a block of
candidates that shares one propeller axis evaluates its per-propeller constants once.

Speed variable ``y``: rpm for a static table, rev/s for a forward table. With it ``T = kt CT y^2`` and
``Q = kq CP y^2`` (``kt = rho D^4 / 3600``, ``kq = rho D^5 / (3600 2 pi)`` for rpm; ``kt = rho D^4``,
``kq = rho D^5 / (2 pi)`` for rev/s).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass

import numpy as np

from .propeller import PropellerTable, momentum_limit_ratio

NEWTON_RTOL = 1e-14
"""Relative step at which the per-segment Newton iterations stop (results then agree to rounding)."""
NEWTON_MAX_ITER = 60


def _segments(x: np.ndarray, v: np.ndarray, n_valid: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients ``(a, b)`` of ``v = a + b x`` on segments 0..K (0: below the first knot, held)."""
    q, k = x.shape
    a = np.empty((q, k + 1))
    b = np.zeros((q, k + 1))
    first = v[:, 0]
    last = np.take_along_axis(v, np.maximum(n_valid - 1, 0)[:, None], axis=1)[:, 0]
    a[:] = last[:, None]
    a[:, 0] = first
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.diff(v, axis=1) / np.diff(x, axis=1)
    for s in range(1, k):
        inside = s < n_valid
        ok = inside & np.isfinite(slope[:, s - 1])
        b[:, s] = np.where(ok, slope[:, s - 1], 0.0)
        a[:, s] = np.where(ok, v[:, s - 1] - b[:, s] * x[:, s - 1], np.where(inside, v[:, s], last))
    return a, b


@dataclass(frozen=True)
class PropModel:
    """Per-propeller constants and segment polynomials of the table a mission uses.

    Attributes
    ----------
    axis : {"rpm", "advance_ratio"}
        Static (hover) or forward (cruise) table.
    valid : ndarray of bool, shape (Q,)
        Propellers whose table exists and is usable (monotone thrust and torque, FM <= 1 at static knots).
    solvable : ndarray of bool, shape (Q,)
        Propellers whose segments the solvers can use (``valid`` without the momentum bound: a table above it
        has wrong data, which the ranking refuses, but its points are still the reference interpolation's).
    has_table : ndarray of bool, shape (Q,)
        Propellers that have any table of this axis at all.
    """

    axis: str
    density_kg_m3: float
    airspeed_m_s: float
    diameter_m: np.ndarray
    kt: np.ndarray
    kq: np.ndarray
    n_valid: np.ndarray
    ct_a: np.ndarray
    ct_b: np.ndarray
    cp_a: np.ndarray
    cp_b: np.ndarray
    cp_mid: np.ndarray
    seg_lo: np.ndarray
    seg_hi: np.ndarray
    seg_root_thrust_lo: np.ndarray
    seg_root_thrust_hi: np.ndarray
    thrust_knots: np.ndarray
    speed_knots: np.ndarray
    torque_knots: np.ndarray
    valid: np.ndarray
    has_table: np.ndarray
    table: PropellerTable
    solvable: np.ndarray

    @property
    def width(self) -> int:
        return int(self.thrust_knots.shape[1])

    @classmethod
    def build(cls, table: PropellerTable | None, diameter_m: np.ndarray, *, density_kg_m3: float,
              airspeed_m_s: float, forward: bool) -> PropModel:
        """Segment model of static tables (versus rpm) or, with ``forward``, tables versus advance ratio.

        Parameters
        ----------
        table : PropellerTable or None
            One row per propeller (None: no propeller has such a table).
        diameter_m : ndarray, shape (Q,)
            Diameters. [m]
        density_kg_m3, airspeed_m_s : float
            Air density [kg/m^3] and axial airspeed [m/s] of the flight condition.
        forward : bool
            Use the table versus advance ratio at ``airspeed_m_s`` (else the static table versus rpm).
        """
        rho, speed = float(density_kg_m3), float(airspeed_m_s)
        diameter = np.asarray(diameter_m, dtype=np.float64)
        n = diameter.shape[0]
        if table is None:
            table = PropellerTable(diameter, np.full((n, 1), np.nan), np.full((n, 1), np.nan),
                                   np.full((n, 1), np.nan), "advance_ratio" if forward else "rpm")
        x = np.array(np.broadcast_to(table.axis_values, (n, table.axis_values.shape[-1])), dtype=np.float64)
        ct = np.array(np.broadcast_to(table.thrust_coefficient, x.shape), dtype=np.float64)
        cp = np.array(np.broadcast_to(table.power_coefficient, x.shape), dtype=np.float64)
        present = ~np.isnan(x)
        n_valid = present.sum(axis=1)
        has_table = n_valid >= 1
        # Tables are NaN padded at the end only; anything else (or NaN coefficients inside) is unusable.
        contiguous = np.all(present == (np.arange(x.shape[1])[None, :] < n_valid[:, None]), axis=1)
        finite = np.all(~present | (np.isfinite(ct) & np.isfinite(cp) & np.isfinite(x)), axis=1)
        with np.errstate(invalid="ignore"):
            ascending = np.all(~present[:, 1:] | (np.diff(np.where(present, x, np.inf), axis=1) >= 0), axis=1)
        ct_a, ct_b = _segments(x, ct, n_valid)
        cp_a, cp_b = _segments(x, cp, n_valid)
        lo = np.clip(np.arange(x.shape[1] + 1) - 1, 0, x.shape[1] - 1)
        hi = np.clip(np.arange(x.shape[1] + 1), 0, x.shape[1] - 1)
        with np.errstate(invalid="ignore"):
            cp_mid = np.where(np.isfinite(cp[:, hi]), 0.5 * (cp[:, lo] + cp[:, hi]), cp_a)
            cp_mid = np.where(np.isfinite(cp_mid) & (cp_mid > 0), cp_mid, np.nanmax(np.where(present, cp, np.nan),
                                                                                     axis=1, initial=0.0)[:, None])
        ok = has_table & contiguous & finite & ascending & np.all(~present | (cp > 0), axis=1)
        xs = np.where(present, x, np.nan)
        with np.errstate(invalid="ignore", divide="ignore"):
            if not forward:
                kt = rho * diameter**4 / 3600.0
                kq = rho * diameter**5 / (3600.0 * 2.0 * math.pi)
                ok &= np.all(~present | (ct > 0), axis=1) & np.all(~present | (xs >= 0), axis=1)
                # Thrust ~ CT x^2 and torque ~ CP x^2 rise with speed: 2 v + slope x > 0 at both segment ends.
                for a, b in ((ct_a, ct_b), (cp_a, cp_b)):
                    ends = np.stack([2.0 * (a[:, 1:-1] + b[:, 1:-1] * xs[:, :-1]) + b[:, 1:-1] * xs[:, :-1],
                                     2.0 * (a[:, 1:-1] + b[:, 1:-1] * xs[:, 1:]) + b[:, 1:-1] * xs[:, 1:]])
                    ok &= np.all(~present[None, :, 1:] | (ends > 0), axis=(0, 2))
                # Momentum bound at the knots (docs/model-reference.md#reference-model-v1 item 8): FM > 1 means the
                # data are wrong.
                physical = momentum_limit_ratio(ct, cp) <= 1.0  # FM <= 1 (docs/model-reference.md, item 8)
                within_momentum = np.all(~present | physical, axis=1)
                thrust_knots = np.where(present, ct * xs * xs, np.nan)
                speed_knots = xs
                torque_knots = np.where(present, cp * xs * xs, np.nan)
            else:
                kt = rho * diameter**4 * np.ones(n)
                kq = rho * diameter**5 / (2.0 * math.pi)
                ok &= (ct[:, 0] > 0) & np.all(~present | (xs >= 0), axis=1)
                # Efficiency at every measured J at most the Froude (momentum) limit at that thrust loading.
                within_momentum = np.all(~present | (momentum_limit_ratio(ct, cp, xs) <= 1.0), axis=1)
                # J^2/CT must rise with J while CT > 0 (2 a + b J > 0), and CP(J) n^2 with n (2 CP - (-b) J > 0).
                ends_lo = xs[:, :-1]
                ends_hi = xs[:, 1:]
                seg_ct_pos = present[:, 1:] & (ct[:, :-1] > 0)
                for e in (ends_lo, ends_hi):
                    ok &= np.all(~seg_ct_pos | (2.0 * ct_a[:, 1:-1] + ct_b[:, 1:-1] * e > 0), axis=1)
                    ok &= np.all(~present[:, 1:] | (2.0 * cp_a[:, 1:-1] + cp_b[:, 1:-1] * e > 0), axis=1)
                thrust_knots = np.where(present, np.where(ct > 0, xs * xs / ct, np.inf), np.nan)
                speed_knots = np.where(present, np.where(xs > 0, speed / (xs * diameter[:, None]), np.inf), np.nan)
                torque_knots = np.where(present, cp * speed_knots * speed_knots, np.nan)
        # Segment bounds on the abscissa (rpm tables): segment s spans knots s-1..s, the held ends reach 0 and inf.
        pad = np.where(present, xs, np.inf)
        seg_lo = np.concatenate([np.zeros((n, 1)), pad], axis=1)
        seg_hi = np.concatenate([pad, np.full((n, 1), np.inf)], axis=1)
        seg_lo = np.where(np.isfinite(seg_lo), seg_lo, np.take_along_axis(
            pad, np.maximum(n_valid - 1, 0)[:, None], axis=1))
        root_t = np.sqrt(np.where(np.isfinite(thrust_knots) & (thrust_knots > 0), thrust_knots, np.nan))
        seg_root_thrust_lo = np.concatenate([np.zeros((n, 1)), root_t], axis=1)
        seg_root_thrust_hi = np.concatenate([root_t, np.full((n, 1), np.nan)], axis=1)
        solvable = ok & np.isfinite(diameter) & (diameter > 0)
        valid = solvable & within_momentum
        return cls(seg_lo=seg_lo, seg_hi=seg_hi, seg_root_thrust_lo=seg_root_thrust_lo,
                   seg_root_thrust_hi=seg_root_thrust_hi,
                   axis="advance_ratio" if forward else "rpm", density_kg_m3=rho, airspeed_m_s=speed,
                   diameter_m=diameter, kt=kt, kq=kq, n_valid=n_valid.astype(np.intp), ct_a=ct_a, ct_b=ct_b,
                   cp_a=cp_a, cp_b=cp_b, cp_mid=cp_mid, thrust_knots=thrust_knots, speed_knots=speed_knots,
                   torque_knots=torque_knots, valid=valid, has_table=has_table, table=table, solvable=solvable)

    # --- segment lookups -------------------------------------------------------------------------------

    def _flat(self, q: np.ndarray, seg: np.ndarray) -> np.ndarray:
        flat: np.ndarray = q * (self.width + 1) + seg
        return flat

    def coefficients(self, q: np.ndarray, seg: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """CT and CP at speed variable ``y`` on segment ``seg`` of propeller ``q``. [-]"""
        idx = self._flat(q, seg)
        x = self.axis_variable(q, y)
        ct = np.take(self.ct_a, idx) + np.take(self.ct_b, idx) * x
        cp = np.take(self.cp_a, idx) + np.take(self.cp_b, idx) * x
        return ct, cp

    def axis_variable(self, q: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Table abscissa at speed variable y: rpm itself, or ``J = V / (n D)``."""
        if self.axis == "rpm":
            return y
        with np.errstate(divide="ignore"):
            advance_ratio: np.ndarray = self.airspeed_m_s / (y * self.diameter_m[q])
            return advance_ratio

    def momentum_ratio(self, q: np.ndarray, seg: np.ndarray, y: np.ndarray) -> np.ndarray:
        """:func:`.propeller.momentum_limit_ratio` at speed variable y (FM static, eta_p / eta_Froude forward). [-]"""
        ct, cp = self.coefficients(q, seg, y)
        j = self.axis_variable(q, y) if self.axis != "rpm" else 0.0
        ratio: np.ndarray = momentum_limit_ratio(ct, cp, j)
        return ratio

    def outside(self, q: np.ndarray, seg: np.ndarray) -> np.ndarray:
        """True on the held segments beyond the first or last measured point (tables of two points or more)."""
        n_valid = self.n_valid[q]
        outside: np.ndarray = (n_valid > 1) & ((seg == 0) | (seg >= n_valid))
        return outside

    def omega_rad_s(self, y: np.ndarray) -> np.ndarray:
        """Shaft speed from the speed variable. [rad/s]"""
        return y * (2.0 * math.pi / 60.0 if self.axis == "rpm" else 2.0 * math.pi)

    def emf_per_y(self, kv_si: np.ndarray) -> np.ndarray:
        """Back-EMF per unit speed variable ``dE/dy``. [V per rpm or V per rev/s]"""
        return (2.0 * math.pi / 60.0 if self.axis == "rpm" else 2.0 * math.pi) / kv_si

    # --- speed for a thrust --------------------------------------------------------------------------------

    def speed_for_thrust(self, thrust_n: np.ndarray, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Speed variable y and segment that make thrust ``thrust_n`` per rotor (NaN where unreachable)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.axis == "rpm":
                tau = thrust_n / self.kt[q]  # = CT x^2
            else:
                d = self.diameter_m[q]
                tau = self.density_kg_m3 * self.airspeed_m_s**2 * d * d / thrust_n  # = J^2 / CT
        seg = _count_below(tau, self.thrust_knots[q])
        idx = self._flat(q, seg)
        a, b = np.take(self.ct_a, idx), np.take(self.ct_b, idx)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.axis == "rpm":
                # Start from interpolation in sqrt(thrust) between the segment's knots (exact where CT is held),
                # then Newton on (a + b x) x^2 = tau kept inside the segment, where it is monotone.
                lo, hi = np.take(self.seg_lo, idx), np.take(self.seg_hi, idx)
                r_lo, r_hi = np.take(self.seg_root_thrust_lo, idx), np.take(self.seg_root_thrust_hi, idx)
                guess = lo + (hi - lo) * (np.sqrt(tau) - r_lo) / (r_hi - r_lo)
                y = np.where(b == 0.0, np.sqrt(tau / a), guess)
                a2, b3 = 2.0 * a, 3.0 * b
                y = _newton(lambda v: ((b * v + a) * (v * v) - tau, (b3 * v + a2) * v), y, lo, hi)
            else:
                # a + b J = J^2 / tau  ->  J^2 - tau b J - tau a = 0, the positive root without cancellation.
                root = np.sqrt(tau * tau * b * b + 4.0 * tau * a)
                j_adv = np.where(b >= 0, 0.5 * (tau * b + root), 2.0 * tau * a / (root - tau * b))
                y = self.airspeed_m_s / (j_adv * self.diameter_m[q])
        y = np.where(np.isfinite(y) & (y > 0), y, np.nan)
        return y, seg

    # --- full throttle ---------------------------------------------------------------------------------------

    def full_throttle(self, open_circuit_v: np.ndarray, resistance_ohm: np.ndarray, kv_si: np.ndarray,
                      no_load_current_a: np.ndarray, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Speed variable and segment at duty 1: ``V_oc - E(y) - R (I0 + Kv Q(y)) = 0``.

        ``resistance_ohm`` is the whole loop seen by one rotor at full throttle, ``R + R_on + N R_pack``.
        """
        drive = open_circuit_v - resistance_ohm * no_load_current_a  # A: > 0 when the motor turns at all
        beta = self.emf_per_y(kv_si)
        gamma = (resistance_ohm * kv_si) * self.kq[q]
        with np.errstate(invalid="ignore"):
            # Knot j lies below the root when the torque balance there is still positive:
            # drive - beta y_j > gamma Q_j  (rpm: residual decreasing in speed; J tables: decreasing in J).
            shape = np.broadcast_shapes(np.shape(drive), np.shape(gamma))
            knots = ((drive - beta * self.speed_knots[q, j], gamma * self.torque_knots[q, j])
                     for j in range(self.width))
            if self.axis == "rpm":
                seg = _count_true((left > right for left, right in knots), shape, self.width)
            else:
                seg = _count_true((left <= right for left, right in knots), shape, self.width)
        idx = self._flat(q, seg)
        c, d = np.take(self.cp_a, idx), np.take(self.cp_b, idx)
        with np.errstate(invalid="ignore", divide="ignore"):
            if self.axis == "rpm":
                mid = np.take(self.cp_mid, idx)
                y = 2.0 * drive / (beta + np.sqrt(beta * beta + 4.0 * gamma * mid * drive))
                gc, gd = gamma * c, gamma * d
                gc2, gd3 = 2.0 * gc, 3.0 * gd
                y = _newton(lambda v: (((gd * v + gc) * v + beta) * v - drive, (gd3 * v + gc2) * v + beta), y,
                            np.take(self.seg_lo, idx), np.take(self.seg_hi, idx))
            else:
                # Q ~ c n^2 + d (V/D) n: gamma c n^2 + (beta + gamma d V/D) n - A = 0.
                lin = beta + gamma * d * (self.airspeed_m_s / self.diameter_m[q])
                y = 2.0 * drive / (lin + np.sqrt(lin * lin + 4.0 * gamma * c * drive))
        y = np.where((drive > 0) & np.isfinite(y) & (y > 0), y, np.nan)
        return y, seg


def _count_true(tests: Iterable[np.ndarray], shape: tuple[int, ...], n: int) -> np.ndarray:
    """Number of true tests (at most ``n``) per element; a uint8 counter is far cheaper than adding booleans
    to an intp array."""
    count = np.zeros(shape, dtype=np.uint8 if n < 256 else np.intp)
    for t in tests:
        count += t.view(np.uint8) if count.dtype == np.uint8 and t.shape == shape else np.broadcast_to(t, shape)
    return count


def _count_below(value: np.ndarray, knots: np.ndarray) -> np.ndarray:
    """Per element, how many of its propeller's knots are <= ``value`` (``knots``: batch shape + (K,))."""
    shape = np.broadcast_shapes(np.shape(value), knots.shape[:-1])
    with np.errstate(invalid="ignore"):
        return _count_true((value >= knots[..., j] for j in range(knots.shape[-1])), shape, knots.shape[-1])


def _newton(fun: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]], y0: np.ndarray, lo: np.ndarray,
            hi: np.ndarray) -> np.ndarray:
    """Vectorised Newton on a function smooth and monotone on ``[lo, hi]`` (one table segment), iterates kept
    inside the segment, until every relative step is below :data:`NEWTON_RTOL`."""
    y = np.array(y0, dtype=np.float64)
    if not y.size:
        return y
    new = np.empty_like(y)
    diff = np.empty_like(y)
    for _ in range(NEWTON_MAX_ITER):
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            f, df = fun(y)
            np.divide(f, df, out=new)
            np.subtract(y, new, out=new)
            np.maximum(new, lo, out=new)
            np.minimum(new, hi, out=new)
            np.subtract(new, y, out=diff)
            np.abs(diff, out=diff)
            np.divide(diff, np.abs(new), out=diff)
            worst = np.nanmax(diff, initial=0.0)
        y, new = new, y
        if not worst > NEWTON_RTOL:
            break
    return y
