"""Mission sizing rules: weight, thrust-to-weight, hover fraction, fixed-wing thrust, ESC margins.

These are common-practice rules (docs/model-reference.md#sizing-rules, [CP], no source) except the steady-flight
equations, which are standard flight mechanics (J. D. Anderson, *Aircraft Performance and Design*, McGraw-Hill, 1999).
Defaults here are what the UI shows as "rule of thumb"; users override them per airframe.
"""

from __future__ import annotations

import numpy as np

from ._types import STANDARD_GRAVITY_M_S2, ArrayLike, FloatArray, as_float_array

DEFAULT_THRUST_TO_WEIGHT = 2.0  # [CP] camera / survey / utility multirotors
ESC_CURRENT_MARGIN_RANGE = (1.2, 1.3)  # [CP] ESC continuous rating over the d = 1 motor current


def all_up_mass_kg(base_mass_kg: ArrayLike, packs_in_parallel: ArrayLike, pack_mass_kg: ArrayLike,
                   rotor_count: ArrayLike, esc_mass_kg: ArrayLike, motor_mass_kg: ArrayLike,
                   propeller_mass_kg: ArrayLike) -> FloatArray:
    """All-up mass ``frame + payload + k pack + N (ESC + motor + propeller)``. [kg]

    ``base_mass_kg`` is the frame without propulsion and packs plus the payload; one ESC, motor and
    propeller per rotor; ``k`` identical packs in parallel.
    """
    k = as_float_array(packs_in_parallel)
    per_rotor = as_float_array(esc_mass_kg) + (as_float_array(motor_mass_kg) + as_float_array(propeller_mass_kg))
    return (as_float_array(base_mass_kg) + k * as_float_array(pack_mass_kg)) + as_float_array(rotor_count) * per_rotor


def thrust_per_rotor_n(mass_kg: ArrayLike, rotor_count: ArrayLike, thrust_per_weight: ArrayLike = 1.0) -> FloatArray:
    """Thrust each rotor makes at the cruise point: ``m g0 (T/W) / N``. [N]

    ``thrust_per_weight`` is 1 in hover and ``1 / (L/D)`` in steady level fixed-wing cruise (Anderson 1999).
    """
    return as_float_array(mass_kg) * (STANDARD_GRAVITY_M_S2 * as_float_array(thrust_per_weight)
                                      / as_float_array(rotor_count))


def system_cost(packs_in_parallel: ArrayLike, pack_cost: ArrayLike, rotor_count: ArrayLike, esc_cost: ArrayLike,
                motor_cost: ArrayLike, propeller_cost: ArrayLike) -> FloatArray:
    """Cost of one power system ``k pack + N (ESC + motor + propeller)``; NaN when a price is unknown. [currency]"""
    per_rotor = as_float_array(esc_cost) + as_float_array(motor_cost) + as_float_array(propeller_cost)
    return as_float_array(packs_in_parallel) * as_float_array(pack_cost) + as_float_array(rotor_count) * per_rotor


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
