"""Request models for bench runs and calibrations."""

from __future__ import annotations

from typing import TYPE_CHECKING, TypeAlias

from pydantic import BaseModel, ConfigDict, model_validator

from server.schemas._fields import ranged, text

if TYPE_CHECKING:  # the pydantic constrained-type pattern: mypy sees the plain type
    Id: TypeAlias = int
else:
    Id = ranged(int, 1, 2**63 - 1, "")


class BenchRunMeta(BaseModel):
    """What was on the stand: three of the team's parts and the supply (a pack or a bench supply voltage)."""

    model_config = ConfigDict(extra="forbid")

    name: text(160) = ""  # type: ignore[valid-type]
    motor_id: Id
    propeller_id: Id
    esc_id: Id
    pack_id: Id | None = None
    supply_voltage_v: ranged(float, 0.5, 200, "V", description="Bench supply voltage") | None = None  # type: ignore[valid-type]
    altitude_m: ranged(float, -500, 11_000, "m") = 0.0  # type: ignore[valid-type]
    air_temperature_c: ranged(float, -60, 60, "°C") | None = None  # type: ignore[valid-type]
    air_pressure_pa: ranged(float, 20_000, 120_000, "Pa") | None = None  # type: ignore[valid-type]
    throttle_offset: ranged(float, -1, 1, "", description="duty = offset + scale × throttle") = 0.0  # type: ignore[valid-type]
    throttle_scale: ranged(float, 0.1, 10, "", description="duty = offset + scale × throttle") = 1.0  # type: ignore[valid-type]
    notes: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _one_supply(self) -> BenchRunMeta:
        if (self.pack_id is None) == (self.supply_voltage_v is None):
            raise ValueError("pack_id: give either pack_id or supply_voltage_v (one of them)")
        return self


class CalibrationSwitch(BaseModel):
    model_config = ConfigDict(extra="forbid")

    active: bool
