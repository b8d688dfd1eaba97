"""The multirotor flight-state numbers explain and compare list: tilt, inflow, ideal power, power against hover."""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

import numpy as np

from server.physics import forward_flight
from server.physics.forward_flight import PROFILE_POWER_GROWTH, FlightState
from server.physics.propeller import disk_area_m2

from .library import MissionSpec


def hover_of(mission: MissionSpec) -> MissionSpec:
    """The same craft hovering (no airspeed, no climb; coaxial pairs stay coaxial): what "vs hover" compares to."""
    return replace(mission, kind="hover", climb_rate_m_s=0.0)


def hover_state(mission: MissionSpec, mass_kg: Any, diameter_m: Any) -> FlightState:
    """The flight state of the same craft hovering (what the ideal power "vs hover" compares to)."""
    return forward_flight.flight_state(forward_flight.weight_n(mass_kg), float(mission.rotor_count),
                                       disk_area_m2(diameter_m), mission.density_kg_m3, coaxial=mission.coaxial)


def _f(value: Any) -> float | None:
    number = float(np.ravel(np.asarray(value, dtype=np.float64))[0])
    return number if math.isfinite(number) else None


def described(mission: MissionSpec) -> dict[str, Any]:
    """The flight a mission asks for, as :func:`flight_report` lists it."""
    return {"kind": mission.kind, "airspeed_m_s": mission.horizontal_airspeed_m_s,
            "climb_rate_m_s": mission.climb_rate_m_s, "drag_area_m2": mission.drag_area_m2,
            "coaxial": mission.coaxial}


def flight_report(mission: MissionSpec | dict[str, Any], state: FlightState, hover_ideal_power_w: Any,
                  omega_rad_s: Any, diameter_m: Any, electrical_power_w: Any,
                  hover_electrical_power_w: Any) -> dict[str, Any]:
    """One candidate's flight state in SI (per rotor unless named craft), for the API and the pages.

    ``mission``: the mission, or the :func:`described` fields of a flight without one (predict);
    ``hover_ideal_power_w``: ideal power of one rotor of the same craft hovering [W]; ``electrical_power_w`` and
    ``hover_electrical_power_w``: craft electrical power at the cruise point and in hover [W].
    """
    omega = _f(omega_rad_s)
    edgewise = _f(state.edgewise_speed_m_s)
    diameter = _f(diameter_m)
    mu = None if not (omega and diameter) or edgewise is None else edgewise / (omega * 0.5 * diameter)
    power, hover = _f(electrical_power_w), _f(hover_electrical_power_w)
    ideal, hover_ideal = _f(state.ideal_power_w), _f(hover_ideal_power_w)
    return {
        **(described(mission) if isinstance(mission, MissionSpec) else mission),
        "induced_factor": _f(state.induced_factor), "tilt_deg": None if (t := _f(state.tilt_rad)) is None
        else math.degrees(t), "drag_n": _f(state.drag_n), "thrust_per_rotor_n": _f(state.thrust_n),
        "induced_velocity_m_s": _f(state.induced_velocity_m_s),
        "hover_induced_velocity_m_s": _f(state.hover_induced_velocity_m_s),
        "through_disk_speed_m_s": _f(state.through_disk_speed_m_s), "edgewise_speed_m_s": edgewise,
        "edgewise_advance_ratio": mu,
        "profile_power_factor": None if mu is None else 1.0 + PROFILE_POWER_GROWTH * mu * mu,
        "ideal_power_per_rotor_w": ideal, "hover_ideal_power_per_rotor_w": hover_ideal,
        "electrical_power_w": power, "hover_electrical_power_w": hover,
        "power_vs_hover": None if not (power and hover) else power / hover,
    }
