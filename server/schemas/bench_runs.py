"""Request and response models for bench runs."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Annotated, TypeAlias

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import ranged, text
from server.schemas.calibrations import CalibrationChange, CalibrationRead, RefitStatus
from server.schemas.evaluation import Result

if TYPE_CHECKING:  # the pydantic constrained-type pattern: mypy sees the plain type
    Id: TypeAlias = int
else:
    Id = ranged(int, 1, 2**63 - 1, "")


def _sign(value: int) -> int:
    if value not in (1, -1):
        raise ValueError(f"must be 1 or -1 (got {value})")
    return value


THRUST_SIGN_TEXT = ("1: thrust as recorded; -1: the load cell was mounted or wired the other way round, so the "
                    "thrust column is flipped on import (the stored samples are the corrected ones)")
ThrustSign = Annotated[int, AfterValidator(_sign),
                       Field(description=THRUST_SIGN_TEXT, json_schema_extra={"enum": [1, -1]})]


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
    thrust_sign: ThrustSign = 1
    notes: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _one_supply(self) -> BenchRunMeta:
        if (self.pack_id is None) == (self.supply_voltage_v is None):
            raise ValueError("pack_id: give either pack_id or supply_voltage_v (one of them)")
        return self


class BenchRunSummary(Result):
    """A stored bench run (without its samples)."""

    id: int
    name: str
    motor_id: int
    propeller_id: int
    esc_id: int
    pack_id: int | None = None
    supply_voltage_v: float | None = None
    altitude_m: float | None = None
    air_temperature_c: float | None = None
    air_pressure_pa: float | None = None
    throttle_offset: float | None = None
    throttle_scale: float | None = None
    thrust_sign: int = Field(1, description=THRUST_SIGN_TEXT)
    air_density_kg_m3: float = Field(description="Air density the run's coefficients use [kg/m^3]")
    filename: str = ""
    notes: str = ""
    sample_count: int
    flagged_count: int = Field(description="Samples kept but not fitted (e.g. a collapsed supply)")
    created_at: datetime


class BenchRunUploaded(BenchRunSummary):
    """An upload's stored run, its flags per reason and what the calibration stored."""

    flags: dict[str, int] = Field(default_factory=dict, description="Flagged samples per reason")
    calibration: RefitStatus | None = Field(None, description="The refit job that calibrates the ESC's pool")


class BenchSampleRead(Result):
    """One sample with its derived quantities, flag and the (calibrated) model at its thrust."""

    throttle: float | None = None
    bus_voltage_v: float | None = None
    bus_current_a: float | None = None
    rpm: float | None = None
    thrust_n: float | None = None
    torque_nm: float | None = None
    temperature_c: float | None = None
    flag: str | None = None
    flag_text: str | None = None
    air_density_kg_m3: float | None = None
    electrical_power_w: float | None = None
    thrust_coefficient: float | None = None
    power_coefficient: float | None = None
    shaft_power_w: float | None = None
    drive_efficiency: float | None = None
    specific_thrust_g_per_w: float | None = None
    model_electrical_power_w: float | None = None
    model_bus_current_a: float | None = None
    residual_power: float | None = Field(default=None, description="(model − measured) ÷ measured power")


class BenchRunDetail(Result):
    """A run, every sample, and the latest calibration of each of its parts."""

    run: BenchRunSummary
    samples: list[BenchSampleRead]
    calibrations: dict[str, CalibrationRead | None]
    refit: RefitStatus | None = Field(None, description="The latest refit of the run's ESC pool")
    calibration_changes: list[CalibrationChange] = Field(
        default_factory=list, description="What the latest pooled re-fit of this run's ESC moved, part by part")
