"""Form fields described from the pydantic schemas, so pages and API validate the same way."""

from __future__ import annotations

import types
import typing
from dataclasses import dataclass
from typing import Any, Literal

from pydantic import BaseModel

from server.schemas._fields import field_meta

TABLE_COLUMNS = {"static_table": ("rpm", "ct", "cp"), "forward_table": ("j", "ct", "cp")}
SEGMENT_COLUMNS = ("kind", "label", "duration_s", "distance_m", "height_m", "airspeed_m_s", "climb_rate_m_s")
"""The inputs of one flight-profile row (``segments-<i>-<column>``), as :class:`server.schemas.missions.SegmentIn`."""
SEGMENT_SPARE_ROWS = 3


@dataclass(frozen=True)
class FormField:
    name: str
    label: str
    unit: str
    widget: Literal["number", "text", "select", "textarea", "table", "segments"]
    required: bool
    minimum: float | None = None
    maximum: float | None = None
    step: str = "any"
    choices: tuple[str, ...] = ()
    help: str = ""
    default: Any = None  # what a blank optional field becomes (None: nothing, the value stays unknown)

    @property
    def default_text(self) -> str:
        """The default as the form shows it (empty when there is none)."""
        if self.default is None or self.default == "":
            return ""
        return f"{self.default:g}" if isinstance(self.default, float) else str(self.default)

    def choice_label(self, value: str) -> str:
        return CHOICE_LABELS.get(value, value)


LABELS = {
    "ct": "CT", "cp": "CP", "kv_rpm_per_v": "Kv", "k_pwm": "Partial-throttle loss k_pwm",
    "no_load_current_a": "No-load current I0",
    "static_table": "Static table (rpm, CT, CP per line)", "forward_table": "Forward table (J, CT, CP per line)",
    "r_on_path_ohm": "Conduction resistance R_on", "input_esr_ohm": "Input-capacitor ESR",
    "unit_cost": "Unit cost", "pwm_frequency_khz": "PWM frequency", "no_load_test_voltage_v": "I0 measured at",
    "cells_series": "Cells in series (S)", "cells_parallel": "Cells in parallel (P)",
    "max_continuous_c": "Continuous discharge rating", "max_burst_c": "Burst discharge rating",
    "forward_table_rpm": "Forward table measured at", "rotor_count": "Rotors",
    "max_prop_diameter_in": "Largest propeller diameter", "max_packs_in_parallel": "Packs flown in parallel (at most)",
    "kind": "Kind", "temperature_offset_c": "ISA temperature offset", "cruise_airspeed_m_s": "Cruise airspeed",
    "lift_to_drag": "Lift-to-drag ratio L/D", "min_thrust_to_weight": "Minimum thrust-to-weight",
    "duty_min": "Lowest hover/cruise duty", "duty_max": "Highest hover/cruise duty",
    "min_endurance_min": "Minimum endurance", "usable_fraction": "Usable share of capacity",
    "cutoff_v_per_cell": "Cut-off voltage per cell", "esc_current_margin": "ESC current margin",
    "pack_current_fraction": "Allowed share of the pack's C rating",
    "cruise_state_of_charge": "State of charge at the hover/cruise point", "max_all_up_mass_g": "Largest all-up mass",
    "payload_mass_g": "Payload", "application": "Made for", "frame_mass_g": "Frame mass", "mass_g": "Mass",
    "drag_area_m2": "Drag area C_D·A", "frontal_area_note": "Frontal area (note)", "coaxial": "Coaxial pairs",
    "climb_rate_m_s": "Climb rate at the hover/cruise point",
    "min_thrust_to_weight_motor_out": "Minimum thrust-to-weight, one motor out",
    "thermal_resistance_k_per_w": "Thermal resistance winding-to-air", "thermal_time_constant_s":
        "Thermal time constant", "max_winding_temperature_c": "Highest winding temperature",
    "temperature_effects": "Temperature effects (heat and cold)", "burst_s": "Full-throttle burst",
    "cold_day_temperature_c": "Cold-day check at",
    "segments": "Flight profile", "reserve_min": "Reserve after the profile",
}
CHOICE_LABELS = {"hover": "hover", "cruise": "cruise (wing-borne)", "forward_flight": "forward flight (multirotor)",
                 "climb": "climb", "descent": "descent", "forward": "forward flight (multirotor)",
                 "false": "no", "true": "yes",
                 "lipo": "LiPo", "lihv": "LiHV", "liion": "Li-ion", "multirotor": "multirotor (hover)",
                 "fixed_wing": "fixed-wing (cruise)", "any": "any (hover and cruise)"}


PARAMETER_LABELS = {"static_table": "CT, CP vs rpm", "forward_table": "CT, CP vs J"}


def parameter_label(name: str) -> str:
    """A model parameter's name for people (calibrations, predict's sources): "Kv", "CT, CP vs rpm"."""
    return PARAMETER_LABELS.get(name) or label_of(name)


def label_of(name: str) -> str:
    """A field's label in plain words (trade symbols where the trade uses them), without its unit."""
    if name in LABELS:
        return LABELS[name]
    words = name.replace("_", " ")
    for suffix in (
        " mohm",
        " ohm",
        " mah",
        " khz",
        " ns",
        " uh",
        " rpm per v",
        " m s",
        " in",
        " g",
        " a",
        " v",
        " w",
        " c",
        " m",
        " min",
    ):
        if words.endswith(suffix):
            words = words[: -len(suffix)]
            break
    return words[:1].upper() + words[1:]


def form_fields(schema: type[BaseModel]) -> list[FormField]:
    """One FormField per schema field, in declaration order."""
    out: list[FormField] = []
    for name, info in schema.model_fields.items():
        extra, description = field_meta(info)
        unit = str(extra.get("x-unit", ""))
        help_text = description.removesuffix(f"[{unit}]").strip()
        annotation = info.annotation
        base = annotation
        if typing.get_origin(annotation) in (typing.Union, types.UnionType):  # X | None: look at X
            base = next(a for a in typing.get_args(annotation) if a is not type(None))
        if typing.get_origin(base) is typing.Annotated:  # ranged(...) | None: look inside the Annotated
            base = typing.get_args(base)[0]
        literal_args = typing.get_args(base) if typing.get_origin(base) is Literal else ()
        if base is bool:  # a yes/no choice, sent as "true"/"false" (what the schema parses)
            literal_args = ("false", "true")
        if name in TABLE_COLUMNS:
            widget: Any = "table"
        elif name == "segments":
            widget = "segments"
        elif literal_args:
            widget = "select"
        elif name == "notes":
            widget = "textarea"
        elif base in (int, float):
            widget = "number"
        else:
            widget = "text"
        out.append(
            FormField(
                name=name,
                label=label_of(name),
                unit=unit if unit not in ("currency units",) else "",
                widget=widget,
                required=info.is_required(),
                minimum=extra.get("minimum"),
                maximum=extra.get("maximum"),
                step="1" if base is int else "any",
                choices=tuple(str(a) for a in literal_args),
                help=help_text,
                default=None if info.is_required() else (
                    str(info.default).lower() if isinstance(info.default, bool) else info.default),
            )
        )
    return out


def table_to_text(rows: list[dict[str, Any]] | None, columns: tuple[str, ...]) -> str:
    if not rows:
        return ""
    return "\n".join(", ".join(f"{row[c]:g}" for c in columns) for row in rows)


def text_to_table(text: str, columns: tuple[str, ...]) -> list[dict[str, float]]:
    """Lines of comma- or space-separated numbers → rows; raises ValueError naming the bad line."""
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        line = line.strip()
        if not line or line.startswith("#") or line.replace(" ", "").lower() == ",".join(columns):
            continue
        cells = [c for c in line.replace(",", " ").replace(";", " ").split() if c]
        if len(cells) != len(columns):
            raise ValueError(f"line {number}: expected {len(columns)} numbers ({', '.join(columns)})")
        try:
            rows.append({c: float(v) for c, v in zip(columns, cells, strict=True)})
        except ValueError:
            raise ValueError(f"line {number}: not a number") from None
    return rows


def form_to_data(fields: list[FormField], values: dict[str, str]) -> tuple[dict[str, Any], dict[str, str]]:
    """Submitted strings → data for the schema (empty = not given); table parse errors by field."""
    data: dict[str, Any] = {}
    errors: dict[str, str] = {}
    for field in fields:
        if field.widget == "segments" and any(k.startswith("segments-") for k in values):
            data[field.name] = segments_from_form(values)
        if field.name not in values:  # not on the form: the schema default applies
            continue
        if field.widget == "segments":
            continue
        raw = values[field.name]
        if field.widget == "table":
            try:
                data[field.name] = text_to_table(raw, TABLE_COLUMNS[field.name]) or None
            except ValueError as exc:
                errors[field.name] = str(exc)
        elif raw != "":
            data[field.name] = raw
        elif not field.required:  # blank: the documented default (shown beside the field), else "not known"
            data[field.name] = field.default if field.default is not None else (
                "" if field.widget in ("text", "textarea") else None)
    return data, errors


def segments_from_form(values: dict[str, str]) -> list[dict[str, str]]:
    """The profile rows of a submitted form, in row order; a row without a kind is an unused spare row."""
    rows = sorted({int(k.split("-")[1]) for k in values if k.startswith("segments-") and k.count("-") == 2
                   and k.split("-")[1].isdigit()})
    out = []
    for i in rows:
        row = {c: values.get(f"segments-{i}-{c}", "").strip() for c in SEGMENT_COLUMNS}
        if not row["kind"]:
            continue
        out.append({c: v for c, v in row.items() if v != "" or c == "label"})
    return out


def segment_rows(values: dict[str, str]) -> list[int]:
    """Row indices the profile editor shows: the filled rows and a few spare ones."""
    used = [int(k.split("-")[1]) for k in values if k.startswith("segments-") and k.endswith("-kind")
            and values[k] and k.split("-")[1].isdigit()]
    return list(range((max(used) + 1 if used else 0) + SEGMENT_SPARE_ROWS))


def values_of(obj: Any, fields: list[FormField]) -> dict[str, str]:
    """Form values (strings) of a stored row."""
    out = {}
    for field in fields:
        value = getattr(obj, field.name, None)
        if field.widget == "segments":
            for i, row in enumerate(value or []):
                for c in SEGMENT_COLUMNS:
                    v = row.get(c)
                    out[f"segments-{i}-{c}"] = "" if v is None else (f"{v:g}" if isinstance(v, float) else str(v))
            continue
        if field.widget == "table":
            out[field.name] = table_to_text(value, TABLE_COLUMNS[field.name])
        elif value is None:
            out[field.name] = ""
        elif isinstance(value, bool):
            out[field.name] = "true" if value else "false"
        elif isinstance(value, float):
            out[field.name] = f"{value:g}"
        else:
            out[field.name] = str(value)
    return out


def unplaced(errors: dict[str, str], fields: list[FormField], *extra: str) -> list[str]:
    """Errors about no field of the form (a rule across fields, say): shown above the form instead of beside one."""
    names = {f.name for f in fields} | set(extra)
    return [message if key == "body" else f"{key}: {message}" for key, message in errors.items()
            if key not in names and not key.startswith("segments.")]
