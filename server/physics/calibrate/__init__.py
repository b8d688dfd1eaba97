"""Calibration: fit the reference model's parameters to measured bench runs (docs/model-reference.md#calibration).

Measured data wins over defaults: the fitted values replace the datasheet/default values of the motor
(Kv, line-to-line R including the ESC conduction path, I0), the ESC (the calibrated partial-throttle
coefficient ``k_pwm`` of ``P_pwm = k_pwm V_bus I d (1 - d)``) and the propeller (static CT and CP versus rpm).

The model fitted is exactly the one :func:`~.drive.for_thrust` evaluates (averaged switch plus every
partial-throttle term of docs/model-reference.md#esc), per sample at the measured shaft speed and bus voltage:

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

from ._common import (
    DATASHEET_RELATIVE_SIGMA,
    KV_PRIOR_RELATIVE_SIGMA,
    MAX_RELATIVE_STANDARD_ERROR,
    POOL_SAMPLE_LIMIT,
    EscFit,
    FitReport,
    FittedParameter,
    JointFit,
    MotorFit,
    MotorPrior,
    PropellerFit,
    RunData,
    thinned,
)
from .drive import fit_esc, fit_joint, fit_motor
from .propeller import fit_propeller_static

__all__ = [
    "DATASHEET_RELATIVE_SIGMA", "KV_PRIOR_RELATIVE_SIGMA", "MAX_RELATIVE_STANDARD_ERROR", "POOL_SAMPLE_LIMIT",
    "EscFit", "FitReport", "FittedParameter", "JointFit", "MotorFit", "MotorPrior", "PropellerFit", "RunData",
    "fit_esc", "fit_joint", "fit_motor", "fit_propeller_static", "thinned",
]
