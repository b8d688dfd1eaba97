"""Predict's winding temperatures: each point's steady winding temperature and a full-throttle burst.

The points are solved with R as stated (predict's rule); each point's steady temperature is the coupled solve of
:func:`server.physics.thermal.steady_winding_temperature_c` at the point's motor current (exact for points by
thrust, whose current does not depend on R; for points by duty or rpm the current at the stated R). The burst
starts from the temperature of the first point requested by thrust (the hover or cruise point; the first point
when none is) at the full-throttle current (docs/model-reference.md#heat).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput
from server.physics import drive, priors, thermal
from server.physics._types import CELSIUS_TO_KELVIN_K
from server.physics.operating_point import OperatingPoint
from server.services import parts as parts_service

CURVE_STEPS = 60
"""Points of the burst's temperature curve (the page's chart)."""


def _f(value: Any) -> float | None:
    number = float(value)
    return number if math.isfinite(number) else None


def thermal_values(session: Session | None, team_id: int | None, motor: Any, values: dict[str, Any],
                   mass_g: float | None) -> tuple[dict[str, float], dict[str, str]]:
    """R_th [K/W], tau [s] and the maximum [°C] of the predicted motor, and where each comes from (part, request,
    prior); a prior R_th needs the motor's mass (the saved part's, or the request's ``motor_mass_g``)."""
    if mass_g is None and getattr(motor, "id", None) is not None and session is not None and team_id is not None:
        mass_g = parts_service.get_part(session, team_id=team_id, kind="motors", part_id=motor.id).mass_g
    stated = {name: values.get(name) for name in priors.THERMAL_PRIORS}
    if stated["thermal_resistance_k_per_w"] is None and not mass_g:
        raise InvalidInput("Motor thermal data", [FieldError(
            "heat.motor_mass_g", "the winding temperature needs the motor's thermal resistance "
            "(motor.thermal_resistance_k_per_w) or its mass, for the assumed 0.1 K kg/W ÷ mass")])
    mass_kg = (mass_g or math.nan) / 1000.0
    filled = priors.thermal_defaults(mass_kg, *(math.nan if v is None else float(v) for v in stated.values()))
    sources = {name: "prior" if stated[name] is None else "stated" for name in stated}
    return {name: float(v) for name, v in zip(stated, filled, strict=True)}, sources


def heat(system: Any, op: OperatingPoint, kinds: list[str], burst_s: float, mass_g: float | None,
         session: Session | None, team_id: int | None) -> dict[str, Any]:
    """The ``heat`` block of a prediction: steady winding temperature per point, and the burst."""
    values, sources = thermal_values(session, team_id, system.request.motor, system.motor.values, mass_g)
    r_th, tau, t_max = (values[k] for k in priors.THERMAL_PRIORS)
    motor = system.motor_params
    air_c = system.temperature_k - CELSIUS_TO_KELVIN_K
    emf = op.omega_rad_s / motor.kv_rad_s_per_v
    with np.errstate(invalid="ignore", divide="ignore"):
        steady, runaway = thermal.steady_winding_temperature_c(air_c, op.motor_current_a, motor.resistance_ohm,
                                                               motor.no_load_current_a * emf, r_th)
    points = [{"winding_temperature_c": _f(t), "runaway": bool(r), "over_limit": bool(t > t_max) or bool(r)}
              for t, r in zip(np.ravel(steady), np.ravel(runaway), strict=True)]
    out: dict[str, Any] = {"air_temperature_c": air_c, "burst_s": burst_s, "points": points,
                           "thermal_resistance_k_per_w": r_th, "thermal_time_constant_s": tau,
                           "max_winding_temperature_c": t_max, "sources": sources, "burst": None}
    first = next((i for i, kind in enumerate(kinds) if kind == "thrust_n"), 0)
    start = points[first]["winding_temperature_c"] if points else None
    if burst_s > 0 and start is not None:
        full = drive.full_throttle(**system.solve_kwargs())
        current = float(np.ravel(full.motor_current_a)[0])
        no_load = float(motor.no_load_current_a) * float(np.ravel(full.omega_rad_s)[0]) / float(motor.kv_rad_s_per_v)
        times = np.linspace(0.0, burst_s, CURVE_STEPS + 1)
        curve = thermal.winding_temperature_after_c(start, times, air_c, current, motor.resistance_ohm, no_load,
                                                    r_th, tau)
        end = _f(curve[-1])
        out["burst"] = {"from_point": first + 1, "from_c": start, "after_c": end,
                        "full_throttle_current_a": _f(current), "over_limit": end is None or end > t_max,
                        "curve": {"t_s": [float(t) for t in times], "temperature_c": [_f(v) for v in curve]}}
    return out


def warnings(block: dict[str, Any]) -> list[str]:
    """Plain-language notes when a winding runs away or passes its maximum."""
    notes = []
    limit = block["max_winding_temperature_c"]
    for i, p in enumerate(block["points"], start=1):
        if p["runaway"]:
            notes.append(f"point {i}: thermal runaway of the winding (no steady temperature at this current)")
        elif p["over_limit"]:
            notes.append(f"point {i}: winding {p['winding_temperature_c']:.0f} °C is above its maximum {limit:g} °C")
    burst = block.get("burst")
    if burst and burst["over_limit"]:
        notes.append(f"after the {block['burst_s']:g} s full-throttle burst the winding is above its maximum "
                     f"{limit:g} °C")
    return notes
