"""Calibration: fit the reference model's parameters to measured bench runs (physics.md reference model v1).

Measured data wins over defaults: the fitted values replace the datasheet/default values of the motor
(Kv, line-to-line R including the ESC conduction path, I0), the ESC (the calibrated partial-throttle
coefficient ``k_pwm`` of ``P_pwm = k_pwm V_bus I d (1 - d)``) and the propeller (static CT and CP versus rpm).

The model fitted is exactly the one :func:`~.drive.for_thrust` evaluates (averaged switch plus every §5
partial-throttle term), per sample at the measured shaft speed and bus voltage:

``Q = CP(rpm) rho n^2 D^5 / 2pi``, ``I = I0 + Kv Q``, ``V_m = Omega / Kv + I R'``, ``d = V_m / V_bus``,
``P_bus = V_m I + P_extra(V_bus, d, I)``.

The duty is *inferred* from the motor equation rather than read from the throttle, because a hobby ESC's
throttle-to-duty curve is unknown; the throttle mapping (``duty = offset + slope * throttle``) is only used
where it is exact, at full throttle (d = 1, where ``V_bus = Omega / Kv + I_bus R'`` pins Kv and R), unless a
run says its mapping is trusted. Without torque, CP is identified jointly with the motor losses from the
electrical power, and pooling runs that share a propeller, a motor or the ESC is what separates them.

Every fit uses ``scipy.optimize.least_squares`` and reports standard errors ``sqrt(diag(s^2 (J^T J)^-1))``
with ``s^2 = SS / (m - p)`` (pooled fits estimate ``s^2`` per kind of residual - power, full-throttle
voltage, torque - so that one kind's nominal noise scale cannot shrink another's errors), the RMS residual,
the samples used and, per parameter, whether the data identified it or it was kept ("fixed") at its
datasheet/default value because its relative standard error from the data alone exceeded
:data:`MAX_RELATIVE_STANDARD_ERROR` or it lies in the null space of J (the ``notes`` say which and why).

References
----------
.. [1] M. Drela, "First-Order DC Electric Motor Model", MIT Aero & Astro, 2007.
.. [2] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003.
.. [3] J. B. Brandt and M. S. Selig, AIAA Paper 2011-1255, 2011 (CT, CP definitions; UIUC database).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from scipy.optimize import least_squares
from scipy.sparse import lil_matrix

from . import esc as esc_model
from ._types import RAD_S_PER_RPM, ArrayLike, FloatArray, as_float_array
from .esc import EscParams
from .motor import DEFAULT_INDUCTANCE_H, MotorParams
from .propeller import PropellerTable, coefficients_at

MAX_RELATIVE_STANDARD_ERROR = 0.3
"""A parameter whose data-only standard error exceeds this fraction of its value is not identified."""
KV_PRIOR_RELATIVE_SIGMA = 0.15
"""Spread of the Kv label around the true Kv (labels are nominal). [-]"""
DATASHEET_RELATIVE_SIGMA = 0.5
"""Spread given to datasheet R and I0 when used as priors. [-]"""
POWER_SIGMA = (0.02, 0.2)
"""(relative, absolute [W]) noise scale of the electrical-power residual."""
VOLTAGE_SIGMA_V = 0.02
"""Noise scale of the full-throttle voltage-equation residual. [V]"""
THRUST_SIGMA_RELATIVE = 0.02
"""Relative noise scale of thrust; an absolute floor of 2 % of the largest thrust is added."""
TORQUE_SIGMA = (0.02, 1e-4)
"""(relative, absolute [N m]) noise scale of the torque residual."""
DEFAULT_START = {"kv_rpm_per_v": 1000.0, "resistance_ohm": 0.1, "no_load_current_a": 0.5}

Status = Literal["identified", "fixed"]


@dataclass(frozen=True)
class FittedParameter:
    """One calibrated value: ``status`` says whether the data determined it; ``source`` where it came from.

    ``source`` is "fit" for identified values, else "datasheet" (a prior given by the caller), "default"
    (the reference-model default) or "start" (no value known: the starting guess, to be treated as unknown).
    """

    value: float
    standard_error: float
    status: Status
    unit: str
    source: str = "fit"


@dataclass(frozen=True)
class FitReport:
    """Common result of every ``fit_*`` function.

    ``residual_rms`` is the RMS of the relative residual of the fitted quantity (thrust for a propeller,
    electrical power for motor/ESC/joint fits). [-]
    """

    parameters: dict[str, FittedParameter]
    residual_rms: float
    samples_used: int
    notes: tuple[str, ...] = ()

    def value(self, name: str) -> float:
        return self.parameters[name].value


@dataclass(frozen=True)
class PropellerFit(FitReport):
    """Static CT(rpm) (and CP(rpm)) as a table at ``rpm`` knots, linear in between, held outside."""

    diameter_m: float = math.nan
    rpm: FloatArray = field(default_factory=lambda: np.zeros(0))
    thrust_coefficient: FloatArray = field(default_factory=lambda: np.zeros(0))
    power_coefficient: FloatArray = field(default_factory=lambda: np.zeros(0))

    def table(self) -> PropellerTable:
        """The fitted static table (NaN CP when power was not identified)."""
        return PropellerTable(as_float_array(self.diameter_m), self.rpm, self.thrust_coefficient,
                              self.power_coefficient)


@dataclass(frozen=True)
class MotorFit(FitReport):
    """Kv [rpm/V], R' = line-to-line R plus the ESC conduction path [Ω], I0 [A]."""

    def motor_params(self, on_path_resistance_ohm: float = 0.010,
                     inductance_h: float = DEFAULT_INDUCTANCE_H) -> MotorParams:
        """Motor parameters for :mod:`drive`: the winding share ``R' - R_on_path`` of the fitted resistance."""
        return MotorParams(as_float_array(self.value("kv_rpm_per_v")),
                           as_float_array(self.value("resistance_ohm") - on_path_resistance_ohm),
                           as_float_array(self.value("no_load_current_a")), as_float_array(inductance_h))


@dataclass(frozen=True)
class EscFit(FitReport):
    """``pwm_loss_coefficient`` (k_pwm) [-] and ``on_path_resistance_ohm`` [Ω]."""

    base: EscParams = field(default_factory=EscParams)

    def esc_params(self) -> EscParams:
        return replace(self.base, pwm_loss_coefficient=as_float_array(self.value("pwm_loss_coefficient")),
                       on_path_resistance_ohm=as_float_array(self.value("on_path_resistance_ohm")))


@dataclass(frozen=True)
class JointFit(FitReport):
    """Pooled fit: one :class:`MotorFit` per motor, :class:`PropellerFit` per propeller, the shared ESC."""

    motors: dict[str, MotorFit] = field(default_factory=dict)
    propellers: dict[str, PropellerFit] = field(default_factory=dict)
    esc: EscFit | None = None

    def motor_params(self, motor_id: str, inductance_h: float = DEFAULT_INDUCTANCE_H) -> MotorParams:
        assert self.esc is not None
        return self.motors[motor_id].motor_params(float(self.esc.value("on_path_resistance_ohm")), inductance_h)


@dataclass(frozen=True)
class RunData:
    """The usable samples of one bench run (flagged samples already removed), SI units.

    ``duty = clip(duty_offset + duty_slope * throttle, 0, 1)``; samples at d = 1 enter the voltage equation,
    and every sample does when ``duty_trusted``.
    """

    motor_id: str
    propeller_id: str
    diameter_m: float
    density_kg_m3: float
    bus_voltage_v: FloatArray
    bus_current_a: FloatArray
    rpm: FloatArray
    thrust_n: FloatArray
    throttle: FloatArray
    torque_nm: FloatArray | None = None
    duty_offset: float = 0.0
    duty_slope: float = 1.0
    duty_trusted: bool = False

    def __post_init__(self) -> None:
        for name in ("bus_voltage_v", "bus_current_a", "rpm", "thrust_n", "throttle"):
            object.__setattr__(self, name, as_float_array(getattr(self, name)).ravel())
        if self.torque_nm is not None:
            object.__setattr__(self, "torque_nm", as_float_array(self.torque_nm).ravel())

    @property
    def duty(self) -> FloatArray:
        return np.clip(self.duty_offset + self.duty_slope * self.throttle, 0.0, 1.0)


@dataclass(frozen=True)
class MotorPrior:
    """Datasheet values (None = unknown); Kv is usually the label."""

    kv_rpm_per_v: float | None = None
    resistance_ohm: float | None = None
    no_load_current_a: float | None = None


# --- propeller ------------------------------------------------------------------------------------------

def _knots(rpm: FloatArray, knot_count: int | None) -> FloatArray:
    distinct = np.unique(np.round(rpm))
    k = knot_count if knot_count is not None else int(np.clip(distinct.size // 2, 2, 12))
    k = max(1, min(k, distinct.size))
    if k == 1:
        return np.array([float(np.median(rpm))])
    return np.unique(np.quantile(rpm, np.linspace(0.0, 1.0, k)))


def _hat(x: FloatArray, knots: FloatArray) -> FloatArray:
    """Basis of linear interpolation in ``knots`` (held constant outside): shape (len(x), len(knots))."""
    eye = np.eye(knots.size)
    return np.column_stack([np.interp(x, knots, eye[k]) for k in range(knots.size)])


def _linear_fit(design: FloatArray, target: FloatArray, sigma: FloatArray) -> tuple[FloatArray, FloatArray, float]:
    a, b = design / sigma[:, None], target / sigma

    def residual(c: FloatArray) -> FloatArray:
        return a @ c - b

    start = np.linalg.lstsq(a, b, rcond=None)[0]
    sol = least_squares(residual, start, jac=lambda c: a, method="lm")
    return sol.x, _standard_errors(sol.jac, sol.fun, a.shape[1]), float(np.sqrt(np.mean(sol.fun**2)))


def _standard_errors(jac: FloatArray, resid: FloatArray, p: int, groups: np.ndarray | None = None) -> FloatArray:
    """``sqrt(diag(s^2 (J^T J)^+))``, ``s^2 = SS/(m - p)``; infinite for parameters in the null space of J.

    With ``groups`` (a label per residual row), each kind of residual gets its own ``s_g^2`` (same
    ``m/(m - p)`` correction) and the covariance is ``A^+ (sum_g s_g^2 J_g^T J_g) A^+`` with ``A = J^T J``,
    which reduces to ``s^2 A^+`` when every group scatters alike.
    """
    j = np.asarray(jac, dtype=np.float64)
    m = resid.size
    s2 = float(resid @ resid) / max(m - p, 1)
    if j.size == 0:
        return np.full(j.shape[1], np.inf)
    # column-normalise so that the rank test does not depend on the parameters' units
    norms = np.linalg.norm(j, axis=0)
    scaled = j / np.where(norms > 0.0, norms, 1.0)
    _, sv, vt = np.linalg.svd(scaled, full_matrices=True)
    sv_full = np.zeros(j.shape[1])
    sv_full[: sv.size] = sv
    null = vt[sv_full <= 1e-9 * max(float(sv_full.max()), 1e-300)]
    cov = np.linalg.pinv(j.T @ j)
    if groups is None:
        cov = cov * s2
    else:
        correction = m / max(m - p, 1)
        meat = np.zeros_like(cov)
        for g in np.unique(groups):
            rows = groups == g
            meat += correction * float(np.mean(resid[rows] ** 2)) * (j[rows].T @ j[rows])
        cov = cov @ meat @ cov
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    unidentified = (norms == 0.0) | (np.max(np.abs(null), axis=0) > 1e-6 if null.size else False)
    return np.where(unidentified, np.inf, se)


def fit_propeller_static(rpm: ArrayLike, thrust_n: ArrayLike, density_kg_m3: ArrayLike, diameter_m: float,
                         torque_nm: ArrayLike | None = None, *, rpm_knots: ArrayLike | None = None,
                         knot_count: int | None = None) -> PropellerFit:
    """Static CT(rpm) and, with torque, CP(rpm) of one propeller from pooled samples.

    CT (and CP) are piecewise linear in rpm between knots (default: 2-12 knots at quantiles of the sample
    rpm), exactly the interpolation :class:`PropellerTable` applies, so the fitted table is the model.

    Parameters
    ----------
    rpm : array_like
        Shaft speed (> 0). [rpm]
    thrust_n : array_like
        Thrust. [N]
    density_kg_m3 : array_like
        Air density per sample (or one value). [kg/m^3]
    diameter_m : float
        Propeller diameter. [m]
    torque_nm : array_like, optional
        Shaft torque; CP is fitted only when given (otherwise NaN). [N m]
    rpm_knots : array_like, optional
        Table abscissae. [rpm]
    knot_count : int, optional
        Number of quantile knots when ``rpm_knots`` is not given.

    Returns
    -------
    PropellerFit
        Parameters ``ct[k]`` (and ``cp[k]``) at ``rpm[k]``; residual_rms is the relative thrust RMS.
    """
    speed = as_float_array(rpm).ravel()
    thrust = as_float_array(thrust_n).ravel()
    rho = np.broadcast_to(as_float_array(density_kg_m3), speed.shape)
    knots = np.sort(as_float_array(rpm_knots).ravel()) if rpm_knots is not None else _knots(speed, knot_count)
    n = speed / 60.0
    basis = _hat(speed, knots)
    t_scale = rho * n**2 * diameter_m**4
    floor = 0.02 * float(np.max(np.abs(thrust)))
    ct, ct_se, _ = _linear_fit(basis * t_scale[:, None], thrust, THRUST_SIGMA_RELATIVE * np.abs(thrust) + floor)
    params = {f"ct[{k}]": FittedParameter(float(ct[k]), float(ct_se[k]), "identified", "-")
              for k in range(knots.size)}
    cp = np.full(knots.size, np.nan)
    notes = [f"{knots.size} rpm knots between {knots[0]:.0f} and {knots[-1]:.0f} rpm"]
    if torque_nm is not None:
        torque = as_float_array(torque_nm).ravel()
        q_scale = rho * n**2 * diameter_m**5 / (2.0 * math.pi)
        sigma = TORQUE_SIGMA[0] * np.abs(torque) + max(TORQUE_SIGMA[1], 0.02 * float(np.max(np.abs(torque))))
        cp, cp_se, _ = _linear_fit(basis * q_scale[:, None], torque, sigma)
        params |= {f"cp[{k}]": FittedParameter(float(cp[k]), float(cp_se[k]), "identified", "-")
                   for k in range(knots.size)}
    else:
        notes.append("no torque: CP not fitted here (fit it jointly with the motor from electrical power)")
    predicted = (basis @ ct) * t_scale
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(thrust > 0.0, predicted / thrust - 1.0, np.nan)
    return PropellerFit(parameters=params, residual_rms=float(np.sqrt(np.nanmean(rel**2))),
                        samples_used=int(speed.size), notes=tuple(notes), diameter_m=float(diameter_m),
                        rpm=knots, thrust_coefficient=ct, power_coefficient=cp)


# --- pooled motor / ESC / propeller-power fit -----------------------------------------------------------

@dataclass
class _Param:
    name: str
    value: float
    lower: float
    upper: float
    unit: str
    free: bool = True
    prior: float | None = None
    prior_sigma: float = math.inf
    source: str = "start"
    fixable: bool = True
    kind: str = "esc"
    owner: int = -1


class _Problem:
    """Concatenated samples of many runs and the parameter registry of the pooled model."""

    def __init__(self, runs: Sequence[RunData], esc: EscParams, inductance_h: Mapping[str, float],
                 fixed_propellers: Mapping[str, PropellerTable], knot_count: int) -> None:
        self.runs = list(runs)
        self.esc = esc
        def cat(name: str) -> FloatArray:
            return np.concatenate([getattr(r, name) for r in self.runs])

        self.v, self.i, self.rpm, self.thrust = cat("bus_voltage_v"), cat("bus_current_a"), cat("rpm"), cat("thrust_n")
        self.duty = cat("duty")
        self.rho = np.concatenate([np.full(r.rpm.size, r.density_kg_m3) for r in self.runs])
        self.diameter = np.concatenate([np.full(r.rpm.size, r.diameter_m) for r in self.runs])
        self.motor_ids = sorted({r.motor_id for r in self.runs})
        self.prop_ids = sorted({r.propeller_id for r in self.runs})
        self.m = np.concatenate([np.full(r.rpm.size, self.motor_ids.index(r.motor_id)) for r in self.runs])
        self.p = np.concatenate([np.full(r.rpm.size, self.prop_ids.index(r.propeller_id)) for r in self.runs])
        self.torque = np.concatenate([r.torque_nm if r.torque_nm is not None else np.full(r.rpm.size, np.nan)
                                      for r in self.runs])
        trusted = np.concatenate([np.full(r.rpm.size, r.duty_trusted) for r in self.runs])
        self.known_duty = trusted | (self.duty >= 1.0)
        self.inductance = np.array([inductance_h.get(mid, DEFAULT_INDUCTANCE_H) for mid in self.motor_ids])[self.m]
        self.omega = self.rpm * RAD_S_PER_RPM
        n = self.rpm / 60.0
        self.torque_scale = self.rho * n**2 * self.diameter**5 / (2.0 * math.pi)
        # CP per sample = basis_row . knots (free propellers) or a constant (fixed tables)
        self.cp_fixed = np.full(self.rpm.size, np.nan)
        self.knots: dict[int, FloatArray] = {}
        self.basis: dict[int, tuple[np.ndarray, FloatArray]] = {}
        for k, pid in enumerate(self.prop_ids):
            sel = np.flatnonzero(self.p == k)
            if pid in fixed_propellers:
                _, cp = coefficients_at(fixed_propellers[pid], self.omega[sel])
                self.cp_fixed[sel] = cp
            else:
                self.knots[k] = _knots(self.rpm[sel], knot_count)
                self.basis[k] = (sel, _hat(self.rpm[sel], self.knots[k]))
        self.params: list[_Param] = []
        self.winding_only = np.zeros(len(self.motor_ids))
        """1 for motors given as fixed MotorParams (their R is the winding alone: R' = R + R_on_path)."""

    def index(self, name: str) -> int:
        return next(k for k, q in enumerate(self.params) if q.name == name)

    def values(self, x: FloatArray) -> FloatArray:
        full = np.array([q.value for q in self.params])
        full[[k for k, q in enumerate(self.params) if q.free]] = x
        return full

    def motor_columns(self, attr: str) -> list[int]:
        return [self.index(f"{mid}:{attr}") for mid in self.motor_ids]

    def model(self, full: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, EscParams]:
        """Electrical power, motor voltage, current and torque per sample for parameter values ``full``."""
        kv = full[self.motor_columns("kv_rpm_per_v")][self.m] * RAD_S_PER_RPM
        r = full[self.motor_columns("resistance_ohm")][self.m] + self.winding_only[self.m] * full[
            self.index("esc:on_path_resistance_ohm")]
        i0 = full[self.motor_columns("no_load_current_a")][self.m]
        cp = self.cp_fixed.copy()
        for k, (sel, basis) in self.basis.items():
            cp[sel] = basis @ full[[self.index(f"{self.prop_ids[k]}:cp[{j}]") for j in range(self.knots[k].size)]]
        esc = replace(self.esc, pwm_loss_coefficient=full[self.index("esc:pwm_loss_coefficient")],
                      on_path_resistance_ohm=full[self.index("esc:on_path_resistance_ohm")])
        torque = cp * self.torque_scale
        current = i0 + kv * torque
        motor_voltage = self.omega / kv + current * r
        # where the duty is known (full throttle, or a trusted mapping) the ESC losses use it, else V_m / V_bus
        duty = np.where(self.known_duty, self.duty, motor_voltage / self.v)
        extra = esc_model.extra_loss_w(self.v, duty, current, r - esc.on_path_resistance_ohm, self.inductance, esc)
        return motor_voltage * current + extra, kv, r, torque, esc

    def residuals(self, x: FloatArray, with_priors: bool = True) -> FloatArray:
        full = self.values(x)
        power, kv, r, torque, esc = self.model(full)
        measured = self.v * self.i
        out = [(power - measured) / (POWER_SIGMA[0] * measured + POWER_SIGMA[1])]
        known = self.known_duty
        d, v = self.duty[known], self.v[known]
        extra = esc_model.extra_loss_w(v, d, self.i[known] / d, r[known] - esc.on_path_resistance_ohm,
                                       self.inductance[known], esc)
        motor_current = (v * self.i[known] - extra) / (d * v)
        out.append((self.omega[known] / kv[known] + motor_current * r[known] - d * v) / VOLTAGE_SIGMA_V)
        has_q = np.isfinite(self.torque)
        q = self.torque[has_q]
        out.append((torque[has_q] - q) / (TORQUE_SIGMA[0] * np.abs(q) + TORQUE_SIGMA[1]))
        if with_priors:
            out.append(np.array([(full[k] - q_.prior) / q_.prior_sigma for k, q_ in enumerate(self.params)
                                 if q_.free and q_.prior is not None and math.isfinite(q_.prior_sigma)]))
        return np.concatenate(out)

    def sparsity(self) -> lil_matrix:
        """Which residual rows each free parameter can move (finite differences then need ~10 evaluations)."""
        free = [k for k, q in enumerate(self.params) if q.free]
        known = np.flatnonzero(self.known_duty)
        has_q = np.flatnonzero(np.isfinite(self.torque))
        priors = [k for k in free if self.params[k].prior is not None and math.isfinite(self.params[k].prior_sigma)]
        s = lil_matrix((self.rpm.size + known.size + has_q.size + len(priors), len(free)), dtype=np.int8)
        row0 = 0
        for samples, kinds in ((np.arange(self.rpm.size), ("motor", "prop", "esc")), (known, ("motor", "esc")),
                               (has_q, ("prop",))):
            for c, k in enumerate(free):
                q = self.params[k]
                if q.kind not in kinds:
                    continue
                if q.kind == "motor":
                    hit = np.flatnonzero(self.m[samples] == q.owner)
                elif q.kind == "prop":
                    hit = np.flatnonzero(self.p[samples] == q.owner)
                else:
                    hit = np.arange(samples.size)
                s[row0 + hit, c] = 1
            row0 += samples.size
        for j, k in enumerate(priors):
            s[row0 + j, free.index(k)] = 1
        return s

    def row_groups(self) -> np.ndarray:
        """Residual-row labels: 0 power, 1 full-throttle voltage, 2 torque, 3 priors."""
        sizes = (self.rpm.size, int(np.sum(self.known_duty)), int(np.sum(np.isfinite(self.torque))))
        return np.concatenate([np.full(n, g) for g, n in enumerate(sizes)])

    def solve(self) -> tuple[FloatArray, FloatArray, FloatArray]:
        free = [q for q in self.params if q.free]
        x0 = np.array([min(max(q.value, q.lower), q.upper) for q in free])
        bounds = (np.array([q.lower for q in free]), np.array([q.upper for q in free]))
        # the sparsity pattern makes finite differences cheap for pooled fits; tiny problems go dense
        sparsity = self.sparsity() if x0.size > 5 else None
        sol = least_squares(self.residuals, x0, bounds=bounds, jac_sparsity=sparsity, x_scale="jac", method="trf")
        jac = sol.jac.toarray() if hasattr(sol.jac, "toarray") else np.asarray(sol.jac)
        return sol.x, jac, sol.fun


def _start_motor(runs: Sequence[RunData], prior: MotorPrior) -> tuple[float, float]:
    """Kv and R' starting values: a line through the full-throttle points ``V = Omega/Kv + I R'``."""
    v = np.concatenate([r.bus_voltage_v[r.duty >= 1.0] for r in runs])
    i = np.concatenate([r.bus_current_a[r.duty >= 1.0] for r in runs])
    w = np.concatenate([r.rpm[r.duty >= 1.0] for r in runs]) * RAD_S_PER_RPM
    kv = prior.kv_rpm_per_v or float(np.max(np.concatenate([r.rpm / r.bus_voltage_v for r in runs]))) * 1.1
    resistance = prior.resistance_ohm or DEFAULT_START["resistance_ohm"]
    if v.size >= 2 and np.ptp(i) > 0.0:
        (inv_kv, r_fit), *_ = np.linalg.lstsq(np.column_stack([w, i]), v, rcond=None)
        if inv_kv > 0.0 and r_fit > 0.0:
            kv, resistance = 1.0 / (inv_kv * RAD_S_PER_RPM), float(r_fit)
    return float(kv), float(resistance)


_MOTOR_UNITS = {"kv_rpm_per_v": "rpm/V", "resistance_ohm": "Ω", "no_load_current_a": "A"}


def _add_motor_params(problem: _Problem, k: int, mid: str, runs: Sequence[RunData], prior: MotorPrior,
                      fixed: MotorParams | None, esc: EscParams) -> None:
    if fixed is not None:
        problem.winding_only[k] = 1.0
        for attr, value in (("kv_rpm_per_v", fixed.kv_rpm_per_v), ("resistance_ohm", fixed.resistance_ohm),
                            ("no_load_current_a", fixed.no_load_current_a)):
            problem.params.append(_Param(f"{mid}:{attr}", float(value), 0.0, math.inf, _MOTOR_UNITS[attr],
                                         free=False, source="given", kind="motor", owner=k))
        return
    kv0, r0 = _start_motor(runs, prior)
    r_prior = None if prior.resistance_ohm is None else prior.resistance_ohm + float(esc.on_path_resistance_ohm)
    specs = (("kv_rpm_per_v", kv0, 1.0, prior.kv_rpm_per_v, KV_PRIOR_RELATIVE_SIGMA),
             ("resistance_ohm", r0, 1e-4, r_prior, DATASHEET_RELATIVE_SIGMA),
             ("no_load_current_a", prior.no_load_current_a or DEFAULT_START["no_load_current_a"], 0.0,
              prior.no_load_current_a, DATASHEET_RELATIVE_SIGMA))
    for attr, start, lower, prior_value, rel_sigma in specs:
        problem.params.append(_Param(
            f"{mid}:{attr}", float(start), lower, math.inf, _MOTOR_UNITS[attr], prior=prior_value,
            prior_sigma=rel_sigma * prior_value if prior_value else math.inf,
            source="datasheet" if prior_value is not None else "start", kind="motor", owner=k))


def _relative_rms(model: FloatArray, measured: FloatArray) -> float:
    ok = measured > 0.0
    return float(np.sqrt(np.mean((model[ok] / measured[ok] - 1.0) ** 2))) if ok.any() else math.nan


def _pooled_fit(runs: Sequence[RunData], *, esc: EscParams, motor_priors: Mapping[str, MotorPrior],
                fixed_motors: Mapping[str, MotorParams], fixed_propellers: Mapping[str, PropellerTable],
                fit_pwm_loss: bool, fit_on_path_resistance: bool, knot_count: int,
                inductance_h: Mapping[str, float]) -> JointFit:
    runs = [r for r in runs if r.rpm.size]
    if not runs:
        raise ValueError("no usable samples to fit")
    problem = _Problem(runs, esc, inductance_h, fixed_propellers, knot_count)
    thrust_fits: dict[str, PropellerFit] = {}
    for k, pid in enumerate(problem.prop_ids):
        sel = problem.p == k
        if k in problem.knots:
            thrust_fits[pid] = fit_propeller_static(problem.rpm[sel], problem.thrust[sel], problem.rho[sel],
                                                    float(problem.diameter[sel][0]), rpm_knots=problem.knots[k])
    for k, mid in enumerate(problem.motor_ids):
        _add_motor_params(problem, k, mid, [r for r in runs if r.motor_id == mid],
                          motor_priors.get(mid, MotorPrior()), fixed_motors.get(mid), esc)
    for k, knots in problem.knots.items():
        for j in range(knots.size):
            problem.params.append(_Param(f"{problem.prop_ids[k]}:cp[{j}]", 0.05, 1e-5, 2.0, "-", fixable=False,
                                         kind="prop", owner=k))
    problem.params.append(_Param("esc:pwm_loss_coefficient", float(esc.pwm_loss_coefficient), 0.0, 50.0, "-",
                                 free=fit_pwm_loss, source="default"))
    problem.params.append(_Param("esc:on_path_resistance_ohm", float(esc.on_path_resistance_ohm), 0.0, 1.0, "Ω",
                                 free=fit_on_path_resistance, source="default"))
    if fit_pwm_loss and problem.params[-2].value == 0.0:
        problem.params[-2].value = 0.05  # start inside the bounds' interior

    notes: list[str] = []
    se = np.zeros(len(problem.params))
    for _ in range(len(problem.params)):
        free = [k for k, q in enumerate(problem.params) if q.free]
        x, jac, fun = problem.solve()
        for k, value in zip(free, x, strict=True):
            problem.params[k].value = float(value)
        n_prior = fun.size - problem.rpm.size - int(np.sum(problem.known_duty)) - int(np.sum(np.isfinite(
            problem.torque)))
        data_rows = fun.size - n_prior
        groups = np.concatenate([problem.row_groups(), np.full(n_prior, 3)])
        se_data = _standard_errors(jac[:data_rows], fun[:data_rows], len(free), groups[:data_rows])
        se_all = _standard_errors(jac, fun, len(free), groups)
        se[:] = 0.0
        se[free] = se_all
        with np.errstate(divide="ignore", invalid="ignore"):
            relative = se_data / np.abs(x)
        offenders = [(k, rel) for k, rel in zip(free, relative, strict=True)
                     if problem.params[k].fixable and not rel <= MAX_RELATIVE_STANDARD_ERROR]
        if not offenders:
            break
        for k, rel in offenders:
            q = problem.params[k]
            q.free = False
            kept = q.prior if q.prior is not None else (
                float(getattr(esc, q.name.split(":")[1])) if q.kind == "esc" else q.value)
            notes.append(f"{q.name} fixed at {kept:.4g} {q.unit} ({q.source}): the data alone leave a relative "
                         f"standard error of {rel:.2g} (> {MAX_RELATIVE_STANDARD_ERROR}), so they do not "
                         "determine it")
            q.value = kept
        free_after = [q for q in problem.params if q.free]
        if not free_after:
            break
    return _assemble(problem, se, thrust_fits, fixed_propellers, esc, notes)


def _assemble(problem: _Problem, se: FloatArray, thrust_fits: Mapping[str, PropellerFit],
              fixed_propellers: Mapping[str, PropellerTable], esc: EscParams, notes: list[str]) -> JointFit:
    def fitted(k: int) -> FittedParameter:
        q = problem.params[k]
        if q.free:
            return FittedParameter(q.value, float(se[k]), "identified", q.unit, "fit")
        return FittedParameter(q.value, math.nan, "fixed", q.unit, q.source)

    full = np.array([q.value for q in problem.params])
    power = problem.model(full)[0]
    measured = problem.v * problem.i
    motors = {}
    for k, mid in enumerate(problem.motor_ids):
        sel = problem.m == k
        params = {attr: fitted(problem.index(f"{mid}:{attr}")) for attr in _MOTOR_UNITS}
        motor_notes = tuple(n for n in notes if n.startswith(f"{mid}:"))
        if not np.any(problem.known_duty & sel):
            motor_notes += ("no full-throttle (d = 1) samples: Kv and R rest on the power equation alone",)
        motors[mid] = MotorFit(params, _relative_rms(power[sel], measured[sel]), int(np.sum(sel)), motor_notes)
    propellers = {}
    for k, pid in enumerate(problem.prop_ids):
        sel = problem.p == k
        if pid in fixed_propellers:
            t = fixed_propellers[pid]
            propellers[pid] = PropellerFit({}, math.nan, int(np.sum(sel)), ("given table, not refitted",),
                                           float(t.diameter_m), t.axis_values, t.thrust_coefficient,
                                           t.power_coefficient)
            continue
        ct_fit = thrust_fits[pid]
        cols = [problem.index(f"{pid}:cp[{j}]") for j in range(problem.knots[k].size)]
        params = dict(ct_fit.parameters) | {f"cp[{j}]": fitted(c) for j, c in enumerate(cols)}
        how = ("CP from torque and electrical power" if np.any(np.isfinite(problem.torque[sel]))
               else "no torque: CP identified jointly with the motor losses from electrical power")
        propellers[pid] = replace(ct_fit, parameters=params, power_coefficient=full[cols],
                                  notes=ct_fit.notes[:1] + (how,))
    esc_params = {name: fitted(problem.index(f"esc:{name}"))
                  for name in ("pwm_loss_coefficient", "on_path_resistance_ohm")}
    esc_notes = tuple(n for n in notes if n.startswith("esc:"))
    if not problem.params[problem.index("esc:on_path_resistance_ohm")].free and not esc_notes:
        esc_notes = ("on_path_resistance_ohm kept at its default: with every motor's R fitted it is not separable "
                     "(the motors' R' include the ESC path)",)
    partial = problem.duty < 1.0
    esc_fit = EscFit(esc_params, _relative_rms(power[partial], measured[partial]), int(np.sum(partial)), esc_notes,
                     base=esc)
    everything = {f"{mid}:{a}": p for mid, m in motors.items() for a, p in m.parameters.items()}
    everything |= {f"esc:{a}": p for a, p in esc_params.items()}
    return JointFit(everything, _relative_rms(power, measured), int(measured.size), tuple(notes), motors,
                    propellers, esc_fit)


def fit_joint(runs: Sequence[RunData], *, esc: EscParams | None = None,
              motor_priors: Mapping[str, MotorPrior] | None = None,
              fixed_motors: Mapping[str, MotorParams] | None = None,
              fixed_propellers: Mapping[str, PropellerTable] | None = None, fit_pwm_loss: bool = True,
              fit_on_path_resistance: bool = False, knot_count: int = 5,
              inductance_h: Mapping[str, float] | None = None) -> JointFit:
    """Pooled fit over runs sharing parts: per-propeller CT(rpm)/CP(rpm), per-motor Kv/R'/I0, the ESC's k_pwm.

    Parameters
    ----------
    runs : sequence of RunData
        Usable samples of every run (any mix of motors, propellers and supply voltages; one ESC).
    esc : EscParams, optional
        ESC defaults (physics.md) for every term not fitted.
    motor_priors : mapping motor id -> MotorPrior, optional
        Datasheet values: Kv label (prior sigma 15 %), R and I0 (50 %); also the values a non-identified
        parameter is kept at.
    fixed_motors, fixed_propellers : mapping, optional
        Parts whose parameters are known and not refitted.
    fit_pwm_loss : bool, default True
        Fit the shared ``k_pwm`` (else kept at ``esc.pwm_loss_coefficient``).
    fit_on_path_resistance : bool, default False
        Try to fit the ESC conduction resistance (identifiable only when motors are fixed).
    knot_count : int, default 5
        rpm knots of each propeller's CT/CP table.
    inductance_h : mapping motor id -> float, optional
        Motor line-to-line inductance for the ripple term (default 30 µH). [H]

    Returns
    -------
    JointFit
    """
    return _pooled_fit(runs, esc=esc or EscParams(), motor_priors=motor_priors or {}, fixed_motors=fixed_motors or {},
                       fixed_propellers=fixed_propellers or {}, fit_pwm_loss=fit_pwm_loss,
                       fit_on_path_resistance=fit_on_path_resistance, knot_count=knot_count,
                       inductance_h=inductance_h or {})


def fit_motor(runs: Sequence[RunData], *, prior: MotorPrior | None = None, esc: EscParams | None = None,
              propellers: Mapping[str, PropellerTable] | None = None, knot_count: int = 5) -> MotorFit:
    """Kv, R' (line-to-line incl. the ESC path) and I0 of one motor from its runs, ESC terms held.

    Without torque and without a known ``propellers`` table, CP is fitted alongside (see :func:`fit_joint`);
    with torque, ``Q = Kt (I - I0)`` enters through the torque residual. Full-throttle samples (d = 1 by the
    run's throttle mapping) pin Kv and R through ``V_bus = Omega / Kv + I R'``.
    """
    ids = {r.motor_id for r in runs}
    if len(ids) != 1:
        raise ValueError(f"fit_motor needs the runs of one motor, got {sorted(ids)}")
    (mid,) = ids
    fit = fit_joint(runs, esc=esc, motor_priors={mid: prior or MotorPrior()}, fixed_propellers=propellers,
                    fit_pwm_loss=False, knot_count=knot_count)
    return fit.motors[mid]


def fit_esc(runs: Sequence[RunData], *, motors: Mapping[str, MotorParams], propellers: Mapping[str, PropellerTable],
            esc: EscParams | None = None, fit_on_path_resistance: bool = False) -> EscFit:
    """The shared ESC's ``k_pwm`` (and optionally R_on_path) from runs of known motors and propellers.

    Pool every run of the ESC (all motors, all supply voltages): partial-throttle samples at different bus
    voltages and duties are what determine ``k_pwm``; full-throttle samples carry no PWM loss.
    """
    fit = fit_joint(runs, esc=esc, fixed_motors=motors, fixed_propellers=propellers, fit_pwm_loss=True,
                    fit_on_path_resistance=fit_on_path_resistance)
    assert fit.esc is not None
    return fit.esc
