"""Motor winding temperature (one thermal resistance and one time constant) and the pack's cold-temperature factor.

Winding: one lumped node, heat capacity ``C = tau / R_th``, losing heat to the air through ``R_th``:

    C dT/dt = P(T) - (T - T_air) / R_th,   P(T) = I^2 R(T) + I0 E,   R(T) = R20 [1 + alpha (T - 20 °C)]

At a fixed current I (the cruise point: the thrust fixes speed, torque and so I = I0 + Kv Q, whatever R is) the
loss is linear in T, so the steady state and the response to a step are closed forms
(docs/model-reference.md#heat):

    T_ss = (T_air + R_th [I^2 R20 (1 - 20 alpha) + I0 E]) / (1 - R_th I^2 R20 alpha)
    T(t) = T0 + (Q0 R_th / tau) (1 - exp(-s t)) / s,   s = (1 - R_th I^2 R20 alpha) / tau,
           Q0 = P(T0) - (T0 - T_air) / R_th (net heat flow at the start)

``1 - R_th I^2 R20 alpha <= 0`` is thermal runaway: the copper loss rises faster with temperature than the air
carries away, and there is no steady state.

Pack: the cell's DC resistance follows an Arrhenius law relative to the temperature its stated value holds at,
``r(T) = r_ref exp(Ea / R_gas (1/T - 1/T_ref))`` with the activation energy of the electrolyte's conductivity
(docs/model-reference.md#cold).

References
----------
.. [1] K. C. Agrawal, *Industrial Power Engineering and Applications Handbook*, Newnes, 2001, table of conductor
   properties: temperature coefficient of resistance of standard (IACS) annealed copper 3.93e-3 /°C at 20 °C.
.. [2] M. Ecker et al., "Parameterization of a Physico-Chemical Model of a Lithium-Ion Battery I. Determination
   of Parameters", J. Electrochem. Soc. 162(9) A1836-A1848, 2015 (electrolyte conductivity activation energy
   17.1 kJ/mol, as carried by the PyBaMM parameter set ``Ecker2015``).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from ._types import (
    CELSIUS_TO_KELVIN_K,
    COPPER_TEMPERATURE_COEFFICIENT_PER_K,
    ArrayLike,
    FloatArray,
    as_float_array,
)

COPPER_REFERENCE_TEMPERATURE_C = 20.0
"""Temperature a motor's stated (or calibrated) winding resistance is taken at. [°C]"""
MOLAR_GAS_CONSTANT_J_PER_MOL_K = 8.314462618
"""CODATA 2018 (exact since the 2019 SI). [J/(mol K)]"""
ELECTROLYTE_ACTIVATION_ENERGY_J_PER_MOL = 17_100.0
"""Arrhenius activation energy of the electrolyte conductivity (LiPF6 in EC:DMC), Ecker et al. 2015 [2]. [J/mol]"""
PACK_REFERENCE_TEMPERATURE_C = 25.0
"""Temperature a pack's stated cell resistance is taken at (datasheet test temperature, common practice, no
source). [°C]"""


def winding_loss_w(current_a: ArrayLike, resistance_ohm: ArrayLike, no_load_current_a: ArrayLike,
                   back_emf_v: ArrayLike) -> FloatArray:
    """Heat made in the motor ``P = I^2 R + I0 E`` (copper at resistance R, plus the no-load loss). [W]"""
    i = as_float_array(current_a)
    return i * i * as_float_array(resistance_ohm) + as_float_array(no_load_current_a) * as_float_array(back_emf_v)


def _linear_loss(current_a: ArrayLike, resistance_20c_ohm: ArrayLike, no_load_loss_w: ArrayLike,
                 coefficient_per_k: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """``P(T) = a + b T`` at a fixed current: intercept a [W] and slope b [W/K]."""
    i = as_float_array(current_a)
    copper_20 = i * i * as_float_array(resistance_20c_ohm)
    alpha = as_float_array(coefficient_per_k)
    slope = copper_20 * alpha
    return copper_20 * (1.0 - alpha * COPPER_REFERENCE_TEMPERATURE_C) + as_float_array(no_load_loss_w), slope


def steady_winding_temperature_c(air_temperature_c: ArrayLike, current_a: ArrayLike, resistance_20c_ohm: ArrayLike,
                                 no_load_loss_w: ArrayLike, thermal_resistance_k_per_w: ArrayLike,
                                 coefficient_per_k: ArrayLike = COPPER_TEMPERATURE_COEFFICIENT_PER_K
                                 ) -> tuple[FloatArray, npt.NDArray[np.bool_]]:
    """Steady winding temperature at a fixed motor current, copper resistance rising with temperature.

    Parameters
    ----------
    air_temperature_c : array_like
        Cooling air temperature. [°C]
    current_a : array_like
        Motor current (fixed by the thrust at a cruise point). [A]
    resistance_20c_ohm : array_like
        Line-to-line winding resistance at 20 °C. [Ω]
    no_load_loss_w : array_like
        ``I0 E``, iron, friction and windage. [W]
    thermal_resistance_k_per_w : array_like
        Winding-to-air thermal resistance. [K/W]
    coefficient_per_k : array_like, default 0.00393
        Copper temperature coefficient at 20 °C [1]. [1/K]

    Returns
    -------
    temperature_c : ndarray
        Steady winding temperature (NaN on runaway). [°C]
    runaway : ndarray of bool
        No steady state: ``R_th I^2 R20 alpha >= 1``.
    """
    intercept, slope = _linear_loss(current_a, resistance_20c_ohm, no_load_loss_w, coefficient_per_k)
    r_th = as_float_array(thermal_resistance_k_per_w)
    margin = 1.0 - r_th * slope
    runaway = np.asarray(margin <= 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        temperature = (as_float_array(air_temperature_c) + r_th * intercept) / margin
    return np.where(runaway, np.nan, temperature), runaway


def winding_temperature_after_c(start_c: ArrayLike, duration_s: ArrayLike, air_temperature_c: ArrayLike,
                                current_a: ArrayLike, resistance_20c_ohm: ArrayLike, no_load_loss_w: ArrayLike,
                                thermal_resistance_k_per_w: ArrayLike, time_constant_s: ArrayLike,
                                coefficient_per_k: ArrayLike = COPPER_TEMPERATURE_COEFFICIENT_PER_K) -> FloatArray:
    """Winding temperature after ``duration_s`` at a fixed current, from ``start_c`` (first-order response).

    Exact for the linear loss ``P(T) = a + b T`` (module docstring), runaway included (``s < 0`` grows
    exponentially). A burst at full throttle is evaluated at its starting current, the highest of the burst
    (the current falls as the winding heats), so the result is an upper bound.

    Parameters
    ----------
    start_c : array_like
        Winding temperature at the start. [°C]
    duration_s : array_like
        Time at this current. [s]
    time_constant_s : array_like
        Thermal time constant ``tau = R_th C`` of the winding node. [s]
    (others as :func:`steady_winding_temperature_c`)

    Returns
    -------
    ndarray
        Winding temperature at the end. [°C]
    """
    intercept, slope = _linear_loss(current_a, resistance_20c_ohm, no_load_loss_w, coefficient_per_k)
    r_th = as_float_array(thermal_resistance_k_per_w)
    tau = as_float_array(time_constant_s)
    t0 = as_float_array(start_c)
    t = as_float_array(duration_s)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        net_start_w = intercept + slope * t0 - (t0 - as_float_array(air_temperature_c)) / r_th
        rate = (1.0 - r_th * slope) / tau
        x = rate * t
        # (1 - exp(-s t)) / s, with its limit t as s -> 0
        growth = np.where(np.abs(x) > 1e-12, -np.expm1(-x) / np.where(rate == 0.0, 1.0, rate), t)
        result: FloatArray = t0 + net_start_w * r_th / tau * growth
    return result


def cell_resistance_factor(temperature_c: ArrayLike, reference_c: ArrayLike = PACK_REFERENCE_TEMPERATURE_C,
                           activation_energy_j_per_mol: ArrayLike = ELECTROLYTE_ACTIVATION_ENERGY_J_PER_MOL
                           ) -> FloatArray:
    """Cell DC resistance at ``temperature_c`` over its value at ``reference_c`` (Arrhenius). [-]

    ``exp(Ea / R_gas (1/T - 1/T_ref))`` with temperatures in kelvin; Ea of the electrolyte conductivity [2].
    """
    t = as_float_array(temperature_c) + CELSIUS_TO_KELVIN_K
    t_ref = as_float_array(reference_c) + CELSIUS_TO_KELVIN_K
    return np.exp(as_float_array(activation_energy_j_per_mol) / MOLAR_GAS_CONSTANT_J_PER_MOL_K
                  * (1.0 / t - 1.0 / t_ref))


BENCH_MIN_DUTY = 0.3
"""Bench samples below this duty are left out of the R_th fit: the motor current is estimated as ``I_bus / d``
(averaged switch), which the partial-throttle losses distort most at low duty."""


def bench_winding_loss_w(bus_current_a: ArrayLike, duty: ArrayLike, omega_rad_s: ArrayLike, kv_rpm_per_v: ArrayLike,
                         resistance_20c_ohm: ArrayLike, no_load_current_a: ArrayLike,
                         temperature_c: ArrayLike) -> FloatArray:
    """Motor loss at bench samples from what a bench measures: ``I = I_bus / d``, ``E = Ω / Kv_SI``,
    ``P = I^2 R(T) + I0 E`` with R at the sample's winding temperature. [W]"""
    current = as_float_array(bus_current_a) / as_float_array(duty)
    emf = as_float_array(omega_rad_s) / (as_float_array(kv_rpm_per_v) * (2.0 * np.pi / 60.0))
    hot = as_float_array(resistance_20c_ohm) * (1.0 + COPPER_TEMPERATURE_COEFFICIENT_PER_K * (
        as_float_array(temperature_c) - COPPER_REFERENCE_TEMPERATURE_C))
    return winding_loss_w(current, hot, no_load_current_a, emf)


def fit_thermal_resistance(temperature_rise_k: ArrayLike, loss_w: ArrayLike) -> tuple[float, float]:
    """Least-squares ``R_th`` from steady points ``T - T_air = R_th P`` (a line through the origin).

    Parameters
    ----------
    temperature_rise_k : array_like
        Measured winding (or can) temperature minus the air temperature at settled points. [K]
    loss_w : array_like
        Motor loss at those points (:func:`winding_loss_w` at the hot resistance). [W]

    Returns
    -------
    value, standard_error : float
        ``R_th`` [K/W] and its standard error from the residual scatter (NaN with fewer than two points).
    """
    y = as_float_array(temperature_rise_k).ravel()
    p = as_float_array(loss_w).ravel()
    keep = np.isfinite(y) & np.isfinite(p) & (p > 0)
    y, p = y[keep], p[keep]
    if p.size == 0:
        return float("nan"), float("nan")
    sxx = float(np.dot(p, p))
    value = float(np.dot(p, y)) / sxx
    if p.size < 2:
        return value, float("nan")
    residual = y - value * p
    return value, float(np.sqrt(float(np.dot(residual, residual)) / (p.size - 1) / sxx))
