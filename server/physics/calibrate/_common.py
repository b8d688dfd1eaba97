"""What every fit shares: result types, run data, priors, noise scales and standard errors."""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from scipy.optimize import least_squares

from .._types import FloatArray, as_float_array
from ..esc import EscParams
from ..motor import DEFAULT_INDUCTANCE_H, MotorParams
from ..priors import STATED_RELATIVE_SD
from ..propeller import PropellerTable

MAX_RELATIVE_STANDARD_ERROR = 0.3
"""A parameter whose data-only standard error exceeds this fraction of its value is not identified."""
KV_PRIOR_RELATIVE_SIGMA = STATED_RELATIVE_SD["kv_rpm_per_v"]
"""Spread of the Kv label around the true Kv (labels are nominal). [-]"""
DATASHEET_RELATIVE_SIGMA = STATED_RELATIVE_SD["winding_resistance_ohm"]
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
    covariance: tuple[tuple[str, ...], FloatArray] | None = None
    """(names, matrix): covariance of the identified parameters named (units of the parameters); None when the
    fit gives none. Fixed parameters are not in it."""

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


POOL_SAMPLE_LIMIT = 50_000
"""About the most samples one pooled fit uses (a bound on a refit's cost: ~1 s here, ``benchmarks/refit.py``)."""


def thinned(runs: list[RunData], limit: int = POOL_SAMPLE_LIMIT) -> tuple[list[RunData], int]:
    """The runs with every k-th sample kept, k the smallest stride that brings the pool to about ``limit`` samples,
    and k (1: the runs unchanged).

    Each run keeps its first sample, every k-th after it (a throttle sweep keeps its range) and every sample at
    full throttle (the samples that enter the voltage equation), so the pool's information is thinned evenly; the
    standard errors are those of the thinned pool (larger than the whole pool's would be).
    """
    total = sum(int(run.rpm.size) for run in runs)
    stride = max(1, math.ceil(total / limit))
    if stride == 1:
        return list(runs), 1
    out = []
    for run in runs:
        keep = np.zeros(run.rpm.size, dtype=bool)
        keep[::stride] = True
        keep |= run.duty >= 1.0
        out.append(replace(run, bus_voltage_v=run.bus_voltage_v[keep], bus_current_a=run.bus_current_a[keep],
                           rpm=run.rpm[keep], thrust_n=run.thrust_n[keep], throttle=run.throttle[keep],
                           torque_nm=None if run.torque_nm is None else run.torque_nm[keep]))
    return out, stride


@dataclass(frozen=True)
class MotorPrior:
    """Datasheet values (None = unknown); Kv is usually the label."""

    kv_rpm_per_v: float | None = None
    resistance_ohm: float | None = None
    no_load_current_a: float | None = None



# --- least squares ---------------------------------------------------------------------------------------

def _linear_fit(design: FloatArray, target: FloatArray,
                sigma: FloatArray) -> tuple[FloatArray, FloatArray, float, FloatArray]:
    """Weighted linear least squares: (coefficients, standard errors, RMS of the weighted residual, covariance)."""
    a, b = design / sigma[:, None], target / sigma

    def residual(c: FloatArray) -> FloatArray:
        return a @ c - b

    start = np.linalg.lstsq(a, b, rcond=None)[0]
    sol = least_squares(residual, start, jac=lambda c: a, method="lm")
    se, cov = _covariance(sol.jac, sol.fun, a.shape[1])
    return sol.x, se, float(np.sqrt(np.mean(sol.fun**2))), cov


def _standard_errors(jac: FloatArray, resid: FloatArray, p: int, groups: np.ndarray | None = None) -> FloatArray:
    """``sqrt(diag(s^2 (J^T J)^+))``, ``s^2 = SS/(m - p)``; infinite for parameters in the null space of J."""
    return _covariance(jac, resid, p, groups)[0]


def _covariance(jac: FloatArray, resid: FloatArray, p: int,
                groups: np.ndarray | None = None) -> tuple[FloatArray, FloatArray]:
    """Standard errors and the covariance ``s^2 (J^T J)^+`` of least-squares parameters (units of the parameters).

    Standard errors are infinite for parameters in the null space of J (their covariance rows are then
    meaningless: callers fix such parameters).

    With ``groups`` (a label per residual row), each kind of residual gets its own ``s_g^2`` (same
    ``m/(m - p)`` correction) and the covariance is ``A^+ (sum_g s_g^2 J_g^T J_g) A^+`` with ``A = J^T J``,
    which reduces to ``s^2 A^+`` when every group scatters alike.
    """
    j = np.asarray(jac, dtype=np.float64)
    m = resid.size
    s2 = float(resid @ resid) / max(m - p, 1)
    if j.size == 0:
        return np.full(j.shape[1], np.inf), np.full((j.shape[1], j.shape[1]), np.nan)
    # column-normalise so that the rank test does not depend on the parameters' units
    norms = np.linalg.norm(j, axis=0)
    scaled = j / np.where(norms > 0.0, norms, 1.0)
    # Only V is needed (its rows beyond the rank span the null space): the thin SVD has all of V whenever J has at
    # least as many rows as columns, without the m x m U of the full one (seconds for a pooled fit's 10^4 rows).
    _, sv, vt = np.linalg.svd(scaled, full_matrices=j.shape[0] < j.shape[1])
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
    return np.asarray(np.where(unidentified, np.inf, se), dtype=np.float64), np.asarray(cov, dtype=np.float64)
