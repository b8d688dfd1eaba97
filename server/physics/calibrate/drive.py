"""Pooled drive fit: motors (Kv, R', I0), the shared ESC (k_pwm, R_on) and propeller CP from electrical power."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np
import scipy.linalg
from scipy.optimize import least_squares
from scipy.sparse import lil_matrix

from .. import esc as esc_model
from .._types import RAD_S_PER_RPM, FloatArray
from ..esc import EscParams
from ..motor import DEFAULT_INDUCTANCE_H, MotorParams
from ..propeller import PropellerTable, coefficients_at, momentum_limit_ratio
from ._common import (
    DATASHEET_RELATIVE_SIGMA,
    DEFAULT_START,
    KV_PRIOR_RELATIVE_SIGMA,
    MAX_RELATIVE_STANDARD_ERROR,
    POWER_SIGMA,
    TORQUE_SIGMA,
    VOLTAGE_SIGMA_V,
    EscFit,
    FittedParameter,
    JointFit,
    MotorFit,
    MotorPrior,
    PropellerFit,
    RunData,
    _covariance,
    _standard_errors,
)
from .propeller import _hat, _knots, fit_propeller_static

CP_MOMENTUM_FLOOR = 1.001
"""A fitted CP knot stays this factor above the momentum-theory minimum sqrt(2/pi) CT^1.5 (figure of merit 1,
Leishman 2006, ch. 2): near idle the electrical power barely depends on CP and an unbounded fit can return a
propeller that beats momentum theory, which the ranking must reject as impossible data."""


def _momentum_cp(ct: float) -> float:
    """Smallest static CP momentum theory allows at thrust coefficient ``ct`` (figure of merit 1). [-]"""
    return float(momentum_limit_ratio(max(ct, 0.0), 1.0))  # FM at CP = 1 is the CP at which FM = 1


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


class _PooledProblem:
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


def _add_motor_params(problem: _PooledProblem, k: int, mid: str, runs: Sequence[RunData], prior: MotorPrior,
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
    problem = _PooledProblem(runs, esc, inductance_h, fixed_propellers, knot_count)
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
        ct_knots = thrust_fits[problem.prop_ids[k]].thrust_coefficient
        for j in range(knots.size):
            floor = max(1e-5, CP_MOMENTUM_FLOOR * _momentum_cp(float(ct_knots[j])))
            problem.params.append(_Param(f"{problem.prop_ids[k]}:cp[{j}]", max(0.05, 1.5 * floor), floor, 2.0, "-",
                                         fixable=False, kind="prop", owner=k))
    problem.params.append(_Param("esc:pwm_loss_coefficient", float(esc.pwm_loss_coefficient), 0.0, 50.0, "-",
                                 free=fit_pwm_loss, source="default"))
    problem.params.append(_Param("esc:on_path_resistance_ohm", float(esc.on_path_resistance_ohm), 0.0, 1.0, "Ω",
                                 free=fit_on_path_resistance, source="default"))
    if fit_pwm_loss and problem.params[-2].value == 0.0:
        problem.params[-2].value = 0.05  # start inside the bounds' interior

    notes: list[str] = []
    se = np.zeros(len(problem.params))
    cov = np.zeros((len(problem.params), len(problem.params)))
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
        se_all, cov_all = _covariance(jac, fun, len(free), groups)
        se[:] = 0.0
        se[free] = se_all
        cov[:] = 0.0
        cov[np.ix_(free, free)] = cov_all
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
    for q in problem.params:
        if q.kind == "prop" and q.free and q.value <= q.lower * (1.0 + 1e-6) and q.lower > 1e-5:
            notes.append(f"{q.name} at the momentum limit (figure of merit 1): the samples near that knot do not "
                         "separate the propeller's power from the motor's no-load loss, and no propeller beats "
                         "momentum theory")
    return _assemble(problem, se, cov, thrust_fits, fixed_propellers, esc, notes)


def _block(problem: _PooledProblem, cov: FloatArray, names: Mapping[str, str]) -> tuple[tuple[str, ...], FloatArray]:
    """The covariance of the identified parameters among ``names`` (registry name -> name in the part's fit)."""
    keep = [(problem.index(reg), short) for reg, short in names.items() if problem.params[problem.index(reg)].free]
    idx = [i for i, _ in keep]
    return tuple(short for _, short in keep), cov[np.ix_(idx, idx)]


def _assemble(problem: _PooledProblem, se: FloatArray, cov: FloatArray, thrust_fits: Mapping[str, PropellerFit],
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
        motors[mid] = MotorFit(params, _relative_rms(power[sel], measured[sel]), int(np.sum(sel)), motor_notes,
                               _block(problem, cov, {f"{mid}:{attr}": attr for attr in _MOTOR_UNITS}))
    propellers = {}
    for k, pid in enumerate(problem.prop_ids):
        sel = problem.p == k
        if pid in fixed_propellers:
            t = fixed_propellers[pid]
            propellers[pid] = PropellerFit({}, math.nan, int(np.sum(sel)), ("given table, not refitted",),
                                           diameter_m=float(t.diameter_m), rpm=t.axis_values,
                                           thrust_coefficient=t.thrust_coefficient,
                                           power_coefficient=t.power_coefficient)
            continue
        ct_fit = thrust_fits[pid]
        cols = [problem.index(f"{pid}:cp[{j}]") for j in range(problem.knots[k].size)]
        params = dict(ct_fit.parameters) | {f"cp[{j}]": fitted(c) for j, c in enumerate(cols)}
        how = ("CP from torque and electrical power" if np.any(np.isfinite(problem.torque[sel]))
               else "no torque: CP identified jointly with the motor losses from electrical power")
        cp_names, cp_cov = _block(problem, cov, {f"{pid}:cp[{j}]": f"cp[{j}]" for j in range(problem.knots[k].size)})
        ct_names, ct_cov = ct_fit.covariance or ((), np.zeros((0, 0)))
        propellers[pid] = replace(ct_fit, parameters=params, power_coefficient=full[cols],
                                  notes=ct_fit.notes[:1] + (how,),
                                  covariance=(ct_names + cp_names, scipy.linalg.block_diag(ct_cov, cp_cov)))
    esc_params = {name: fitted(problem.index(f"esc:{name}"))
                  for name in ("pwm_loss_coefficient", "on_path_resistance_ohm")}
    esc_notes = tuple(n for n in notes if n.startswith("esc:"))
    if not problem.params[problem.index("esc:on_path_resistance_ohm")].free and not esc_notes:
        esc_notes = ("on_path_resistance_ohm kept at its default: with every motor's R fitted it is not separable "
                     "(the motors' R' include the ESC path)",)
    partial = problem.duty < 1.0
    esc_fit = EscFit(esc_params, _relative_rms(power[partial], measured[partial]), int(np.sum(partial)), esc_notes,
                     _block(problem, cov, {f"esc:{n}": n for n in ("pwm_loss_coefficient", "on_path_resistance_ohm")}),
                     base=esc)
    everything = {f"{mid}:{a}": p for mid, m in motors.items() for a, p in m.parameters.items()}
    everything |= {f"esc:{a}": p for a, p in esc_params.items()}
    return JointFit(everything, _relative_rms(power, measured), int(measured.size), tuple(notes), motors=motors,
                    propellers=propellers, esc=esc_fit)


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
        ESC defaults (docs/model-reference.md#reference-model-v1) for every term not fitted.
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
