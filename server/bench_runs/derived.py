"""Per-sample quantities of a bench run: air density, electrical power, CT, CP, shaft power, efficiencies.

Definitions follow docs/model-reference.md#propeller: ``CT = T / (rho n^2 D^4)``, ``CP = P / (rho n^3 D^5)``
with ``P = 2 pi n Q`` (n in rev/s), drive efficiency = shaft power / electrical power (motor + ESC), specific
thrust in gram-force per watt of electrical power. Quantities that need torque are NaN when the stand has no
torque channel; coefficients are NaN where the shaft does not turn.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from server.physics import atmosphere
from server.physics._types import (
    SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K,
    ArrayLike,
    FloatArray,
    as_float_array,
)
from server.physics.propeller import specific_thrust_g_per_w


def run_air_density_kg_m3(*, altitude_m: float | None = None, pressure_pa: float | None = None,
                          air_temperature_c: float | None = None) -> float:
    """Air density of a bench run from what the team recorded.

    Parameters
    ----------
    altitude_m : float, optional
        Site (pressure) altitude, used for the ISA pressure when ``pressure_pa`` is not given;
        0 (sea level) when neither is given. [m]
    pressure_pa : float, optional
        Measured static pressure; wins over ``altitude_m``. [Pa]
    air_temperature_c : float, optional
        Measured air temperature; the ISA temperature at the altitude when not given. [°C]

    Returns
    -------
    float
        ``rho = p / (R T)`` (dry air, docs/model-reference.md#air). [kg/m^3]
    """
    altitude = 0.0 if altitude_m is None else float(altitude_m)
    if air_temperature_c is not None:
        temperature_k = float(atmosphere.celsius_to_kelvin_k(air_temperature_c))
    else:
        temperature_k = float(atmosphere.standard_temperature_k(altitude))
    if pressure_pa is not None:
        pressure = float(pressure_pa)
    else:
        pressure = float(atmosphere.standard_pressure_pa(altitude))
    return pressure / (SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K * temperature_k)


@dataclass(frozen=True)
class DerivedSamples:
    """Derived quantities per sample (arrays in the order of the input).

    Attributes
    ----------
    density_kg_m3 : ndarray
        Air density. [kg/m^3]
    electrical_power_w : ndarray
        ``V_bus I_bus``. [W]
    thrust_coefficient : ndarray
        CT (NaN where rpm <= 0). [-]
    power_coefficient : ndarray
        CP from torque (NaN without torque). [-]
    shaft_power_w : ndarray
        ``2 pi n Q`` (NaN without torque). [W]
    drive_efficiency : ndarray
        Shaft ÷ electrical power (NaN without torque). [-]
    specific_thrust_g_per_w : ndarray
        Thrust in gram-force per electrical watt. [g/W]
    """

    density_kg_m3: FloatArray
    electrical_power_w: FloatArray
    thrust_coefficient: FloatArray
    power_coefficient: FloatArray
    shaft_power_w: FloatArray
    drive_efficiency: FloatArray
    specific_thrust_g_per_w: FloatArray


def derive_samples(*, bus_voltage_v: ArrayLike, bus_current_a: ArrayLike, rpm: ArrayLike, thrust_n: ArrayLike,
                   diameter_m: float, density_kg_m3: ArrayLike, torque_nm: ArrayLike | None = None) -> DerivedSamples:
    """Derived quantities of every sample of a run.

    Parameters
    ----------
    bus_voltage_v, bus_current_a : array_like
        ESC input voltage [V] and current [A].
    rpm : array_like
        Shaft speed. [rpm]
    thrust_n : array_like
        Thrust. [N]
    diameter_m : float
        Propeller diameter. [m]
    density_kg_m3 : array_like
        Air density (see :func:`run_air_density_kg_m3`). [kg/m^3]
    torque_nm : array_like, optional
        Shaft torque. [N m]

    Returns
    -------
    DerivedSamples
    """
    v, i, speed, t = (as_float_array(a) for a in (bus_voltage_v, bus_current_a, rpm, thrust_n))
    rho = np.broadcast_to(as_float_array(density_kg_m3), v.shape).astype(np.float64)
    d = float(diameter_m)
    electrical = v * i
    n = np.where(speed > 0.0, speed / 60.0, np.nan)
    ct = t / (rho * n**2 * d**4)
    if torque_nm is None:
        nan = np.full(v.shape, np.nan)
        shaft, cp, efficiency = nan, nan.copy(), nan.copy()
    else:
        q = as_float_array(torque_nm)
        shaft = 2.0 * math.pi * np.nan_to_num(n, nan=0.0) * q
        cp = shaft / (rho * n**3 * d**5)
        with np.errstate(divide="ignore", invalid="ignore"):
            efficiency = np.where(electrical > 0.0, shaft / electrical, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        specific = np.where(electrical > 0.0, specific_thrust_g_per_w(t, electrical), np.nan)
    return DerivedSamples(density_kg_m3=rho, electrical_power_w=electrical, thrust_coefficient=ct,
                          power_coefficient=cp, shaft_power_w=shaft, drive_efficiency=efficiency,
                          specific_thrust_g_per_w=specific)
