"""One power-system assembly: saved parts and inline parameters → physics parameters, and where each came from.

Every use of a part (predict, candidate evaluation for shortlists and compare, the ranking snapshot, the bench
run's model curve, calibration start values) resolves it here, by one rule:

1. the saved part's fields (source ``part``),
2. replaced by the identified values of its active calibration (source ``calibrated``),
3. replaced by what a request states (source ``request``; predict only),
4. what is still missing takes the engine's documented default (source ``default``).

:class:`PowerSystem` then turns four resolved parts into the physics engine's parameter objects.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from pydantic import BaseModel
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput, NotFound
from server.models import Calibration, PartColumns
from server.physics import priors
from server.physics._types import as_float_array
from server.physics.battery import CELL_VOLTAGES_V, PackParams, full_voltage_per_cell_v, nominal_voltage_per_cell_v
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from server.services import parts as parts_service

INCH_M = 0.0254
FULL_VOLTAGE_PER_CELL_V = {chemistry: full for chemistry, (full, _) in CELL_VOLTAGES_V.items()}
ESC_LOSS_FIELDS = [*priors.ESC_PRIORS, "k_pwm"]
"""The ESC's loss parameters (each a part field; unstated ones take priors)."""
BATTERY_DEFAULTS: dict[str, Any] = {"cells_parallel": 1, "chemistry": "lipo"}
DEFAULTS: dict[str, Mapping[str, Any]] = {"batteries": BATTERY_DEFAULTS}
"""Settings (not model parameters) a part takes when it states none; model parameters take priors instead
(:mod:`server.physics.priors`)."""
UNITS = {
    "r_on_path_ohm": "Ω", "pwm_frequency_khz": "kHz", "switching_time_ns": "ns", "dead_time_ns": "ns",
    "diode_drop_v": "V", "input_esr_ohm": "Ω", "k_pwm": "", "continuous_current_a": "A",
    "kv_rpm_per_v": "rpm/V", "winding_resistance_ohm": "Ω", "no_load_current_a": "A", "inductance_uh": "µH",
    "max_current_a": "A", "diameter_in": "in", "pitch_in": "in", "ct": "", "cp": "", "cells_series": "cells",
    "cells_parallel": "cells", "capacity_mah": "mAh", "cell_resistance_mohm": "mΩ", "max_continuous_c": "C",
    "supply_voltage_v": "V", "chemistry": "", "wiring_resistance_ohm": "Ω", "packs_in_parallel": "packs",
    "state_of_charge": "", "blades": "blades", "static_table": "", "forward_table": "",
    "thermal_resistance_k_per_w": "K/W", "thermal_time_constant_s": "s", "max_winding_temperature_c": "°C",
}
ESC_FIELDS = [*ESC_LOSS_FIELDS, "continuous_current_a"]
MOTOR_FIELDS = ["kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a", "inductance_uh", "max_current_a",
                *priors.THERMAL_PRIORS]
PROP_FIELDS = ["diameter_in", "pitch_in", "blades", "ct", "cp", "static_table", "forward_table"]
BATTERY_FIELDS = ["chemistry", "cells_series", "cells_parallel", "capacity_mah", "cell_resistance_mohm",
                  "max_continuous_c"]
MODEL_FIELDS: dict[str, list[str]] = {
    "batteries": BATTERY_FIELDS, "escs": ESC_FIELDS, "motors": MOTOR_FIELDS, "propellers": PROP_FIELDS,
}
"""The fields of each part kind the physics reads."""


@dataclass
class Resolved:
    """Merged values of one part: the source, standard uncertainty and origin of each model parameter."""

    kind: str
    values: dict[str, Any]
    sources: dict[str, str] = field(default_factory=dict)
    part_id: int | None = None
    sd: dict[str, float] = field(default_factory=dict)
    """Standard uncertainty of each model parameter, in the field's unit (0: exact)."""
    origins: dict[str, str] = field(default_factory=dict)
    """Where a prior or a calibrated value comes from (plain words)."""
    covariance: dict[str, Any] | None = None
    """The active calibration's covariance of its identified parameters: {names, matrix}."""
    residual_rms: float | None = None
    """The active calibration's relative residual (model against its own bench runs). [-]"""

    def report(self) -> dict[str, dict[str, Any]]:
        """Each value with its source; ``used`` is false for constants a table supersedes (CT/CP beside a
        static table, which the model reads instead)."""
        out = {}
        superseded = {"ct", "cp"} if self.kind == "propellers" and self.values.get("static_table") else set()
        for name, value in self.values.items():
            if name in self.sources:
                out[name] = {"value": value, "source": self.sources[name], "unit": UNITS.get(name, ""),
                             "sd": self.sd.get(name), "origin": self.origins.get(name),
                             "used": name not in superseded}
        return out

    def require(self, names: list[str], where: str) -> None:
        missing = [n for n in names if self.values.get(n) is None]
        if missing:
            raise InvalidInput(
                "Missing model parameters",
                [FieldError(f"{where}.{n}", "required: not given, and the saved part has none (a bench run "
                            "calibration can supply it)") for n in missing],
            )

    @property
    def assumed(self) -> list[str]:
        """Model parameters that rest on a prior (not stated by the part, not measured)."""
        return sorted(name for name, source in self.sources.items() if source == "prior")

    def state(self, name: str, value: Any, source: str) -> None:
        """A value stated by the part or the request: its datasheet uncertainty (not measured)."""
        self.values[name], self.sources[name] = value, source
        relative = priors.STATED_RELATIVE_SD.get(name)
        if relative is not None and isinstance(value, int | float):
            self.sd[name] = abs(float(value)) * relative
        self.origins.pop(name, None)

    def calibrate(self, row: Calibration) -> None:
        """The identified parameters of an active calibration (standard errors, covariance, residual)."""
        for name, p in row.parameters.items():
            if p.get("status") != "identified" or name not in MODEL_FIELDS[self.kind]:
                continue
            self.values[name], self.sources[name] = p["value"], "calibrated"
            stderr = p.get("stderr")
            if isinstance(stderr, int | float):
                self.sd[name] = float(stderr)
            self.origins[name] = f"calibration {row.id} ({len(row.run_ids or [])} bench runs)"
        self.covariance = row.covariance
        self.residual_rms = row.residual_rms

    def fill_priors(self, session: Session | None, team_id: int | None) -> Resolved:
        """Every still-missing model parameter takes its prior (source ``prior``); other settings their default."""
        table = {"escs": priors.ESC_PRIORS, "motors": priors.MOTOR_PRIORS}.get(self.kind, {})
        for name, prior in table.items():
            if self.values.get(name) is None:
                self._assume(name, prior)
        if self.kind == "escs" and self.values.get("k_pwm") is None:
            self._assume("k_pwm", team_k_pwm_prior(session, team_id))
        for name, value in DEFAULTS.get(self.kind, {}).items():
            if self.values.get(name) is None:
                self.values[name], self.sources[name] = value, "default"
        return self

    def _assume(self, name: str, prior: priors.Prior) -> None:
        self.values[name], self.sources[name] = prior.value, "prior"
        self.sd[name], self.origins[name] = prior.sd_of(), prior.origin


def active_calibration(session: Session, *, team_id: int, kind: str, part_id: int) -> Calibration | None:
    """The part's newest active calibration."""
    return session.scalar(
        select(Calibration)
        .where(Calibration.team_id == team_id, Calibration.part_kind == kind, Calibration.part_id == part_id,
               Calibration.active.is_(True))
        .order_by(Calibration.created_at.desc(), Calibration.id.desc())
    )


def team_k_pwm_prior(session: Session | None, team_id: int | None) -> priors.Prior:
    """k_pwm for an ESC without a bench run: the team's pooled fit over its calibrated ESCs, else the published one.

    Pooled: the inverse-variance weighted mean of the ESCs' identified k_pwm; its uncertainty for a new ESC is the
    spread between ESCs (their sample standard deviation from three calibrated ESCs on, else the published
    between-setup spread) combined with the mean's own standard error. Cached per session.
    """
    if session is None or team_id is None:
        return priors.K_PWM_PUBLISHED
    cache = session.info.setdefault("k_pwm_prior", {})
    if team_id in cache:
        return cache[team_id]  # type: ignore[no-any-return]
    rows = session.scalars(select(Calibration).where(Calibration.team_id == team_id, Calibration.part_kind == "escs",
                                                     Calibration.active.is_(True)))
    found: dict[int, tuple[float, float]] = {}
    for row in rows:  # newest active per ESC
        p = row.parameters.get("k_pwm") or {}
        if p.get("status") == "identified" and isinstance(p.get("value"), int | float):
            if row.part_id not in found or row.id > found[row.part_id][1]:
                found[row.part_id] = (float(p["value"]), float(p.get("stderr") or 0.0))
    if not found:
        prior = priors.K_PWM_PUBLISHED
    else:
        values = np.array([v for v, _ in found.values()])
        errors = np.array([max(e, 1e-6) for _, e in found.values()])
        weights = 1.0 / errors**2
        mean = float(np.sum(weights * values) / np.sum(weights))
        spread = float(np.std(values, ddof=1)) if values.size >= 3 else priors.K_PWM_PUBLISHED.sd
        sd = float(np.hypot(spread, 1.0 / np.sqrt(np.sum(weights))))
        prior = priors.Prior(mean, sd, f"the team's pooled fit over {values.size} calibrated ESC"
                                       f"{'s' if values.size > 1 else ''} (ids {', '.join(map(str, sorted(found)))})")
    cache[team_id] = prior
    return prior


def _saved(session: Session, team_id: int, kind: str, part: PartColumns, use_calibration: bool,
           extra_fields: list[str] | None) -> Resolved:
    """What a saved part states, with its active calibration's identified values replacing them."""
    resolved = Resolved(kind, {}, {}, part.id)
    for name in MODEL_FIELDS[kind] + (extra_fields or []):
        value = getattr(part, name, None)
        if value is not None:
            resolved.state(name, value, "part")
    if use_calibration:
        row = active_calibration(session, team_id=team_id, kind=kind, part_id=part.id)
        if row is not None:
            resolved.calibrate(row)
    return resolved


def resolve_part(session: Session, team_id: int, kind: str, part: PartColumns, *, use_calibration: bool = True,
                 extra_fields: list[str] | None = None) -> Resolved:
    """A saved part's model parameters by the one rule of this module (part, calibration, prior)."""
    return _saved(session, team_id, kind, part, use_calibration, extra_fields).fill_priors(session, team_id)


def resolve(session: Session | None, team_id: int | None, kind: str, given: BaseModel, where: str) -> Resolved:
    """Saved part (when ``given.id``; calibration wins) overlaid with the request's fields, then priors."""
    part_id = getattr(given, "id", None)
    resolved = Resolved(kind, {}, {}, part_id)
    if part_id is not None:
        if session is None or team_id is None:
            raise InvalidInput("Parts by id need a team", [FieldError(f"{where}.id", "no team context for ids")])
        try:
            part = parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
        except NotFound as exc:
            raise InvalidInput("Unknown part", [FieldError(f"{where}.id", str(exc))]) from None
        resolved = _saved(session, team_id, kind, part, True, None)
    for name, value in given.model_dump(exclude_unset=True, exclude={"id"}, mode="json").items():
        if value is not None:
            resolved.state(name, value, "request")
    return resolved.fill_priors(session, team_id)


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


def table_rows(values: Mapping[str, Any], key: str) -> tuple[list[float], list[float], list[float]] | None:
    """(abscissae, CT, CP) of a propeller's static (``rpm``) or forward (``j``) table; a static constant pair is
    a one-point table; None when the propeller has no such data."""
    axis_key = "rpm" if key == "static_table" else "j"
    rows = values.get(key)
    if rows:
        return [r[axis_key] for r in rows], [r["ct"] for r in rows], [r["cp"] for r in rows]
    if key == "static_table" and values.get("ct") is not None and values.get("cp") is not None:
        return [0.0], [values["ct"]], [values["cp"]]
    return None


def propeller_tables(prop: Resolved) -> tuple[PropellerTable, PropellerTable | None]:
    """(static table vs rpm, forward table vs J or None); constants become a one-point table."""
    prop.require(["diameter_in"], "propeller")
    v = prop.values
    diameter_m = v["diameter_in"] * INCH_M
    static_rows = table_rows(v, "static_table")
    if static_rows is None:
        raise InvalidInput("Missing propeller data", [
            FieldError("propeller.ct", "give ct and cp, or a static_table (a bench run calibration can supply it)")
        ])
    static = PropellerTable.from_rows(diameter_m, [static_rows], axis="rpm")
    forward_rows = table_rows(v, "forward_table")
    forward = None if forward_rows is None else PropellerTable.from_rows(diameter_m, [forward_rows],
                                                                          axis="advance_ratio")
    return static, forward


@dataclass
class PowerSystem:
    """Four resolved parts and the physics parameters built from them (one rotor's drive and the pack)."""

    battery: Resolved
    esc: Resolved
    motor: Resolved
    propeller: Resolved

    @classmethod
    def from_parts(cls, session: Session, team_id: int, battery: PartColumns, esc: PartColumns, motor: PartColumns,
                   propeller: PartColumns) -> PowerSystem:
        """The power system of four saved parts (calibrations win, defaults fill the rest)."""
        return cls(*(resolve_part(session, team_id, kind, part) for kind, part in (
            ("batteries", battery), ("escs", esc), ("motors", motor), ("propellers", propeller))))

    @property
    def motor_params(self) -> MotorParams:
        return motor_params(self.motor)

    @property
    def esc_params(self) -> EscParams:
        return esc_params(self.esc)

    def tables(self) -> tuple[PropellerTable, PropellerTable | None]:
        """(static table vs rpm, forward table vs J or None)."""
        return propeller_tables(self.propeller)

    def table_for(self, airspeed_m_s: float, where: str = "propeller.forward_table") -> PropellerTable:
        """The table a flight at ``airspeed_m_s`` reads: static at 0, versus advance ratio above."""
        static, forward = self.tables()
        if airspeed_m_s <= 0:
            return static
        if forward is None:
            raise InvalidInput("No forward-flight data", [FieldError(where, "flight at an airspeed needs CT/CP "
                                                                            "versus advance ratio J")])
        return forward

    @property
    def full_voltage_per_cell_v(self) -> float:
        return full_voltage_per_cell_v(self.battery.values.get("chemistry") or "lipo")

    @property
    def nominal_voltage_v(self) -> float:
        """The pack's label voltage ``S V_nom`` (display only). [V]"""
        cells = float(self.battery.values["cells_series"])
        return cells * float(nominal_voltage_per_cell_v(self.full_voltage_per_cell_v))

    def pack(self, *, packs_in_parallel: int = 1, wiring_resistance_ohm: float = 0.0,
             usable_fraction: float | None = None, cutoff_v_per_cell: float | None = None) -> PackParams:
        """The pack (``k`` identical packs in parallel: capacity × k, resistance ÷ k)."""
        self.battery.require(["cells_series", "capacity_mah", "cell_resistance_mohm"], "battery")
        v = self.battery.values
        k = packs_in_parallel
        extra: dict[str, Any] = {}
        if usable_fraction is not None:
            extra["usable_fraction"] = as_float_array(usable_fraction)
        if cutoff_v_per_cell is not None:
            extra["cutoff_voltage_per_cell_v"] = as_float_array(cutoff_v_per_cell)
        return PackParams(
            cells_series=as_float_array(v["cells_series"]), capacity_ah=as_float_array(v["capacity_mah"] / 1000 * k),
            cell_resistance_ohm=as_float_array(v["cell_resistance_mohm"] / 1000),
            cells_parallel=as_float_array(v["cells_parallel"] * k),
            wiring_resistance_ohm=as_float_array(wiring_resistance_ohm),
            full_voltage_per_cell_v=as_float_array(self.full_voltage_per_cell_v), **extra,
        )

    def sources(self) -> dict[str, dict[str, str]]:
        return {kind: r.sources for kind, r in (("batteries", self.battery), ("escs", self.esc),
                                                 ("motors", self.motor), ("propellers", self.propeller))}
