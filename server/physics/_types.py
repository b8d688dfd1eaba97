"""Shared array aliases, physical constants and status codes of the physics engine.

Every constant carries its unit in its name. Sources (``docs/model-reference.md``):
ISO 2533:1975 / U.S. Standard Atmosphere 1976 for the air, and the trade conventions for rpm.
"""

from __future__ import annotations

import math
from enum import IntEnum
from typing import TypeAlias

import numpy as np
import numpy.typing as npt

FloatArray: TypeAlias = npt.NDArray[np.float64]
"""A float64 ndarray of any shape (0-d for scalar inputs)."""

IntArray: TypeAlias = npt.NDArray[np.int8]
"""A small-integer ndarray holding :class:`Status` or stop-reason codes."""

ArrayLike: TypeAlias = npt.ArrayLike
"""Anything numpy turns into an array: a float, a list, an ndarray."""

# --- Standard atmosphere (U.S. Standard Atmosphere 1976 / ISO 2533) -------------------------------------
STANDARD_GRAVITY_M_S2 = 9.80665
SEA_LEVEL_TEMPERATURE_K = 288.15
SEA_LEVEL_PRESSURE_PA = 101_325.0
SEA_LEVEL_DENSITY_KG_M3 = 1.225
TROPOSPHERE_LAPSE_RATE_K_PER_M = 0.0065
TROPOPAUSE_GEOPOTENTIAL_ALTITUDE_M = 11_000.0
# US 1976: R* / M0 = 8.31432 / 0.0289644 (ISO 2533 quotes 287.05287, 7e-7 rel apart).
SPECIFIC_GAS_CONSTANT_AIR_J_PER_KG_K = 8.31432 / 0.0289644
EARTH_RADIUS_FOR_GEOPOTENTIAL_M = 6_356_766.0
HEAT_CAPACITY_RATIO_AIR = 1.4
# Sutherland's law constants of US 1976 for the dynamic viscosity of air.
SUTHERLAND_BETA_KG_PER_M_S_SQRT_K = 1.458e-6
SUTHERLAND_TEMPERATURE_K = 110.4
CELSIUS_TO_KELVIN_K = 273.15

# --- Unit conversions ---------------------------------------------------------------------------------
RAD_S_PER_RPM = 2.0 * math.pi / 60.0
RPM_PER_RAD_S = 60.0 / (2.0 * math.pi)
SECONDS_PER_HOUR_S = 3600.0

# --- Copper: temperature coefficient of resistance of standard (IACS, IEC 60028) annealed copper at 20 °C,
# 3.93e-3 /°C: K. C. Agrawal, Industrial Power Engineering and Applications Handbook, Newnes 2001, table of
# conductor properties; the same 3930 ppm/°C in the IEICE Handbook for Electronics, Information and
# Communication Engineers, vol. 1 (docs/model-reference.md#heat) ---------------------------------------
COPPER_TEMPERATURE_COEFFICIENT_PER_K = 0.00393


class Status(IntEnum):
    """Per-element outcome of a batch computation; batch solvers never raise.

    Values other than ``OK``, ``OVER_CURRENT`` and ``DATA_ERROR`` come with NaN results.
    """

    OK = 0
    INFEASIBLE_THRUST = 1
    """The requested thrust (or rpm) needs a duty above 1 with this pack, or the pack cannot supply it."""
    OVER_CURRENT = 2
    """Solved, but the motor current exceeds the motor's or the ESC's rated current (values kept)."""
    NO_SOLUTION = 3
    """No physical root in the bracket (e.g. the motor cannot start at this duty, or a bad request)."""
    NON_FINITE = 4
    """An input was NaN or infinite."""
    DATA_ERROR = 5
    """Solved, but the propeller does better than momentum theory allows (static FM > 1, or in axial flight
    an efficiency above the Froude limit): its data are wrong or read outside their measured range (values
    kept so the data can be inspected)."""
    POWER_LIMIT = 6
    """The pack cannot deliver the requested power (no real root of V_oc I - R I^2 = P)."""


def as_float_array(value: ArrayLike) -> FloatArray:
    """Return ``value`` as a float64 ndarray (0-d for scalars) without copying when possible."""
    return np.asarray(value, dtype=np.float64)
