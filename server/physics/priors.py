"""Priors: what the engine assumes for a parameter a part has not measured, with a standard uncertainty and origin.

A *prior* replaces the bare default of the first reference model: it has a centre (today's default unless a
published source gives a better one), a standard uncertainty and a named origin. Values a part states but did not
measure (datasheet values) keep their number and get the datasheet uncertainty of :data:`STATED_RELATIVE_SD`;
calibrated values carry the standard errors and covariance of their fit. Bands (:mod:`.uncertainty`) are drawn
from all three.

The ESC's partial-throttle coefficient k_pwm has no physical default: without a bench run of its own an ESC
takes the team's pooled fit over its calibrated ESCs, else :data:`K_PWM_PUBLISHED`, fitted on published bench
data (see the model reference, section "Uncertainty").
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._types import ArrayLike, FloatArray, as_float_array
from .esc import EscParams
from .motor import DEFAULT_INDUCTANCE_H

BENCH_5IN_SOURCE = ("5-inch motor/propeller thrust-stand sweeps at 7.4 V and 11.1 V, P. Cao and J. Strawson, "
                    "2018 (StrawsonDesign/motor_propeller_testing, MIT licence; tests/data/reference/bench-5in)")


@dataclass(frozen=True)
class Prior:
    """An assumed value: centre, standard uncertainty (same unit), origin; ``relative`` = sd is a fraction."""

    value: float
    sd: float
    origin: str
    relative: bool = False

    def sd_of(self, value: float | None = None) -> float:
        """The standard uncertainty in the value's unit (a relative one applied to ``value`` or the centre)."""
        centre = self.value if value is None else value
        return abs(centre) * self.sd if self.relative else self.sd


K_PWM_PUBLISHED = Prior(
    value=0.4655, sd=0.097,
    origin=("pooled fit over the published 5-inch bench sweeps (0.4655 ± 0.0155 standard error); uncertainty: the "
            "spread, over 10 held-out setups, of the k_pwm each one's 11.1 V power needs once its motor is "
            "calibrated at 7.4 V, " + BENCH_5IN_SOURCE))
"""k_pwm for an ESC without a bench run when the team has calibrated none (re-fitted by a test on the data)."""
K_PWM_PUBLISHED_STANDARD_ERROR = 0.0155
"""Standard error of the pooled fit itself (what the data pin down), beside the between-setup spread above."""

_MEM = "reference model v1 default; typical range from memory"
_ESC = EscParams()
ESC_PRIORS: dict[str, Prior] = {
    "r_on_path_ohm": Prior(float(_ESC.on_path_resistance_ohm), 0.5, _MEM + " (2-20 mΩ per path)", relative=True),
    "pwm_frequency_khz": Prior(float(_ESC.switching_frequency_hz) / 1e3, 0.4, _MEM + " (8-48 kHz)", relative=True),
    "switching_time_ns": Prior(float(_ESC.transition_time_s) * 1e9, 0.4, _MEM + " (50-300 ns)", relative=True),
    "dead_time_ns": Prior(float(_ESC.dead_time_s) * 1e9, 0.5, _MEM + " (0.1-1 µs)", relative=True),
    "diode_drop_v": Prior(float(_ESC.body_diode_drop_v), 0.1, _MEM + " (0.7-1.0 V)", relative=True),
    "input_esr_ohm": Prior(float(_ESC.input_esr_ohm), 0.5, _MEM + " (5-50 mΩ)", relative=True),
}
"""The ESC's physical loss parameters when the part does not state them (field names and units of the part;
centres: the defaults of :class:`.esc.EscParams`)."""
MOTOR_PRIORS: dict[str, Prior] = {
    "inductance_uh": Prior(DEFAULT_INDUCTANCE_H * 1e6, 0.7, _MEM + " (5-300 µH line-to-line)", relative=True),
}

STATED_RELATIVE_SD: dict[str, float] = {
    "kv_rpm_per_v": 0.15,
    "winding_resistance_ohm": 0.5,
    "no_load_current_a": 0.5,
    "inductance_uh": 0.5,
    "r_on_path_ohm": 0.5,
    "pwm_frequency_khz": 0.1,
    "switching_time_ns": 0.4,
    "dead_time_ns": 0.5,
    "diode_drop_v": 0.1,
    "input_esr_ohm": 0.5,
    "k_pwm": 0.5,
    "ct": 0.05,
    "cp": 0.05,
    "cell_resistance_mohm": 0.3,
    "capacity_mah": 0.05,
}
"""Relative standard uncertainty of a value a part states but nobody measured on the team's bench (from memory:
labels and datasheets; the Kv label and the datasheet R and I0 are the same spreads the calibration uses as its
priors). Propeller coefficient tables: one factor for all CT (and one for all CP) of a table."""

MODEL_DISCREPANCY_RELATIVE = 0.04
"""Relative scatter of the calibrated model's electrical power about bench measurements it did not see (the
cross-voltage check on the published 5-inch sweeps: median error 3.6 %), used when no calibration states its own
residual. [-]"""

SPECIFIC_THERMAL_RESISTANCE_K_KG_PER_W = 0.1
"""Winding-to-air thermal resistance times motor mass for a propeller-cooled outrunner when a motor states none:
``R_th = 0.1 / m`` (about 3 K/W at 30 g, 1 K/W at 100 g). From memory [MEM], order of magnitude only."""
MOTOR_HEAT_CAPACITY_J_PER_KG_K = 500.0
"""Lumped heat capacity per kilogram of motor (copper 385, electrical steel about 450, aluminium about 900
J/(kg K), from memory [MEM]); the time constant prior is ``tau = R_th m c``. [J/(kg K)]"""
THERMAL_PRIORS: dict[str, Prior] = {
    "thermal_resistance_k_per_w": Prior(SPECIFIC_THERMAL_RESISTANCE_K_KG_PER_W, 0.5,
                                        _MEM + " (0.1 K kg/W divided by the motor's mass)", relative=True),
    "thermal_time_constant_s": Prior(SPECIFIC_THERMAL_RESISTANCE_K_KG_PER_W * MOTOR_HEAT_CAPACITY_J_PER_KG_K, 0.5,
                                     _MEM + " (R_th x mass x 500 J/(kg K))", relative=True),
    "max_winding_temperature_c": Prior(100.0, 10.0, _MEM + " (winding and N/H-grade magnets: 80-150 °C)"),
}
"""What the heat model assumes for a motor without thermal data (docs/model-reference.md#heat). Not counted among
a part's assumed parameters (they matter only to missions that ask for temperature effects)."""


def thermal_defaults(mass_kg: ArrayLike, thermal_resistance_k_per_w: ArrayLike, time_constant_s: ArrayLike,
                     max_winding_temperature_c: ArrayLike) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Fill NaN thermal values from :data:`THERMAL_PRIORS`: R_th [K/W], tau [s] (from R_th), maximum [°C]."""
    mass = as_float_array(mass_kg)
    r_th = as_float_array(thermal_resistance_k_per_w)
    r_th = np.where(np.isnan(r_th), SPECIFIC_THERMAL_RESISTANCE_K_KG_PER_W / mass, r_th)
    tau = as_float_array(time_constant_s)
    tau = np.where(np.isnan(tau), r_th * mass * MOTOR_HEAT_CAPACITY_J_PER_KG_K, tau)
    t_max = as_float_array(max_winding_temperature_c)
    t_max = np.where(np.isnan(t_max), THERMAL_PRIORS["max_winding_temperature_c"].value, t_max)
    return r_th, tau, t_max
