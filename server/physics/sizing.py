"""Mission sizing rules: weight, thrust-to-weight, hover fraction, fixed-wing thrust, ESC margins.

These are common-practice rules (physics.md §7, [CP], no source) except the steady-flight equations, which
are standard flight mechanics (J. D. Anderson, *Aircraft Performance and Design*, McGraw-Hill, 1999).
Defaults here are what the UI shows as "rule of thumb"; users override them per airframe.
"""

from __future__ import annotations

import numpy as np

from ._types import STANDARD_GRAVITY_M_S2, ArrayLike, FloatArray, as_float_array

DEFAULT_THRUST_TO_WEIGHT = 2.0  # [CP] camera / survey / utility multirotors
ESC_CURRENT_MARGIN_RANGE = (1.2, 1.3)  # [CP] ESC continuous rating over the d = 1 motor current


def weight_n(mass_kg: ArrayLike) -> FloatArray:
    """Weight ``m g0``. [N]"""
    return as_float_array(mass_kg) * STANDARD_GRAVITY_M_S2


def required_max_thrust_per_rotor_n(mass_kg: ArrayLike, rotor_count: ArrayLike,
                                    thrust_to_weight: ArrayLike = DEFAULT_THRUST_TO_WEIGHT) -> FloatArray:
    """Full-throttle thrust each rotor needs for a thrust-to-weight floor [CP]. [N]"""
    return weight_n(mass_kg) * as_float_array(thrust_to_weight) / as_float_array(rotor_count)


def hover_thrust_per_rotor_n(mass_kg: ArrayLike, rotor_count: ArrayLike) -> FloatArray:
    """Hover thrust per rotor ``m g0 / N``. [N]"""
    return weight_n(mass_kg) / as_float_array(rotor_count)


def thrust_to_weight(total_thrust_n: ArrayLike, mass_kg: ArrayLike) -> FloatArray:
    """Thrust-to-weight ratio ``T / (m g0)``. [-]"""
    return as_float_array(total_thrust_n) / weight_n(mass_kg)


def hover_thrust_fraction(thrust_to_weight_: ArrayLike) -> FloatArray:
    """Hover thrust as a fraction of full-throttle thrust ``1 / (T/W)``. [-]"""
    return 1.0 / as_float_array(thrust_to_weight_)


def fixed_wing_cruise_thrust_n(weight_n_: ArrayLike, lift_to_drag: ArrayLike) -> FloatArray:
    """Steady level cruise ``T = D = W / (L/D)`` (Anderson 1999). [N]"""
    return as_float_array(weight_n_) / as_float_array(lift_to_drag)


def fixed_wing_climb_thrust_n(weight_n_: ArrayLike, lift_to_drag: ArrayLike, climb_rate_m_s: ArrayLike,
                              airspeed_m_s: ArrayLike, *, small_angle: bool = False) -> FloatArray:
    """Steady climb ``T = W (cos γ / (L/D) + sin γ)``, ``sin γ = ROC / V`` (Anderson 1999). [N]

    With ``small_angle`` the approximation ``W (1/(L/D) + ROC/V)`` is returned.
    """
    sin_gamma = as_float_array(climb_rate_m_s) / as_float_array(airspeed_m_s)
    cos_gamma = np.ones_like(sin_gamma) if small_angle else np.sqrt(1.0 - sin_gamma**2)
    return as_float_array(weight_n_) * (cos_gamma / as_float_array(lift_to_drag) + sin_gamma)


def propulsive_shaft_power_w(thrust_n: ArrayLike, airspeed_m_s: ArrayLike,
                             propeller_efficiency: ArrayLike) -> FloatArray:
    """Shaft power for thrust T at airspeed V ``P = T V / eta_p``. [W]"""
    return as_float_array(thrust_n) * as_float_array(airspeed_m_s) / as_float_array(propeller_efficiency)


def esc_current_rating_a(max_motor_current_a: ArrayLike, margin: ArrayLike = ESC_CURRENT_MARGIN_RANGE[0]) -> FloatArray:
    """ESC continuous rating to look for: margin (1.2-1.3 [CP]) times the full-throttle motor current. [A]"""
    return as_float_array(margin) * as_float_array(max_motor_current_a)
