"""Request/response models for the parts library (units in every field name)."""

from __future__ import annotations

from datetime import datetime
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import partial_model, ranged, text

Chemistry = Literal["lipo", "lihv", "liion"]
PropApplication = Literal["multirotor", "fixed_wing", "any"]
PartKind = Literal["batteries", "escs", "motors", "propellers"]


class PartBase(BaseModel):
    """Columns every part kind has."""

    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1, description="Our name for the part")  # type: ignore[valid-type]
    maker: text(120, description="Maker or supplier (free text)") = ""  # type: ignore[valid-type]
    part_number: text(80, description="Maker's or our part number") = ""  # type: ignore[valid-type]
    unit_cost: ranged(float, 0, 1_000_000, "currency units", description="Price of one unit") | None = None  # type: ignore[valid-type]
    currency: str = Field("EUR", pattern=r"^[A-Z]{3}$", description="ISO 4217 code")
    mass_g: ranged(float, 0.1, 100_000, "g", description="Mass of one unit")  # type: ignore[valid-type]
    notes: text(4000) = ""  # type: ignore[valid-type]


class BatteryCreate(PartBase):
    chemistry: Chemistry = "lipo"
    cells_series: ranged(int, 1, 24, "cells", description="Cells in series (S)")  # type: ignore[valid-type]
    cells_parallel: ranged(int, 1, 20, "cells", description="Cells in parallel (P)") = 1  # type: ignore[valid-type]
    capacity_mah: ranged(float, 50, 500_000, "mAh", description="Labelled pack capacity")  # type: ignore[valid-type]
    cell_resistance_mohm: ranged(float, 0.1, 1000, "mΩ", description="DC resistance of one cell")  # type: ignore[valid-type]
    max_continuous_c: ranged(float, 0.1, 500, "C", description="Continuous discharge rating")  # type: ignore[valid-type]
    max_burst_c: ranged(float, 0.1, 1000, "C", description="Burst discharge rating") | None = None  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _burst_not_below_continuous(self) -> BatteryCreate:
        if self.max_burst_c is not None and self.max_burst_c < self.max_continuous_c:
            raise ValueError("max_burst_c: must not be below the continuous rating (max_continuous_c)")
        return self


class EscCreate(PartBase):
    continuous_current_a: ranged(float, 1, 1000, "A", description="Continuous current rating")  # type: ignore[valid-type]
    burst_current_a: ranged(float, 1, 2000, "A", description="Burst current rating") | None = None  # type: ignore[valid-type]
    min_cells: ranged(int, 1, 24, "cells", description="Lowest supported cell count")  # type: ignore[valid-type]
    max_cells: ranged(int, 1, 24, "cells", description="Highest supported cell count")  # type: ignore[valid-type]
    pwm_frequency_khz: ranged(float, 1, 200, "kHz", description="PWM switching frequency") | None = None  # type: ignore[valid-type]
    r_on_path_ohm: ranged(float, 0, 1, "Ω", description="Conduction resistance in series with the motor") | None = None  # type: ignore[valid-type]
    switching_time_ns: ranged(float, 0, 10_000, "ns", description="Switch transition time t_on + t_off") | None = None  # type: ignore[valid-type]
    dead_time_ns: ranged(float, 0, 10_000, "ns", description="Dead time per edge") | None = None  # type: ignore[valid-type]
    diode_drop_v: ranged(float, 0, 3, "V", description="Body-diode forward drop") | None = None  # type: ignore[valid-type]
    input_esr_ohm: ranged(float, 0, 1, "Ω", description="Input-capacitor ESR") | None = None  # type: ignore[valid-type]
    k_pwm: ranged(float, 0, 10, "", description="Calibrated partial-throttle loss factor") | None = None  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _cells_in_order(self) -> EscCreate:
        if self.min_cells > self.max_cells:
            raise ValueError("min_cells: must not be above the highest cell count (max_cells)")
        if self.burst_current_a is not None and self.burst_current_a < self.continuous_current_a:
            raise ValueError("burst_current_a: must not be below the continuous current (continuous_current_a)")
        return self


class MotorCreate(PartBase):
    kv_rpm_per_v: ranged(float, 10, 20_000, "rpm/V", description="Speed constant Kv")  # type: ignore[valid-type]
    winding_resistance_ohm: ranged(float, 0.0005, 50, "Ω", description="Line-to-line winding resistance") | None = None  # type: ignore[valid-type]
    no_load_current_a: ranged(float, 0, 50, "A", description="No-load current I0") | None = None  # type: ignore[valid-type]
    no_load_test_voltage_v: ranged(float, 0.5, 100, "V", description="Voltage at which I0 was measured") | None = None  # type: ignore[valid-type]
    max_current_a: ranged(float, 0.1, 1000, "A", description="Maker's maximum current") | None = None  # type: ignore[valid-type]
    max_power_w: ranged(float, 1, 100_000, "W", description="Maker's maximum power") | None = None  # type: ignore[valid-type]
    max_cells: ranged(int, 1, 24, "cells", description="Highest supported cell count") | None = None  # type: ignore[valid-type]
    inductance_uh: ranged(float, 0.1, 100_000, "µH", description="Line-to-line inductance") | None = None  # type: ignore[valid-type]
    thermal_resistance_k_per_w: ranged(  # type: ignore[valid-type]
        float, 0.01, 100, "K/W", description="Winding-to-air thermal resistance with the propeller's airflow; blank: "
                                             "0.1 K kg/W divided by the motor's mass (assumed)") | None = None
    thermal_time_constant_s: ranged(  # type: ignore[valid-type]
        float, 1, 10_000, "s", description="Thermal time constant of the winding; blank: R_th x mass x 500 J/(kg K) "
                                           "(assumed)") | None = None
    max_winding_temperature_c: ranged(  # type: ignore[valid-type]
        float, 40, 250, "°C", description="Highest allowed winding temperature (magnets and enamel); blank: 100 °C "
                                          "(assumed)") | None = None


class StaticRow(BaseModel):
    model_config = ConfigDict(extra="forbid")

    rpm: ranged(float, 1, 200_000, "rpm")  # type: ignore[valid-type]
    ct: ranged(float, 0.0001, 1, "")  # type: ignore[valid-type]
    cp: ranged(float, 0.0001, 1, "")  # type: ignore[valid-type]


class ForwardRow(BaseModel):
    model_config = ConfigDict(extra="forbid")

    j: ranged(float, 0, 5, "")  # type: ignore[valid-type]
    ct: ranged(float, -1, 1, "")  # type: ignore[valid-type]
    cp: ranged(float, -1, 1, "")  # type: ignore[valid-type]


class PropellerCreate(PartBase):
    diameter_in: ranged(float, 1, 80, "in", description="Diameter")  # type: ignore[valid-type]
    pitch_in: ranged(float, 0.5, 80, "in", description="Pitch")  # type: ignore[valid-type]
    blades: ranged(int, 1, 8, "blades", description="Blade count") = 2  # type: ignore[valid-type]
    ct: ranged(float, 0.001, 1, "", description="Static thrust coefficient T/(ρn²D⁴)") | None = None  # type: ignore[valid-type]
    cp: ranged(float, 0.001, 1, "", description="Static power coefficient P/(ρn³D⁵)") | None = None  # type: ignore[valid-type]
    static_table: list[StaticRow] | None = Field(None, max_length=500, description="Static CT, CP vs rpm")
    forward_table: list[ForwardRow] | None = Field(None, max_length=500, description="CT, CP vs advance ratio J")
    forward_table_rpm: ranged(float, 1, 200_000, "rpm", description="Rpm of the forward table") | None = None  # type: ignore[valid-type]
    application: PropApplication = Field(
        "any", description="What it is made for: multirotor (hover missions), fixed_wing (cruise) or any (both)")

    @model_validator(mode="after")
    def _tables_increasing(self) -> PropellerCreate:
        for label, rows, key in (
            ("static_table", self.static_table, "rpm"),
            ("forward_table", self.forward_table, "j"),
        ):
            if rows:
                values = [getattr(r, key) for r in rows]
                if any(b <= a for a, b in zip(values, values[1:], strict=False)):
                    raise ValueError(f"{label}: rows must be sorted by strictly increasing {key}")
        return self


class PartMeta(BaseModel):
    """What the server adds to a stored part."""

    kind: str = Field("", description="batteries, escs, motors or propellers")
    id: int
    archived: bool
    version: int
    created_at: datetime
    updated_at: datetime


class BatteryRead(BatteryCreate, PartMeta):
    model_config = ConfigDict(from_attributes=True, extra="ignore")


class EscRead(EscCreate, PartMeta):
    model_config = ConfigDict(from_attributes=True, extra="ignore")


class MotorRead(MotorCreate, PartMeta):
    model_config = ConfigDict(from_attributes=True, extra="ignore")


class PropellerRead(PropellerCreate, PartMeta):
    model_config = ConfigDict(from_attributes=True, extra="ignore")


BatteryUpdate = partial_model(BatteryCreate, "BatteryUpdate")
EscUpdate = partial_model(EscCreate, "EscUpdate")
MotorUpdate = partial_model(MotorCreate, "MotorUpdate")
PropellerUpdate = partial_model(PropellerCreate, "PropellerUpdate")

CREATE_SCHEMAS: dict[str, type[PartBase]] = {
    "batteries": BatteryCreate,
    "escs": EscCreate,
    "motors": MotorCreate,
    "propellers": PropellerCreate,
}
READ_SCHEMAS: dict[str, type[BaseModel]] = {
    "batteries": BatteryRead,
    "escs": EscRead,
    "motors": MotorRead,
    "propellers": PropellerRead,
}
UPDATE_SCHEMAS: dict[str, type[BaseModel]] = {
    "batteries": BatteryUpdate,
    "escs": EscUpdate,
    "motors": MotorUpdate,
    "propellers": PropellerUpdate,
}
KIND_LABELS: dict[str, tuple[str, str]] = {
    "batteries": ("Battery pack", "Battery packs"),
    "escs": ("ESC", "ESCs"),
    "motors": ("Motor", "Motors"),
    "propellers": ("Propeller", "Propellers"),
}
# The same inside a sentence: (one, with its article, many) — "an ESC", "6 ESCs", "a battery pack".
KIND_WORDS: dict[str, tuple[str, str, str]] = {
    "batteries": ("battery pack", "a battery pack", "battery packs"),
    "escs": ("ESC", "an ESC", "ESCs"),
    "motors": ("motor", "a motor", "motors"),
    "propellers": ("propeller", "a propeller", "propellers"),
}


class PartPage(BaseModel):
    """One page of a part list."""

    items: list[dict[str, Any]]
    total: int
    page: int
    page_size: int


class PartsImported(BaseModel):
    """What a CSV import created (all rows or none)."""

    created: int
    ids: list[int]
