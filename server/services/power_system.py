"""Turn saved parts and inline parameters into physics parameters, remembering where each value came from.

Sources: ``part`` (a saved part's field), ``request`` (given in the request), ``default`` (the engine's
documented default, physics.md reference model v1), ``calibrated`` (fitted from the team's bench runs).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from pydantic import BaseModel
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput
from server.models import Calibration, PartColumns
from server.physics._types import as_float_array
from server.physics.battery import LIHV_FULL_V_PER_CELL, LIPO_FULL_V_PER_CELL
from server.physics.esc import EscParams
from server.physics.motor import DEFAULT_INDUCTANCE_H, MotorParams
from server.physics.propeller import PropellerTable
from server.services import parts as parts_service

INCH_M = 0.0254
FULL_VOLTAGE_PER_CELL_V = {"lipo": LIPO_FULL_V_PER_CELL, "lihv": LIHV_FULL_V_PER_CELL, "liion": LIPO_FULL_V_PER_CELL}
_ESC_DEFAULTS = EscParams()
ESC_DEFAULTS: dict[str, float] = {
    "r_on_path_ohm": float(_ESC_DEFAULTS.on_path_resistance_ohm),
    "pwm_frequency_khz": float(_ESC_DEFAULTS.switching_frequency_hz) / 1e3,
    "switching_time_ns": float(_ESC_DEFAULTS.transition_time_s) * 1e9,
    "dead_time_ns": float(_ESC_DEFAULTS.dead_time_s) * 1e9,
    "diode_drop_v": float(_ESC_DEFAULTS.body_diode_drop_v),
    "input_esr_ohm": float(_ESC_DEFAULTS.input_esr_ohm),
    "k_pwm": float(_ESC_DEFAULTS.pwm_loss_coefficient),
}
MOTOR_DEFAULTS: dict[str, float] = {"inductance_uh": DEFAULT_INDUCTANCE_H * 1e6}
UNITS = {
    "r_on_path_ohm": "Ω", "pwm_frequency_khz": "kHz", "switching_time_ns": "ns", "dead_time_ns": "ns",
    "diode_drop_v": "V", "input_esr_ohm": "Ω", "k_pwm": "", "continuous_current_a": "A",
    "kv_rpm_per_v": "rpm/V", "winding_resistance_ohm": "Ω", "no_load_current_a": "A", "inductance_uh": "µH",
    "max_current_a": "A", "diameter_in": "in", "pitch_in": "in", "ct": "", "cp": "", "cells_series": "cells",
    "cells_parallel": "cells", "capacity_mah": "mAh", "cell_resistance_mohm": "mΩ", "max_continuous_c": "C",
    "supply_voltage_v": "V", "chemistry": "", "wiring_resistance_ohm": "Ω", "packs_in_parallel": "packs",
    "state_of_charge": "", "blades": "blades", "static_table": "", "forward_table": "",
}


@dataclass
class Resolved:
    """Merged values of one part and the source of each."""

    kind: str
    values: dict[str, Any]
    sources: dict[str, str] = field(default_factory=dict)
    part_id: int | None = None

    def report(self) -> dict[str, dict[str, Any]]:
        out = {}
        for name, value in self.values.items():
            if name in self.sources:
                out[name] = {"value": value, "source": self.sources[name], "unit": UNITS.get(name, "")}
        return out

    def require(self, names: list[str], where: str) -> None:
        missing = [n for n in names if self.values.get(n) is None]
        if missing:
            raise InvalidInput(
                "Missing model parameters",
                [FieldError(f"{where}.{n}", "required: not given, and the saved part has none (a bench run "
                            "calibration can supply it)") for n in missing],
            )


def calibrated_values(session: Session, *, team_id: int, kind: str, part_id: int) -> dict[str, Any]:
    """Identified parameters of the part's newest active calibration (fixed ones are not measurements)."""
    row = session.scalar(
        select(Calibration)
        .where(Calibration.team_id == team_id, Calibration.part_kind == kind, Calibration.part_id == part_id,
               Calibration.active.is_(True))
        .order_by(Calibration.created_at.desc(), Calibration.id.desc())
    )
    if row is None:
        return {}
    return {name: p["value"] for name, p in row.parameters.items() if p.get("status") == "identified"}


def from_part(session: Session, team_id: int, kind: str, part: PartColumns, fields: list[str],
              use_calibration: bool = True) -> tuple[dict[str, Any], dict[str, str]]:
    """A saved part's fields, with calibrated values replacing them (measured wins over entered)."""
    values: dict[str, Any] = {}
    sources: dict[str, str] = {}
    for name in fields:
        value = getattr(part, name, None)
        if value is not None:
            values[name], sources[name] = value, "part"
    if use_calibration:
        for name, value in calibrated_values(session, team_id=team_id, kind=kind, part_id=part.id).items():
            if name in fields:
                values[name], sources[name] = value, "calibrated"
    return values, sources


def resolve(session: Session | None, team_id: int | None, kind: str, given: BaseModel, where: str,
            fields: list[str], defaults: Mapping[str, object] | None = None) -> Resolved:
    """Saved part (when ``given.id``; calibration wins) overlaid with the request's fields, then defaults."""
    values: dict[str, Any] = {}
    sources: dict[str, str] = {}
    part_id = getattr(given, "id", None)
    if part_id is not None:
        if session is None or team_id is None:
            raise InvalidInput("Parts by id need a team", [FieldError(f"{where}.id", "no team context for ids")])
        try:
            part = parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
        except Exception as exc:
            raise InvalidInput("Unknown part", [FieldError(f"{where}.id", str(exc))]) from None
        values, sources = from_part(session, team_id, kind, part, fields)
    for name, value in given.model_dump(exclude_unset=True, exclude={"id"}, mode="json").items():
        if value is not None:
            values[name], sources[name] = value, "request"
    for name, value in (defaults or {}).items():
        if values.get(name) is None:
            values[name], sources[name] = value, "default"
    return Resolved(kind, values, sources, part_id)


ESC_FIELDS = [*ESC_DEFAULTS, "continuous_current_a"]
MOTOR_FIELDS = ["kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a", "inductance_uh", "max_current_a"]
PROP_FIELDS = ["diameter_in", "pitch_in", "blades", "ct", "cp", "static_table", "forward_table"]
BATTERY_FIELDS = ["chemistry", "cells_series", "cells_parallel", "capacity_mah", "cell_resistance_mohm",
                  "max_continuous_c"]


def esc_params(esc: Resolved) -> EscParams:
    v = esc.values
    return EscParams(
        on_path_resistance_ohm=v["r_on_path_ohm"], switching_frequency_hz=v["pwm_frequency_khz"] * 1e3,
        transition_time_s=v["switching_time_ns"] * 1e-9, dead_time_s=v["dead_time_ns"] * 1e-9,
        body_diode_drop_v=v["diode_drop_v"], input_esr_ohm=v["input_esr_ohm"], pwm_loss_coefficient=v["k_pwm"],
        max_current_a=as_float_array(v.get("continuous_current_a") or np.inf),
    )


def motor_params(motor: Resolved) -> MotorParams:
    motor.require(["kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a"], "motor")
    v = motor.values
    return MotorParams(
        kv_rpm_per_v=v["kv_rpm_per_v"], resistance_ohm=v["winding_resistance_ohm"],
        no_load_current_a=v["no_load_current_a"], inductance_h=v["inductance_uh"] * 1e-6,
        max_current_a=as_float_array(v.get("max_current_a") or np.inf),
    )


def propeller_tables(prop: Resolved) -> tuple[PropellerTable, PropellerTable | None]:
    """(static table vs rpm, forward table vs J or None); constants become a one-point table."""
    prop.require(["diameter_in"], "propeller")
    v = prop.values
    diameter_m = v["diameter_in"] * INCH_M
    if v.get("static_table"):
        table = v["static_table"]
        columns = ([r["rpm"] for r in table], [r["ct"] for r in table], [r["cp"] for r in table])
        static = PropellerTable.from_rows(diameter_m, [columns], axis="rpm")
    elif v.get("ct") is not None and v.get("cp") is not None:
        static = PropellerTable.constant(diameter_m, v["ct"], v["cp"])
    else:
        raise InvalidInput("Missing propeller data", [
            FieldError("propeller.ct", "give ct and cp, or a static_table (a bench run calibration can supply it)")
        ])
    forward = None
    if v.get("forward_table"):
        table = v["forward_table"]
        columns = ([r["j"] for r in table], [r["ct"] for r in table], [r["cp"] for r in table])
        forward = PropellerTable.from_rows(diameter_m, [columns], axis="advance_ratio")
    return static, forward
