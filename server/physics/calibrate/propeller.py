"""Static propeller fit: CT (and, with torque, CP) versus rpm as the table the model interpolates."""

from __future__ import annotations

import math

import numpy as np
import scipy.linalg

from .._types import ArrayLike, FloatArray, as_float_array
from ._common import THRUST_SIGMA_RELATIVE, TORQUE_SIGMA, FittedParameter, PropellerFit, _linear_fit


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
    ct, ct_se, _, ct_cov = _linear_fit(basis * t_scale[:, None], thrust, THRUST_SIGMA_RELATIVE * np.abs(thrust)
                                       + floor)
    params = {f"ct[{k}]": FittedParameter(float(ct[k]), float(ct_se[k]), "identified", "-")
              for k in range(knots.size)}
    cp = np.full(knots.size, np.nan)
    names = [f"ct[{k}]" for k in range(knots.size)]
    blocks = [ct_cov]
    notes = [f"{knots.size} rpm knots between {knots[0]:.0f} and {knots[-1]:.0f} rpm"]
    if torque_nm is not None:
        torque = as_float_array(torque_nm).ravel()
        q_scale = rho * n**2 * diameter_m**5 / (2.0 * math.pi)
        sigma = TORQUE_SIGMA[0] * np.abs(torque) + max(TORQUE_SIGMA[1], 0.02 * float(np.max(np.abs(torque))))
        cp, cp_se, _, cp_cov = _linear_fit(basis * q_scale[:, None], torque, sigma)
        names += [f"cp[{k}]" for k in range(knots.size)]
        blocks.append(cp_cov)
        params |= {f"cp[{k}]": FittedParameter(float(cp[k]), float(cp_se[k]), "identified", "-")
                   for k in range(knots.size)}
    else:
        notes.append("no torque: CP not fitted here (fit it jointly with the motor from electrical power)")
    predicted = (basis @ ct) * t_scale
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(thrust > 0.0, predicted / thrust - 1.0, np.nan)
    return PropellerFit(parameters=params, residual_rms=float(np.sqrt(np.nanmean(rel**2))),
                        samples_used=int(speed.size), notes=tuple(notes), diameter_m=float(diameter_m),
                        rpm=knots, thrust_coefficient=ct, power_coefficient=cp,
                        covariance=(tuple(names), scipy.linalg.block_diag(*blocks)))
