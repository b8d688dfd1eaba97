"""The pooled drive fit's model: its parameter registry and the residuals of every sample (motor, ESC, propeller CP).

Split from :mod:`.drive` (the fit loop, standard errors and results) so each file does one job.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np
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
    POWER_SIGMA,
    TORQUE_SIGMA,
    VOLTAGE_SIGMA_V,
    MotorPrior,
    RunData,
)
from .propeller import _hat, _knots

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


@dataclass(frozen=True)
class _State:
    """The model's per-sample state at one set of parameter values (SI; ``esc`` with the fitted terms)."""

    kv: FloatArray
    r: FloatArray
    torque: FloatArray
    current: FloatArray
    motor_voltage: FloatArray
    duty: FloatArray
    power: FloatArray
    esc: EscParams


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
        self._index: dict[str, int] = {}
        self.winding_only = np.zeros(len(self.motor_ids))
        """1 for motors given as fixed MotorParams (their R is the winding alone: R' = R + R_on_path)."""

    def index(self, name: str) -> int:
        if len(self._index) != len(self.params):  # parameters are only ever appended
            self._index = {q.name: k for k, q in enumerate(self.params)}
        return self._index[name]

    def values(self, x: FloatArray) -> FloatArray:
        full = np.array([q.value for q in self.params])
        full[[k for k, q in enumerate(self.params) if q.free]] = x
        return full

    def motor_columns(self, attr: str) -> list[int]:
        return [self.index(f"{mid}:{attr}") for mid in self.motor_ids]

    def model(self, full: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, EscParams]:
        """Electrical power, motor voltage, current and torque per sample for parameter values ``full``."""
        state = self._state(full)
        return state.power, state.kv, state.r, state.torque, state.esc

    def _state(self, full: FloatArray) -> _State:
        kv = full[self.motor_columns("kv_rpm_per_v")][self.m] * RAD_S_PER_RPM
        r = full[self.motor_columns("resistance_ohm")][self.m] + self.winding_only[self.m] * full[
            self.index("esc:on_path_resistance_ohm")]
        i0 = full[self.motor_columns("no_load_current_a")][self.m]
        cp = self.cp_fixed.copy()
        for k, (sel, basis) in self.basis.items():
            cp[sel] = basis @ full[self.cp_columns(k)]
        esc = replace(self.esc, pwm_loss_coefficient=full[self.index("esc:pwm_loss_coefficient")],
                      on_path_resistance_ohm=full[self.index("esc:on_path_resistance_ohm")])
        torque = cp * self.torque_scale
        current = i0 + kv * torque
        motor_voltage = self.omega / kv + current * r
        # where the duty is known (full throttle, or a trusted mapping) the ESC losses use it, else V_m / V_bus
        duty = np.where(self.known_duty, self.duty, motor_voltage / self.v)
        extra = esc_model.extra_loss_w(self.v, duty, current, r - esc.on_path_resistance_ohm, self.inductance, esc)
        return _State(kv, r, torque, current, motor_voltage, duty, motor_voltage * current + extra, esc)

    def cp_columns(self, k: int) -> list[int]:
        return [self.index(f"{self.prop_ids[k]}:cp[{j}]") for j in range(self.knots[k].size)]

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

    def jacobian(self, x: FloatArray) -> FloatArray:
        """The residuals' derivatives by the free parameters, in closed form (dense, rows as :meth:`residuals`).

        With ``u = 1 - d``, ``M = d V`` and ``rho = ripple_s2 / L^2`` the partial-throttle loss is
        ``P_extra = r rho M^2 u^2 + sw V I + dt I + ESR I^2 d u + k_pwm I M u`` below full throttle (0 at d = 1,
        :func:`..esc.loss_terms`); where the duty is not known, ``d = V_m / V`` moves with the motor state.
        ``tests/physics/test_calibrate.py`` holds it to finite differences.
        """
        full = self.values(x)
        st = self._state(full)
        free = [k for k, q in enumerate(self.params) if q.free]
        col = {k: c for c, k in enumerate(free)}
        n, v, i, current, vm, r = self.rpm.size, self.v, self.i, st.current, st.motor_voltage, st.r
        constants = esc_model.EscConstants.of(st.esc)
        rho = constants.ripple_s2 / self.inductance**2
        sw, dt, esr, k_pwm = (constants.switching_per_v_a, constants.dead_time_v, constants.input_esr_ohm,
                              float(st.esc.pwm_loss_coefficient))
        known = self.known_duty
        has_q = np.isfinite(self.torque)
        priors = [k for k in free if self.params[k].prior is not None and math.isfinite(self.params[k].prior_sigma)]
        jac = np.zeros((n + int(known.sum()) + int(has_q.sum()) + len(priors), len(free)))
        # power rows: dP = A dV_m + B dI + dE/dr dr + dE/dk dk
        d = np.clip(st.duty, 0.0, 1.0)
        u, m_v, chop = 1.0 - d, d * v, (st.duty < 1.0).astype(np.float64)
        de_dd = chop * (r * rho * (2.0 * m_v * v * u * u - 2.0 * m_v * m_v * u) + esr * current**2 * (u - d)
                        + k_pwm * current * (v * u - m_v))
        dd_dvm = np.where(~known & (st.duty > 0.0) & (st.duty < 1.0), 1.0 / v, 0.0)
        a = current + de_dd * dd_dvm
        b = vm + chop * (sw * v + dt + 2.0 * esr * current * d * u + k_pwm * m_v * u)
        de_dr = chop * rho * m_v * m_v * u * u
        scale = 1.0 / (POWER_SIGMA[0] * v * i + POWER_SIGMA[1])
        # full-throttle (known-duty) voltage rows: (Omega/Kv + I_m r - d V) / sigma_V with I_m from the measurement
        dk, vk, ik = self.duty[known], v[known], i[known]
        uk, mk, chop_k = 1.0 - dk, dk * vk, (dk < 1.0).astype(np.float64)
        im = ik / dk
        rk = r[known]
        extra_k = chop_k * (rk * rho[known] * mk * mk * uk * uk + sw * im * vk + dt * im + esr * im * im * dk * uk
                            + k_pwm * im * mk * uk)
        mc = (vk * ik - extra_k) / (dk * vk)
        dvolt_dr = (mc - rk * chop_k * rho[known] * mk * mk * uk * uk / (dk * vk)) / VOLTAGE_SIGMA_V
        rows_k = slice(n, n + int(known.sum()))
        rows_q = slice(rows_k.stop, rows_k.stop + int(has_q.sum()))
        kv_scale = (self.omega / st.kv**2) * RAD_S_PER_RPM  # -dE/dKv_rpm of the back EMF per unit speed
        for mk_, mid in enumerate(self.motor_ids):
            on = (self.m == mk_).astype(np.float64)
            tau = st.torque
            for attr, power_term, volt_term in (
                ("kv_rpm_per_v", a * (-kv_scale + r * RAD_S_PER_RPM * tau) + b * RAD_S_PER_RPM * tau,
                 -kv_scale[known] / VOLTAGE_SIGMA_V),
                ("resistance_ohm", a * current + de_dr, dvolt_dr),
                ("no_load_current_a", a * r + b, np.zeros(int(known.sum()))),
            ):
                c = col.get(self.index(f"{mid}:{attr}"))
                if c is not None:
                    jac[:n, c] = on * power_term * scale
                    jac[rows_k, c] = on[known] * volt_term
        for kp, (sel, basis) in self.basis.items():
            dp_dcp = ((a * r + b) * st.kv * self.torque_scale * scale)[sel]
            q_sel = has_q[sel]
            sigma_q = TORQUE_SIGMA[0] * np.abs(self.torque[sel]) + TORQUE_SIGMA[1]
            q_rows = np.flatnonzero(has_q)
            for j, k in enumerate(self.cp_columns(kp)):
                c = col.get(k)
                if c is not None:
                    jac[sel, c] = dp_dcp * basis[:, j]
                    dq = np.zeros(n)
                    dq[sel] = np.where(q_sel, self.torque_scale[sel] * basis[:, j] / sigma_q, 0.0)
                    jac[rows_q, c] = dq[q_rows]
        c = col.get(self.index("esc:pwm_loss_coefficient"))
        if c is not None:
            jac[:n, c] = chop * current * m_v * u * scale
            jac[rows_k, c] = -rk * chop_k * im * mk * uk / (dk * vk) / VOLTAGE_SIGMA_V
        c = col.get(self.index("esc:on_path_resistance_ohm"))
        if c is not None:
            w = self.winding_only[self.m]
            jac[:n, c] = w * (a * current + de_dr) * scale
            jac[rows_k, c] = w[known] * dvolt_dr
        for row, k in enumerate(priors, start=rows_q.stop):
            jac[row, col[k]] = 1.0 / self.params[k].prior_sigma
        return jac

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

    def solve(self, method: str = "analytic") -> tuple[FloatArray, FloatArray, FloatArray]:
        """Least squares over the free parameters: (values, Jacobian at the solution, residuals).

        ``"analytic"``: the closed-form :meth:`jacobian` and the exact trust-region solver (a few iterations of an
        SVD of the parameters' width); ``"reference"``: the sparse finite-difference Jacobian with the iterative
        solver the fit used first (many more, cheaper iterations; kept for the tests that compare the two).
        """
        free = [q for q in self.params if q.free]
        x0 = np.array([min(max(q.value, q.lower), q.upper) for q in free])
        bounds = (np.array([q.lower for q in free]), np.array([q.upper for q in free]))
        if method == "analytic":
            sol = least_squares(self.residuals, x0, jac=self.jacobian, bounds=bounds, x_scale="jac", method="trf",
                                tr_solver="exact")
        elif method == "reference":
            # the sparsity pattern makes finite differences cheap for pooled fits; tiny problems go dense
            sparsity = self.sparsity() if x0.size > 5 else None
            sol = least_squares(self.residuals, x0, bounds=bounds, jac_sparsity=sparsity, x_scale="jac",
                                method="trf")
        else:
            raise ValueError(f"unknown solve method {method!r}")
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
