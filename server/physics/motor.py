"""Brushless DC motor: Drela's first-order model (Kv, line-to-line R, no-load current I0).

``E = Ω / Kv``, ``I = (V_m - E) / R``, ``Q = (I - I0) / Kv`` (Kq = 1/Kv in SI), ``P_shaft = Q Ω``.
Kv arrives in the catalogue unit rpm/V and is converted once (a missed 2π/60 is a 9.55x torque error).
R is the resistance between two motor leads, because two phases conduct in series in 6-step drive.

References
----------
.. [1] M. Drela, "First-Order DC Electric Motor Model", MIT Aero & Astro, 2007.
.. [2] R. Krishnan, *Permanent Magnet Synchronous and Brushless DC Motor Drives*, CRC Press, 2010
   (line-to-line equivalence of 6-step drives).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._types import (
    COPPER_TEMPERATURE_COEFFICIENT_PER_K,
    RAD_S_PER_RPM,
    ArrayLike,
    FloatArray,
    as_float_array,
)

DEFAULT_INDUCTANCE_H = 30e-6
"""Line-to-line inductance used when a motor does not state one (docs/model-reference.md#reference-model-v1)."""


@dataclass(frozen=True)
class MotorParams:
    """Parameters of the first-order motor model; every field broadcasts over candidates.

    Parameters
    ----------
    kv_rpm_per_v : array_like
        Speed constant in the catalogue unit. [rpm/V]
    resistance_ohm : array_like
        Line-to-line winding resistance. [Ω]
    no_load_current_a : array_like
        No-load current I0 (iron, friction and windage lumped), constant. [A]
    inductance_h : array_like, default 30e-6
        Line-to-line inductance; sets the PWM current ripple. [H]
    max_current_a : array_like, default inf
        Rated maximum current; exceeding it flags ``Status.OVER_CURRENT``. [A]
    """

    kv_rpm_per_v: FloatArray
    resistance_ohm: FloatArray
    no_load_current_a: FloatArray
    # Defaults are plain floats (the ignores): __post_init__ turns every field into a float64 array.
    inductance_h: FloatArray = DEFAULT_INDUCTANCE_H  # type: ignore[assignment]
    max_current_a: FloatArray = np.inf  # type: ignore[assignment]

    def __post_init__(self) -> None:
        for name in ("kv_rpm_per_v", "resistance_ohm", "no_load_current_a", "inductance_h", "max_current_a"):
            object.__setattr__(self, name, as_float_array(getattr(self, name)))

    @property
    def kv_rad_s_per_v(self) -> FloatArray:
        """Speed constant in SI. [(rad/s)/V]"""
        return kv_rad_s_per_v(self.kv_rpm_per_v)

    @property
    def torque_constant_nm_per_a(self) -> FloatArray:
        """Torque constant ``Kt = 1 / Kv_SI``. [N m/A]"""
        return torque_constant_nm_per_a(self.kv_rpm_per_v)


def kv_rad_s_per_v(kv_rpm_per_v: ArrayLike) -> FloatArray:
    """Convert Kv from rpm/V to SI ``Kv_SI = Kv_rpm 2 pi / 60``. [(rad/s)/V]"""
    return as_float_array(kv_rpm_per_v) * RAD_S_PER_RPM


def torque_constant_nm_per_a(kv_rpm_per_v: ArrayLike) -> FloatArray:
    """Torque constant ``Kt = Kq = 1 / Kv_SI`` (numerically 9.5493 / Kv_rpm). [N m/A]"""
    return 1.0 / kv_rad_s_per_v(kv_rpm_per_v)


def back_emf_v(omega_rad_s: ArrayLike, kv_rpm_per_v: ArrayLike) -> FloatArray:
    """Back-EMF ``E = Ω / Kv_SI``. [V]"""
    return as_float_array(omega_rad_s) / kv_rad_s_per_v(kv_rpm_per_v)


def current_a(motor_voltage_v: ArrayLike, omega_rad_s: ArrayLike, kv_rpm_per_v: ArrayLike,
              resistance_ohm: ArrayLike) -> FloatArray:
    """Motor current ``I = (V_m - E) / R`` at terminal voltage V_m and speed Ω. [A]"""
    return (as_float_array(motor_voltage_v) - back_emf_v(omega_rad_s, kv_rpm_per_v)) / as_float_array(
        resistance_ohm)


def torque_nm(current_a_: ArrayLike, no_load_current_a: ArrayLike, kv_rpm_per_v: ArrayLike) -> FloatArray:
    """Shaft torque ``Q = Kt (I - I0)``. [N m]"""
    return torque_constant_nm_per_a(kv_rpm_per_v) * (as_float_array(current_a_) - as_float_array(no_load_current_a))


def current_for_torque_a(torque_nm_: ArrayLike, no_load_current_a: ArrayLike, kv_rpm_per_v: ArrayLike) -> FloatArray:
    """Current that gives shaft torque Q: ``I = I0 + Q Kv_SI``. [A]"""
    return as_float_array(no_load_current_a) + as_float_array(torque_nm_) * kv_rad_s_per_v(kv_rpm_per_v)


def shaft_power_w(current_a_: ArrayLike, motor_voltage_v: ArrayLike, no_load_current_a: ArrayLike,
                  resistance_ohm: ArrayLike) -> FloatArray:
    """Shaft power ``P = (I - I0)(V_m - I R)``. [W]"""
    i = as_float_array(current_a_)
    return (i - as_float_array(no_load_current_a)) * (as_float_array(motor_voltage_v) - i * as_float_array(
        resistance_ohm))


def efficiency(current_a_: ArrayLike, motor_voltage_v: ArrayLike, no_load_current_a: ArrayLike,
               resistance_ohm: ArrayLike) -> FloatArray:
    """Motor efficiency ``eta = (1 - I0/I)(1 - I R / V_m)``. [-]"""
    i = as_float_array(current_a_)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (1.0 - as_float_array(no_load_current_a) / i) * (
            1.0 - i * as_float_array(resistance_ohm) / as_float_array(motor_voltage_v))


def max_efficiency_current_a(motor_voltage_v: ArrayLike, no_load_current_a: ArrayLike,
                             resistance_ohm: ArrayLike) -> FloatArray:
    """Current of peak efficiency at fixed V_m ``I* = sqrt(I0 V_m / R)``. [A]"""
    return np.sqrt(as_float_array(no_load_current_a) * as_float_array(motor_voltage_v) / as_float_array(
        resistance_ohm))


def max_efficiency(motor_voltage_v: ArrayLike, no_load_current_a: ArrayLike, resistance_ohm: ArrayLike) -> FloatArray:
    """Peak efficiency at fixed V_m ``eta_max = (1 - sqrt(I0 R / V_m))^2``. [-]"""
    ratio = as_float_array(no_load_current_a) * as_float_array(resistance_ohm) / as_float_array(motor_voltage_v)
    return (1.0 - np.sqrt(ratio)) ** 2


def speed_rad_s(motor_voltage_v: ArrayLike, current_a_: ArrayLike, kv_rpm_per_v: ArrayLike,
                resistance_ohm: ArrayLike) -> FloatArray:
    """Speed at terminal voltage V_m and current I ``Ω = Kv_SI (V_m - I R)``. [rad/s]"""
    return kv_rad_s_per_v(kv_rpm_per_v) * (as_float_array(motor_voltage_v) - as_float_array(current_a_)
                                           * as_float_array(resistance_ohm))


def no_load_speed_rad_s(motor_voltage_v: ArrayLike, kv_rpm_per_v: ArrayLike, no_load_current_a: ArrayLike,
                        resistance_ohm: ArrayLike) -> FloatArray:
    """No-load speed ``Ω0 = Kv_SI (V_m - I0 R)``. [rad/s]"""
    return speed_rad_s(motor_voltage_v, no_load_current_a, kv_rpm_per_v, resistance_ohm)


def stall_current_a(motor_voltage_v: ArrayLike, resistance_ohm: ArrayLike) -> FloatArray:
    """Stall current ``V_m / R``. [A]"""
    return as_float_array(motor_voltage_v) / as_float_array(resistance_ohm)


def resistance_at_temperature_ohm(resistance_20c_ohm: ArrayLike, temperature_c: ArrayLike,
                                  coefficient_per_k: ArrayLike = COPPER_TEMPERATURE_COEFFICIENT_PER_K) -> FloatArray:
    """Copper winding resistance at temperature ``R(T) = R20 [1 + alpha (T - 20 °C)]``.

    Parameters
    ----------
    resistance_20c_ohm : array_like
        Resistance at 20 °C. [Ω]
    temperature_c : array_like
        Winding temperature. [°C]
    coefficient_per_k : array_like, default 0.00393
        Temperature coefficient of standard annealed copper at 20 °C (Agrawal's handbook; see
        docs/model-reference.md#heat). [1/K]

    Returns
    -------
    ndarray
        Hot resistance. [Ω]
    """
    return as_float_array(resistance_20c_ohm) * (
        1.0 + as_float_array(coefficient_per_k) * (as_float_array(temperature_c) - 20.0))


def fit_first_order(motor_voltage_v: ArrayLike, current_a_: ArrayLike,
                    omega_rad_s: ArrayLike) -> tuple[float, float]:
    """Least-squares Kv and R from bench points of ``V_m = Ω / Kv_SI + R I``.

    Parameters
    ----------
    motor_voltage_v, current_a_, omega_rad_s : array_like
        1-D sweeps: average motor voltage [V], motor current [A], speed [rad/s].

    Returns
    -------
    kv_rpm_per_v, resistance_ohm : float
        Fitted speed constant [rpm/V] and line-to-line resistance [Ω].
    """
    omega = as_float_array(omega_rad_s).ravel()
    design = np.column_stack([omega, as_float_array(current_a_).ravel()])
    (inv_kv_si, resistance), *_ = np.linalg.lstsq(design, as_float_array(motor_voltage_v).ravel(), rcond=None)
    return float(1.0 / (inv_kv_si * RAD_S_PER_RPM)), float(resistance)
