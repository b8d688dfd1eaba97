"""Air properties of the ISA troposphere (ISO 2533 / US Standard Atmosphere 1976).

Density sets the propeller's thrust and power at a given rpm (``T = CT rho n^2 D^4``), so the ranking
engine evaluates every mission at its own density. Altitudes are **geometric** by default, like
``fluids.atmosphere.ATMOSPHERE_1976``; the standard's tables are in geopotential altitude, and
:func:`geopotential_altitude_m` converts (the difference is 1.5e-4 rel in density at 3000 m).

Only the troposphere (geopotential altitude up to 11 000 m) is modelled; above it the functions
return NaN rather than a wrong number.

References
----------
.. [1] ISO 2533:1975, *Standard Atmosphere*.
.. [2] *U.S. Standard Atmosphere, 1976*, NOAA/NASA/USAF, NOAA-S/T 76-1562.
.. [3] ICAO Doc 7488/3, *Manual of the ICAO Standard Atmosphere*, 1993.
"""

from __future__ import annotations

import numpy as np

from ._types import (
    CELSIUS_TO_KELVIN_K,
    EARTH_RADIUS_FOR_GEOPOTENTIAL_M,
    HEAT_CAPACITY_RATIO_AIR,
    SEA_LEVEL_DENSITY_KG_M3,
    SEA_LEVEL_PRESSURE_PA,
    SEA_LEVEL_TEMPERATURE_K,
    SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K,
    STANDARD_GRAVITY_M_S2,
    SUTHERLAND_BETA_KG_PER_M_S_SQRT_K,
    SUTHERLAND_TEMPERATURE_K,
    TROPOPAUSE_GEOPOTENTIAL_ALTITUDE_M,
    TROPOSPHERE_LAPSE_RATE_K_PER_M,
    ArrayLike,
    FloatArray,
    as_float_array,
)

# g0 / (R L) = 5.255876: the exponent of the troposphere pressure law.
_PRESSURE_EXPONENT = STANDARD_GRAVITY_M_S2 / (
    SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K * TROPOSPHERE_LAPSE_RATE_K_PER_M
)


def geopotential_altitude_m(geometric_altitude_m: ArrayLike) -> FloatArray:
    """Convert geometric altitude Z to geopotential altitude H.

    Parameters
    ----------
    geometric_altitude_m : array_like
        Geometric altitude Z above mean sea level. [m]

    Returns
    -------
    ndarray
        Geopotential altitude ``H = r0 Z / (r0 + Z)``, r0 = 6 356 766 m. [m]

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976.
    """
    z = as_float_array(geometric_altitude_m)
    return EARTH_RADIUS_FOR_GEOPOTENTIAL_M * z / (EARTH_RADIUS_FOR_GEOPOTENTIAL_M + z)


def geometric_altitude_m(geopotential_altitude_m: ArrayLike) -> FloatArray:
    """Convert geopotential altitude H to geometric altitude ``Z = r0 H / (r0 - H)``. [m]"""
    h = as_float_array(geopotential_altitude_m)
    return EARTH_RADIUS_FOR_GEOPOTENTIAL_M * h / (EARTH_RADIUS_FOR_GEOPOTENTIAL_M - h)


def _geopotential(altitude_m: ArrayLike, geopotential: bool) -> FloatArray:
    h = as_float_array(altitude_m) if geopotential else geopotential_altitude_m(altitude_m)
    # Above the tropopause the lapse rate changes; we do not model it, so say so with NaN.
    return np.where(h <= TROPOPAUSE_GEOPOTENTIAL_ALTITUDE_M, h, np.nan)


def standard_temperature_k(altitude_m: ArrayLike, *, geopotential: bool = False) -> FloatArray:
    """Standard-atmosphere temperature ``T = T0 - L H`` in the troposphere.

    Parameters
    ----------
    altitude_m : array_like
        Altitude; geometric unless ``geopotential`` is True. [m]
    geopotential : bool, default False
        Interpret ``altitude_m`` as geopotential altitude.

    Returns
    -------
    ndarray
        Temperature. NaN above 11 km geopotential. [K]
    """
    h = _geopotential(altitude_m, geopotential)
    return SEA_LEVEL_TEMPERATURE_K - TROPOSPHERE_LAPSE_RATE_K_PER_M * h


def standard_pressure_pa(altitude_m: ArrayLike, *, geopotential: bool = False) -> FloatArray:
    """Standard-atmosphere pressure ``p = p0 (T/T0)^(g0/(R L))`` in the troposphere.

    Parameters
    ----------
    altitude_m : array_like
        (Pressure) altitude; geometric unless ``geopotential`` is True. [m]
    geopotential : bool, default False
        Interpret ``altitude_m`` as geopotential altitude.

    Returns
    -------
    ndarray
        Static pressure. [Pa]
    """
    t = standard_temperature_k(altitude_m, geopotential=geopotential)
    return SEA_LEVEL_PRESSURE_PA * (t / SEA_LEVEL_TEMPERATURE_K) ** _PRESSURE_EXPONENT


def air_temperature_k(
    altitude_m: ArrayLike,
    temperature_offset_k: ArrayLike = 0.0,
    outside_air_temperature_k: ArrayLike | None = None,
    *,
    geopotential: bool = False,
) -> FloatArray:
    """Air temperature: ISA + offset, or the measured outside air temperature when given. [K]"""
    if outside_air_temperature_k is not None:
        shape = np.broadcast_shapes(np.shape(altitude_m), np.shape(outside_air_temperature_k))
        return np.broadcast_to(as_float_array(outside_air_temperature_k), shape).copy()
    return standard_temperature_k(altitude_m, geopotential=geopotential) + as_float_array(temperature_offset_k)


def air_density_kg_m3(
    altitude_m: ArrayLike,
    temperature_offset_k: ArrayLike = 0.0,
    outside_air_temperature_k: ArrayLike | None = None,
    *,
    geopotential: bool = False,
) -> FloatArray:
    """Air density at a (pressure) altitude with a temperature offset or a measured temperature.

    The pressure stays the standard pressure at that altitude; only the temperature changes
    (``rho = p_std(Hp) / (R (T_std(Hp) + dT))`` or ``rho = p_std(Hp) / (R OAT)``).

    Parameters
    ----------
    altitude_m : array_like
        Pressure altitude; geometric unless ``geopotential`` is True. [m]
    temperature_offset_k : array_like, default 0
        ISA temperature deviation dT ("ISA + dT"). Ignored when ``outside_air_temperature_k`` is given. [K]
    outside_air_temperature_k : array_like, optional
        Measured outside air temperature. [K]
    geopotential : bool, default False
        Interpret ``altitude_m`` as geopotential altitude.

    Returns
    -------
    ndarray
        Dry-air density. [kg/m^3]

    Notes
    -----
    Humidity (at most a 1-2 % lower density on hot humid days [MEM]) is ignored.

    References
    ----------
    .. [1] ISO 2533:1975; U.S. Standard Atmosphere, 1976.
    """
    p = standard_pressure_pa(altitude_m, geopotential=geopotential)
    t = air_temperature_k(altitude_m, temperature_offset_k, outside_air_temperature_k, geopotential=geopotential)
    return p / (SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K * t)


def celsius_to_kelvin_k(temperature_c: ArrayLike) -> FloatArray:
    """Convert a temperature from °C to K. [K]"""
    return as_float_array(temperature_c) + CELSIUS_TO_KELVIN_K


def density_altitude_m(density_kg_m3: ArrayLike, *, geopotential: bool = False) -> FloatArray:
    """Standard-atmosphere altitude that has the given density (closed form, troposphere).

    Parameters
    ----------
    density_kg_m3 : array_like
        Air density. [kg/m^3]
    geopotential : bool, default False
        Return geopotential instead of geometric altitude.

    Returns
    -------
    ndarray
        ``H_rho = (T0/L) [1 - (rho/rho0)^(1/(g0/(R L) - 1))]``, converted to geometric altitude unless
        ``geopotential``. [m]
    """
    rho = as_float_array(density_kg_m3)
    h = (SEA_LEVEL_TEMPERATURE_K / TROPOSPHERE_LAPSE_RATE_K_PER_M) * (
        1.0 - (rho / SEA_LEVEL_DENSITY_KG_M3) ** (1.0 / (_PRESSURE_EXPONENT - 1.0))
    )
    return h if geopotential else geometric_altitude_m(h)


def speed_of_sound_m_s(temperature_k: ArrayLike) -> FloatArray:
    """Speed of sound in dry air ``a = sqrt(gamma R T)``. [m/s]"""
    t = as_float_array(temperature_k)
    return np.sqrt(HEAT_CAPACITY_RATIO_AIR * SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K * t)


def dynamic_viscosity_pa_s(temperature_k: ArrayLike) -> FloatArray:
    """Dynamic viscosity of air by Sutherland's law as used in US 1976. [Pa s]

    ``mu = beta T^1.5 / (T + S)``, beta = 1.458e-6 kg/(m s K^0.5), S = 110.4 K.
    """
    t = as_float_array(temperature_k)
    return SUTHERLAND_BETA_KG_PER_M_S_SQRT_K * t**1.5 / (t + SUTHERLAND_TEMPERATURE_K)
