"""ESC: averaged PWM switch with conduction resistance, plus the partial-throttle losses.

The averaged model puts ``R_on_path`` in series with the motor (``V_m = d V_bus = E + I (R + R_on_path)``).
Below full throttle the bridge chops the bus, which costs extra power the averaged model misses:

- ripple copper ``P_rip = (R + R_on_path) ΔI^2 / 12`` with ``ΔI = V_bus d (1 - d) / (L f_sw)`` (peak-peak),
- switching ``P_sw = 0.5 V_bus I f_sw (t_on + t_off)``,
- dead time ``P_dt = V_SD I (2 t_dead) f_sw``,
- input capacitor ``P_cap = ESR I^2 d (1 - d)``,
- calibrated ``P_pwm = k_pwm V_bus I d (1 - d)`` (default k_pwm = 0; fitted from bench runs).

All are zero at d = 1, where the bridge only commutates. Complementary (synchronous) PWM is assumed;
:func:`freewheel_diode_loss_w` gives the non-synchronous alternative.

References
----------
.. [1] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters, Applications, and Design*,
   3rd ed., Wiley, 2003 (switching loss, step-down converter ripple).
.. [2] R. W. Erickson and D. Maksimović, *Fundamentals of Power Electronics*, 2nd ed., Kluwer, 2001
   (inductor ripple, capacitor RMS current, switching loss).
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields

import numpy as np

from ._types import ArrayLike, FloatArray, as_float_array


@dataclass(frozen=True)
class EscParams:
    """ESC parameters (docs/model-reference.md#reference-model-v1 defaults); every field broadcasts.

    Parameters
    ----------
    on_path_resistance_ohm : array_like, default 0.010
        Resistance of the conducting switches in series with the motor (2 R_DS(on)). [Ω]
    switching_frequency_hz : array_like, default 24e3
        PWM frequency f_sw. [Hz]
    transition_time_s : array_like, default 200e-9
        Sum of turn-on and turn-off transition times t_on + t_off. [s]
    dead_time_s : array_like, default 0.5e-6
        Dead time per edge (two edges per period). [s]
    body_diode_drop_v : array_like, default 0.8
        Body-diode forward voltage V_SD during dead time. [V]
    input_esr_ohm : array_like, default 0.020
        ESR of the bulk input capacitor. [Ω]
    pwm_loss_coefficient : array_like, default 0
        Calibrated k_pwm of ``P_pwm = k_pwm V_bus I d (1 - d)``. [-]
    max_current_a : array_like, default inf
        Continuous current rating; exceeding it flags ``Status.OVER_CURRENT``. [A]
    """

    # Defaults are plain floats (the ignores): __post_init__ turns every field into a float64 array.
    on_path_resistance_ohm: FloatArray = 0.010  # type: ignore[assignment]
    switching_frequency_hz: FloatArray = 24e3  # type: ignore[assignment]
    transition_time_s: FloatArray = 200e-9  # type: ignore[assignment]
    dead_time_s: FloatArray = 0.5e-6  # type: ignore[assignment]
    body_diode_drop_v: FloatArray = 0.8  # type: ignore[assignment]
    input_esr_ohm: FloatArray = 0.020  # type: ignore[assignment]
    pwm_loss_coefficient: FloatArray = 0.0  # type: ignore[assignment]
    max_current_a: FloatArray = np.inf  # type: ignore[assignment]

    def __post_init__(self) -> None:
        for f in fields(self):
            object.__setattr__(self, f.name, as_float_array(getattr(self, f.name)))

    @classmethod
    def lossless_switching(cls, on_path_resistance_ohm: ArrayLike = 0.0) -> EscParams:
        """An ideal averaged switch: only the conduction resistance remains (the OP check cases)."""
        return cls(on_path_resistance_ohm=as_float_array(on_path_resistance_ohm),
                   transition_time_s=as_float_array(0.0), dead_time_s=as_float_array(0.0),
                   body_diode_drop_v=as_float_array(0.0), input_esr_ohm=as_float_array(0.0))


@dataclass(frozen=True)
class PartialThrottleLosses:
    """Partial-throttle loss terms per rotor, all zero at d = 1. [W]

    This class is the list of ESC loss terms: every operating point, ranking row, compare column and API
    loss breakdown reports each of its fields (with the label in its metadata) without naming them again.
    """

    pwm_ripple_w: FloatArray = field(metadata={"label": "PWM ripple"})
    switching_w: FloatArray = field(metadata={"label": "switching"})
    dead_time_w: FloatArray = field(metadata={"label": "dead time"})
    input_capacitor_w: FloatArray = field(metadata={"label": "input capacitor"})
    calibrated_pwm_w: FloatArray = field(metadata={"label": "calibrated PWM"})

    @property
    def total_w(self) -> FloatArray:
        """``P_extra``: the sum of every term (including the calibrated one). [W]"""
        total: FloatArray = sum((getattr(self, f.name) for f in fields(self)), start=np.zeros(()))
        return total

    @classmethod
    def zeros_like(cls, a: ArrayLike) -> PartialThrottleLosses:
        """Every term zero (full throttle), shaped like ``a``."""
        return cls(**{f.name: np.zeros_like(as_float_array(a)) for f in fields(cls)})


def _chopping(duty: ArrayLike) -> FloatArray:
    """``d (1 - d)`` clipped to d in [0, 1]; zero at full throttle."""
    d = np.clip(as_float_array(duty), 0.0, 1.0)
    return d * (1.0 - d)


def _switching_mask(duty: ArrayLike) -> FloatArray:
    """1 while the bridge chops (d < 1), 0 at full throttle (only commutations, neglected)."""
    return np.where(as_float_array(duty) < 1.0, 1.0, 0.0)


@dataclass(frozen=True)
class EscConstants:
    """What the partial-throttle loss terms need from an ESC alone, combined once per ESC.

    ``P_sw = switching_per_v_a V_bus I``, ``P_dt = dead_time_v I``, ``P_rip = (R + R_on) V_m^2 u^2
    ripple_s2 / L^2`` (``u = 1 - d``), ``P_cap = ESR I^2 d u``, ``P_pwm = k_pwm I V_m u``.
    """

    on_path_resistance_ohm: FloatArray
    switching_per_v_a: FloatArray
    """``0.5 f_sw (t_on + t_off)``. [1/1]"""
    dead_time_v: FloatArray
    """``2 V_SD t_dead f_sw``. [V]"""
    ripple_s2: FloatArray
    """``1 / (12 f_sw^2)``. [s^2]"""
    input_esr_ohm: FloatArray
    pwm_loss_coefficient: FloatArray

    @classmethod
    def of(cls, esc: EscParams) -> EscConstants:
        """The combined constants of ``esc`` (arrays of its shape)."""
        f = esc.switching_frequency_hz
        with np.errstate(divide="ignore"):
            ripple = 1.0 / (12.0 * f * f)
        return cls(on_path_resistance_ohm=esc.on_path_resistance_ohm,
                   switching_per_v_a=0.5 * f * esc.transition_time_s,
                   dead_time_v=esc.body_diode_drop_v * 2.0 * esc.dead_time_s * f,
                   ripple_s2=as_float_array(ripple), input_esr_ohm=esc.input_esr_ohm,
                   pwm_loss_coefficient=esc.pwm_loss_coefficient)


@dataclass(frozen=True)
class LossCoefficients:
    """Per-rotor coefficients of ``P_extra`` at a known motor state, as a function of the bus voltage V.

    With ``u = 1 - d = 1 - V_m / V``:
    ``P_extra = ripple_w u^2 + switching_w_per_v V + dead_time_w + capacitor_w d u + pwm_w u`` below full
    throttle, 0 at d = 1. This is the form both the reference solvers (:mod:`drive`) and the screening
    kernels (:mod:`drive_screen`) evaluate, so every loss term has one definition.
    """

    ripple_w: FloatArray
    switching_w_per_v: FloatArray
    dead_time_w: FloatArray
    capacitor_w: FloatArray
    pwm_w: FloatArray


def loss_coefficients(constants: EscConstants, motor_resistance_ohm: ArrayLike, inductance_h: ArrayLike,
                      motor_current_a: ArrayLike, motor_voltage_v: ArrayLike) -> LossCoefficients:
    """Coefficients of every partial-throttle loss term at motor current I and motor voltage V_m.

    From the averaged buck relations (Mohan 2003, Erickson 2001): ripple ``ΔI = V_m u / (L f)`` so
    ``P_rip = (R + R_on) ΔI^2 / 12``; ``P_sw = 0.5 V I f (t_on + t_off)``; ``P_dt = 2 V_SD t_dead f I``;
    ``P_cap = ESR I^2 d (1 - d)``; calibrated ``P_pwm = k_pwm V I d (1 - d) = k_pwm I V_m u``.
    """
    current = as_float_array(motor_current_a)
    motor_v = as_float_array(motor_voltage_v)
    inductance = as_float_array(inductance_h)
    series = as_float_array(motor_resistance_ohm) + constants.on_path_resistance_ohm
    ripple = series * (constants.ripple_s2 / (inductance * inductance))
    return LossCoefficients(ripple_w=ripple * (motor_v * motor_v),
                            switching_w_per_v=constants.switching_per_v_a * current,
                            dead_time_w=constants.dead_time_v * current,
                            capacitor_w=constants.input_esr_ohm * (current * current),
                            pwm_w=constants.pwm_loss_coefficient * (current * motor_v))


def extra_loss_below_full_w(coefficients: LossCoefficients, bus_voltage_v: ArrayLike,
                            motor_voltage_v: ArrayLike) -> FloatArray:
    """``P_extra`` at bus voltage V for a duty ``V_m / V`` below 1 (the switching terms do not drop out). [W]

    The bus solves call this (and :func:`extra_loss_slope_w_per_v`); :func:`loss_terms` gives the breakdown
    with d = 1 handled. Its value at ``V = V_m`` is the step the loss makes at full throttle.
    """
    c = coefficients
    bus = as_float_array(bus_voltage_v)
    u = 1.0 - as_float_array(motor_voltage_v) / bus
    extra: FloatArray = (c.ripple_w * u + c.capacitor_w * (1.0 - u) + c.pwm_w) * u + c.switching_w_per_v * bus \
        + c.dead_time_w
    return extra


def extra_loss_slope_w_per_v(coefficients: LossCoefficients, bus_voltage_v: ArrayLike,
                             motor_voltage_v: ArrayLike) -> FloatArray:
    """``d P_extra / d V`` at fixed motor state (``du/dV = V_m / V^2``), for Newton steps on the bus. [W/V]"""
    c = coefficients
    bus = as_float_array(bus_voltage_v)
    ratio = as_float_array(motor_voltage_v) / bus
    u = 1.0 - ratio
    slope: FloatArray = (2.0 * (c.ripple_w - c.capacitor_w) * u + c.capacitor_w + c.pwm_w) * ratio / bus \
        + c.switching_w_per_v
    return slope


def loss_terms(coefficients: LossCoefficients, bus_voltage_v: ArrayLike, duty: ArrayLike) -> PartialThrottleLosses:
    """Every partial-throttle loss term at bus voltage V and duty d (all zero at d = 1). [W]"""
    c = coefficients
    d = np.clip(as_float_array(duty), 0.0, 1.0)
    u = 1.0 - d
    chopping = _switching_mask(duty)
    return PartialThrottleLosses(
        pwm_ripple_w=c.ripple_w * u * u * chopping,
        switching_w=c.switching_w_per_v * as_float_array(bus_voltage_v) * chopping,
        dead_time_w=c.dead_time_w * chopping,
        input_capacitor_w=c.capacitor_w * d * u * chopping,
        calibrated_pwm_w=c.pwm_w * u * chopping,
    )


def has_partial_throttle_losses(esc: EscParams, inductance_h: ArrayLike) -> np.ndarray:
    """Elements whose ESC (with this motor inductance) has any partial-throttle loss (closed forms are exact only
    without one)."""
    with np.errstate(divide="ignore"):
        ripple = 1.0 / (as_float_array(inductance_h) * esc.switching_frequency_hz) > 0.0
    terms: np.ndarray = (ripple | (esc.transition_time_s > 0) | ((esc.dead_time_s > 0) & (esc.body_diode_drop_v > 0))
                         | (esc.input_esr_ohm > 0) | (esc.pwm_loss_coefficient != 0))
    return terms


def ripple_current_a(bus_voltage_v: ArrayLike, duty: ArrayLike, inductance_h: ArrayLike,
                     switching_frequency_hz: ArrayLike) -> FloatArray:
    """Peak-to-peak motor current ripple ``ΔI = V_bus d (1 - d) / (L f_sw)``. [A]

    Maximum ``V_bus / (4 L f_sw)`` at d = 0.5. (Erickson's Δi is half of this.)
    """
    return as_float_array(bus_voltage_v) * _chopping(duty) / (
        as_float_array(inductance_h) * as_float_array(switching_frequency_hz))


def rms_current_a(average_current_a: ArrayLike, ripple_current_pp_a: ArrayLike) -> FloatArray:
    """RMS of a triangular ripple on a mean ``sqrt(I^2 + ΔI^2 / 12)``. [A]"""
    return np.sqrt(as_float_array(average_current_a) ** 2 + as_float_array(ripple_current_pp_a) ** 2 / 12.0)


def input_capacitor_rms_current_a(motor_current_a: ArrayLike, duty: ArrayLike) -> FloatArray:
    """Input-capacitor RMS current ``I sqrt(d (1 - d))``. [A]"""
    return as_float_array(motor_current_a) * np.sqrt(_chopping(duty))


def freewheel_diode_loss_w(motor_current_a: ArrayLike, duty: ArrayLike, diode_drop_v: ArrayLike = 0.8) -> FloatArray:
    """Non-synchronous ESC: freewheel diode loss ``V_F I (1 - d)`` replacing the low-side conduction. [W]"""
    d = np.clip(as_float_array(duty), 0.0, 1.0)
    return as_float_array(diode_drop_v) * as_float_array(motor_current_a) * (1.0 - d)


def partial_throttle_losses(bus_voltage_v: ArrayLike, duty: ArrayLike, motor_current_a: ArrayLike,
                            motor_resistance_ohm: ArrayLike, inductance_h: ArrayLike,
                            esc: EscParams) -> PartialThrottleLosses:
    """Every partial-throttle loss term of one rotor's ESC.

    Parameters
    ----------
    bus_voltage_v : array_like
        ESC input (bus) voltage. [V]
    duty : array_like
        PWM duty, 0..1. [-]
    motor_current_a : array_like
        Average motor current. [A]
    motor_resistance_ohm : array_like
        Motor line-to-line resistance R (the ripple flows through R + R_on_path). [Ω]
    inductance_h : array_like
        Motor line-to-line inductance. [H]
    esc : EscParams
        ESC parameters.

    Returns
    -------
    PartialThrottleLosses
        Ripple copper, switching, dead time, input capacitor and calibrated terms. [W]
    """
    d = np.clip(as_float_array(duty), 0.0, 1.0)
    motor_v = d * as_float_array(bus_voltage_v)
    coefficients = loss_coefficients(EscConstants.of(esc), motor_resistance_ohm, inductance_h, motor_current_a,
                                     motor_v)
    return loss_terms(coefficients, bus_voltage_v, duty)


def extra_loss_w(bus_voltage_v: ArrayLike, duty: ArrayLike, motor_current_a: ArrayLike,
                 motor_resistance_ohm: ArrayLike, inductance_h: ArrayLike, esc: EscParams) -> FloatArray:
    """``P_extra`` (all partial-throttle terms including ``P_pwm``) as one array. [W]"""
    return partial_throttle_losses(bus_voltage_v, duty, motor_current_a, motor_resistance_ohm,
                                   inductance_h, esc).total_w


def bus_current_a(bus_voltage_v: ArrayLike, duty: ArrayLike, motor_current_a: ArrayLike,
                  extra_loss_w_: ArrayLike) -> FloatArray:
    """Average ESC input current by energy balance ``I_bus = d I + P_extra / V_bus``. [A]"""
    return as_float_array(duty) * as_float_array(motor_current_a) + as_float_array(extra_loss_w_) / as_float_array(
        bus_voltage_v)
