"""Pooled drive fit: motors (Kv, R', I0), the shared ESC (k_pwm, R_on) and propeller CP from electrical power."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace

import numpy as np
import scipy.linalg
from threadpoolctl import threadpool_limits

from .._types import FloatArray
from ..esc import EscParams
from ..motor import MotorParams
from ..propeller import PropellerTable
from ._common import (
    MAX_RELATIVE_STANDARD_ERROR,
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
from .drive_problem import (
    _MOTOR_UNITS,
    CP_MOMENTUM_FLOOR,
    _add_motor_params,
    _momentum_cp,
    _Param,
    _PooledProblem,
)
from .propeller import fit_propeller_static


def _relative_rms(model: FloatArray, measured: FloatArray) -> float:
    ok = measured > 0.0
    return float(np.sqrt(np.mean((model[ok] / measured[ok] - 1.0) ** 2))) if ok.any() else math.nan


def _pooled_fit(runs: Sequence[RunData], *, esc: EscParams, motor_priors: Mapping[str, MotorPrior],
                fixed_motors: Mapping[str, MotorParams], fixed_propellers: Mapping[str, PropellerTable],
                fit_pwm_loss: bool, fit_on_path_resistance: bool, knot_count: int,
                inductance_h: Mapping[str, float], solver: str = "analytic") -> JointFit:
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
        x, jac, fun = problem.solve(solver)
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
              inductance_h: Mapping[str, float] | None = None, solver: str = "analytic") -> JointFit:
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
    solver : {"analytic", "reference"}, default "analytic"
        The least-squares Jacobian: closed form with the exact trust-region solver, or the sparse finite
        differences with the iterative solver the fit first used (same minimum: ``tests/physics/test_calibrate.py``).

    Returns
    -------
    JointFit
    """
    # One BLAS thread: the fit's linear algebra is a few SVDs of (samples x parameters) matrices, too small to share
    # out, and OpenBLAS threads spinning against other work on a busy machine made the 50-run refit of
    # benchmarks/refit.py 7x slower (5.8 s against 0.8 s with two other busy processes on the 2-core machine).
    with threadpool_limits(limits=1, user_api="blas"):
        return _pooled_fit(runs, esc=esc or EscParams(), motor_priors=motor_priors or {},
                           fixed_motors=fixed_motors or {}, fixed_propellers=fixed_propellers or {},
                           fit_pwm_loss=fit_pwm_loss, fit_on_path_resistance=fit_on_path_resistance,
                           knot_count=knot_count, inductance_h=inductance_h or {}, solver=solver)


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
