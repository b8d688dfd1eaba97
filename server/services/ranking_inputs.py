"""Snapshot a mission and the team's parts (calibrations applied) as plain JSON, and turn it into engine inputs.

A ranking always runs from its stored snapshot, so re-running a stored ranking reproduces it exactly.
"""

from __future__ import annotations

import math
from typing import Any, Literal, overload

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.models import PART_MODELS, Mission
from server.physics.propeller import PropellerAxis, PropellerTable
from server.selection import (
    EscLibrary,
    MissionSpec,
    MotorLibrary,
    PackLibrary,
    PartsLibrary,
    PropellerLibrary,
    Segment,
)
from server.services import power_system as ps

INCH_M = 0.0254
PART_FIELDS = {
    "batteries": [
        "name",
        "part_number",
        "mass_g",
        "unit_cost",
        "chemistry",
        "cells_series",
        "cells_parallel",
        "capacity_mah",
        "cell_resistance_mohm",
        "max_continuous_c",
    ],
    "escs": [
        "name",
        "part_number",
        "mass_g",
        "unit_cost",
        "continuous_current_a",
        "min_cells",
        "max_cells",
        *ps.ESC_LOSS_FIELDS,
    ],
    "motors": [
        "name",
        "part_number",
        "mass_g",
        "unit_cost",
        "kv_rpm_per_v",
        "winding_resistance_ohm",
        "no_load_current_a",
        "inductance_uh",
        "max_current_a",
        "max_cells",
        "thermal_resistance_k_per_w",
        "thermal_time_constant_s",
        "max_winding_temperature_c",
    ],
    "propellers": [
        "name",
        "part_number",
        "mass_g",
        "unit_cost",
        "diameter_in",
        "pitch_in",
        "ct",
        "cp",
        "static_table",
        "forward_table",
        "application",
    ],
}
MISSION_FIELDS = [
    "name",
    "kind",
    "payload_mass_g",
    "altitude_m",
    "temperature_offset_c",
    "cruise_airspeed_m_s",
    "lift_to_drag",
    "min_thrust_to_weight",
    "duty_min",
    "duty_max",
    "min_endurance_min",
    "usable_fraction",
    "cutoff_v_per_cell",
    "esc_current_margin",
    "pack_current_fraction",
    "cruise_state_of_charge",
    "max_all_up_mass_g",
    "min_thrust_to_weight_motor_out",
    "climb_rate_m_s",
    "temperature_effects",
    "burst_s",
    "cold_day_temperature_c",
    "segments",
    "reserve_min",
]
AIRFRAME_FIELDS = ["name", "rotor_count", "frame_mass_g", "max_prop_diameter_in", "max_packs_in_parallel",
                   "drag_area_m2", "coaxial"]


def mission_dicts(mission: Mission) -> tuple[dict[str, Any], dict[str, Any]]:
    """The mission's and its airframe's fields the engine reads, as plain JSON values."""
    return ({"id": mission.id, **{f: getattr(mission, f) for f in MISSION_FIELDS}},
            {"id": mission.airframe.id, **{f: getattr(mission.airframe, f) for f in AIRFRAME_FIELDS}})


def snapshot(session: Session, *, team_id: int, mission: Mission,
             only: dict[str, list[int]] | None = None) -> dict[str, Any]:
    """The mission, its airframe and every active part, each resolved by :func:`power_system.resolve_part`
    (calibrated values replace entered ones, defaults fill the rest), with the source of every value.

    ``only`` (part kind -> ids) snapshots just those parts, archived or not (one power system to explain).
    """
    parts: dict[str, list[dict[str, Any]]] = {}
    for kind, model in PART_MODELS.items():
        stmt = select(model).where(model.team_id == team_id)
        if only is None:
            stmt = stmt.where(model.archived.is_(False))
        else:
            stmt = stmt.where(model.id.in_(only.get(kind, [])))
        rows = session.scalars(stmt.order_by(model.id))
        parts[kind] = []
        for part in rows:
            resolved = ps.resolve_part(session, team_id, kind, part, extra_fields=PART_FIELDS[kind])
            parts[kind].append(
                {
                    "id": part.id,
                    **{f: resolved.values.get(f) for f in PART_FIELDS[kind]},
                    "calibrated": sorted(k for k, s in resolved.sources.items() if s == "calibrated"),
                    "sources": {k: s for k, s in resolved.sources.items() if s != "part"},
                    "uncertainty": part_uncertainty(resolved),
                }
            )
    mission_values, airframe_values = mission_dicts(mission)
    return {"mission": mission_values, "airframe": airframe_values, "parts": parts}


def part_uncertainty(resolved: ps.Resolved) -> dict[str, Any]:
    """What the snapshot keeps of a resolved part's uncertainty (JSON values): standard uncertainties, origins,
    the calibration's covariance and residual (the ranking's bands are drawn from them)."""
    return {"sd": {k: v for k, v in resolved.sd.items() if v}, "origins": dict(resolved.origins),
            "covariance": resolved.covariance, "residual_rms": resolved.residual_rms}


def _assumed(rows: list[dict[str, Any]]) -> np.ndarray:
    """How many model parameters of each part rest on priors (the ranking's tie-break prefers measured parts)."""
    return np.array([sum(1 for source in r.get("sources", {}).values() if source == "prior") for r in rows],
                    dtype=np.float64)


def _num(value: Any, missing: float = np.nan) -> float:
    return missing if value is None else float(value)


def _column(rows: list[dict[str, Any]], name: str, scale: float = 1.0, missing: float = np.nan) -> np.ndarray:
    return np.array([_num(r.get(name), missing) * (scale if r.get(name) is not None else 1.0) for r in rows])


@overload
def _table(
    rows: list[dict[str, Any]], key: Literal["static_table"], axis_key: str, axis: PropellerAxis
) -> PropellerTable: ...
@overload
def _table(rows: list[dict[str, Any]], key: str, axis_key: str, axis: PropellerAxis) -> PropellerTable | None: ...
def _table(rows: list[dict[str, Any]], key: str, axis_key: str, axis: PropellerAxis) -> PropellerTable | None:
    if key == "forward_table" and not any(r.get(key) for r in rows):
        return None
    diameters = [_num(r.get("diameter_in")) * INCH_M for r in rows]
    tables = []
    for r in rows:
        data = r.get(key)
        if data:
            tables.append(([d[axis_key] for d in data], [d["ct"] for d in data], [d["cp"] for d in data]))
        elif key == "static_table" and r.get("ct") is not None and r.get("cp") is not None:
            tables.append(([0.0], [r["ct"]], [r["cp"]]))
        else:
            tables.append(([np.nan], [np.nan], [np.nan]))
    if not tables:
        return PropellerTable(np.zeros(0), np.zeros((0, 1)), np.zeros((0, 1)), np.zeros((0, 1)), axis)
    return PropellerTable.from_rows(diameters, tables, axis=axis)


INF = np.inf
LIBRARY_COLUMNS: dict[str, dict[str, tuple[str, float, float]]] = {
    "batteries": {
        "cells_series": ("cells_series", 1.0, np.nan), "cells_parallel": ("cells_parallel", 1.0, np.nan),
        "capacity_ah": ("capacity_mah", 1e-3, np.nan), "cell_resistance_ohm": ("cell_resistance_mohm", 1e-3, np.nan),
        "max_continuous_c": ("max_continuous_c", 1.0, np.nan),
        "mass_kg": ("mass_g", 1e-3, np.nan), "cost": ("unit_cost", 1.0, np.nan),
    },
    "escs": {
        "continuous_current_a": ("continuous_current_a", 1.0, np.nan), "min_cells": ("min_cells", 1.0, np.nan),
        "max_cells": ("max_cells", 1.0, INF), "r_on_path_ohm": ("r_on_path_ohm", 1.0, np.nan),
        "switching_frequency_hz": ("pwm_frequency_khz", 1e3, np.nan),
        "switching_time_s": ("switching_time_ns", 1e-9, np.nan), "dead_time_s": ("dead_time_ns", 1e-9, np.nan),
        "diode_drop_v": ("diode_drop_v", 1.0, np.nan), "input_esr_ohm": ("input_esr_ohm", 1.0, np.nan),
        "pwm_loss_coefficient": ("k_pwm", 1.0, np.nan),
        "mass_kg": ("mass_g", 1e-3, np.nan), "cost": ("unit_cost", 1.0, np.nan),
    },
    "motors": {
        "kv_rpm_per_v": ("kv_rpm_per_v", 1.0, np.nan), "resistance_ohm": ("winding_resistance_ohm", 1.0, np.nan),
        "no_load_current_a": ("no_load_current_a", 1.0, np.nan), "inductance_h": ("inductance_uh", 1e-6, np.nan),
        "max_current_a": ("max_current_a", 1.0, INF), "max_cells": ("max_cells", 1.0, INF),
        "mass_kg": ("mass_g", 1e-3, np.nan), "cost": ("unit_cost", 1.0, np.nan),
        # NaN: the priors of server.physics.priors.thermal_defaults (older snapshots have none of them)
        "thermal_resistance_k_per_w": ("thermal_resistance_k_per_w", 1.0, np.nan),
        "thermal_time_constant_s": ("thermal_time_constant_s", 1.0, np.nan),
        "max_winding_temperature_c": ("max_winding_temperature_c", 1.0, np.nan),
    },
}
"""Library array <- (part field, scale to SI, value when the part has none), per part kind."""


def _columns(rows: list[dict[str, Any]], kind: str) -> dict[str, np.ndarray]:
    return {attr: _column(rows, name, scale, missing) for attr, (name, scale, missing) in LIBRARY_COLUMNS[kind].items()}


def engine_inputs(snap: dict[str, Any]) -> tuple[PartsLibrary, MissionSpec]:
    """Engine inputs (SI arrays) from a snapshot; unknown values become NaN, unstated limits infinity."""
    p = snap["parts"]
    b, e, m, pr = p["batteries"], p["escs"], p["motors"], p["propellers"]
    packs = PackLibrary(
        ids=np.array([r["id"] for r in b], dtype=np.int64),
        full_voltage_per_cell_v=np.array([ps.FULL_VOLTAGE_PER_CELL_V[r["chemistry"]] for r in b]),
        assumed=_assumed(b),
        **_columns(b, "batteries"),
    )
    escs = EscLibrary(ids=np.array([r["id"] for r in e], dtype=np.int64), assumed=_assumed(e), **_columns(e, "escs"))
    motors = MotorLibrary(ids=np.array([r["id"] for r in m], dtype=np.int64), assumed=_assumed(m),
                          **_columns(m, "motors"))
    propellers = PropellerLibrary(
        ids=np.array([r["id"] for r in pr], dtype=np.int64),
        diameter_m=_column(pr, "diameter_in", INCH_M),
        diameter_in=_column(pr, "diameter_in"),
        static=_table(pr, "static_table", "rpm", "rpm"),
        forward=_table(pr, "forward_table", "j", "advance_ratio"),
        mass_kg=_column(pr, "mass_g", 1e-3),
        cost=_column(pr, "unit_cost"),
        assumed=_assumed(pr),
        application=np.array([r.get("application") or "any" for r in pr], dtype=str),  # older snapshots: any
    )
    mission = mission_spec(snap["mission"], snap["airframe"])
    return PartsLibrary(packs, escs, motors, propellers), mission


def mission_spec(ms: dict[str, Any], af: dict[str, Any]) -> MissionSpec:
    """The engine's mission (SI) from the mission's and airframe's fields (:func:`mission_dicts`)."""
    inf = np.inf
    return MissionSpec(
        rotor_count=int(af["rotor_count"]),
        frame_mass_kg=af["frame_mass_g"] / 1000,
        kind=ms["kind"],
        payload_kg=ms["payload_mass_g"] / 1000,
        max_prop_diameter_in=_num(af["max_prop_diameter_in"], inf),
        max_packs_in_parallel=int(af["max_packs_in_parallel"]),
        cruise_airspeed_m_s=_num(ms["cruise_airspeed_m_s"], 0.0),
        lift_to_drag=_num(ms["lift_to_drag"]),
        altitude_m=ms["altitude_m"],
        temperature_offset_c=ms["temperature_offset_c"],
        min_thrust_to_weight=ms["min_thrust_to_weight"],
        duty_min=ms["duty_min"],
        duty_max=ms["duty_max"],
        min_endurance_min=ms["min_endurance_min"],
        usable_fraction=ms["usable_fraction"],
        cutoff_v_per_cell=ms["cutoff_v_per_cell"],
        esc_current_margin=ms["esc_current_margin"],
        pack_current_fraction=ms["pack_current_fraction"],
        cruise_state_of_charge=ms["cruise_state_of_charge"],
        max_all_up_mass_kg=None if ms["max_all_up_mass_g"] is None else ms["max_all_up_mass_g"] / 1000,
        min_thrust_to_weight_motor_out=ms.get("min_thrust_to_weight_motor_out"),  # absent in older snapshots
        climb_rate_m_s=float(ms.get("climb_rate_m_s") or 0.0),  # absent in older snapshots: level
        drag_area_m2=_num(af.get("drag_area_m2"), 0.0),  # not stated: no airframe drag
        coaxial=bool(af.get("coaxial") or False),
        temperature_effects=bool(ms.get("temperature_effects") or False),
        burst_s=float(ms.get("burst_s") or 0.0),
        cold_day_temperature_c=ms.get("cold_day_temperature_c"),
        segments=segments_of(ms.get("segments") or [], ms.get("cruise_airspeed_m_s")),
        reserve_min=float(ms.get("reserve_min") or 0.0),
    )


def segments_of(rows: list[dict[str, Any]], cruise_airspeed_m_s: float | None) -> tuple[Segment, ...]:
    """The engine's segments (durations in s) from the stored ones (a duration, a distance or a height)."""
    out = []
    for row in rows:
        kind = row["kind"]
        airspeed = float(row.get("airspeed_m_s") or 0.0)
        rate = float(row.get("climb_rate_m_s") or 0.0)
        if row.get("duration_s") is not None:
            duration = float(row["duration_s"])
        elif row.get("distance_m") is not None:  # forward at its own airspeed, cruise at the mission's (ground speed)
            speed = airspeed if kind == "forward" else math.sqrt(max(float(cruise_airspeed_m_s or 0.0)**2 - rate**2,
                                                                      0.0))
            duration = float(row["distance_m"]) / speed
        else:
            duration = float(row["height_m"]) / abs(rate)
        out.append(Segment(kind=kind, duration_s=duration, airspeed_m_s=airspeed if kind == "forward" else 0.0,
                           climb_rate_m_s=abs(rate) if kind in ("climb", "descent") else rate,
                           label=str(row.get("label") or "")))
    return tuple(out)


def mission_spec_of(mission: Mission) -> MissionSpec:
    """The engine's mission for a saved mission (the same mapping a ranking snapshot goes through)."""
    return mission_spec(*mission_dicts(mission))
