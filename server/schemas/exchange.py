"""The library file (``GET /api/v1/export`` -> ``POST /api/v1/import``): the response models of the export, and
the strict schema of the import (every nested value has a type and bounds, unknown keys are refused, so nothing
an engine run would choke on can be stored)."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any, Literal, TypeAlias

from pydantic import BaseModel, ConfigDict, Field, create_model, field_validator, model_validator

from server.bench_runs.flags import FlagReason, idle_thrust_tolerance_n
from server.schemas._fields import field_meta, ranged, text
from server.schemas.bench_runs import ThrustSign
from server.schemas.evaluation import Result
from server.schemas.missions import AirframeCreate, MissionCreate
from server.schemas.parts import CREATE_SCHEMAS, StaticRow

if TYPE_CHECKING:
    Ref: TypeAlias = int
    Count: TypeAlias = int
    Measured: TypeAlias = float
    Thrust: TypeAlias = float
else:
    Ref = ranged(int, 0, 2**63 - 1, "", description="An id local to the file")
    Count = ranged(int, 0, 10_000_000, "")
    Measured = ranged(float, 0, 1e7, "")  # non-negative and finite: bench values are magnitudes
    Thrust = ranged(float, -1e7, 1e7, "N")  # may sit a little below zero (a load cell's idle offset), see the run

MAX_ROWS = 10_000  # samples per run, as for a bench-run CSV
MAX_ITEMS = 5_000  # parts per kind, airframes, missions, runs, calibrations
CALIBRATED = {"escs": ("k_pwm", "r_on_path_ohm"),
              "motors": ("kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a"),
              "propellers": ("static_table",)}
FLAGS = {str(f) for f in FlagReason}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid")


def _entry(kind: str) -> type[BaseModel]:
    return create_model(f"Library{CREATE_SCHEMAS[kind].__name__.removesuffix('Create')}",
                        __base__=CREATE_SCHEMAS[kind], ref=(Ref | None, None), archived=(bool, False))


_PART_LISTS: dict[str, Any] = {kind: (list[_entry(kind)], Field(default_factory=list, max_length=MAX_ITEMS))  # type: ignore[misc]
                               for kind in CREATE_SCHEMAS}
PartsSection = create_model("LibraryParts", __base__=_Strict, **_PART_LISTS)


class LibraryAirframe(AirframeCreate):
    ref: Ref | None = None


class LibraryMission(MissionCreate):
    """``airframe_id`` is the ref of an airframe of the same file."""

    ref: Ref | None = None


class LibrarySample(_Strict):
    position: Count
    throttle: ranged(float, 0, 1, "")  # type: ignore[valid-type]
    bus_voltage_v: Measured
    bus_current_a: Measured
    rpm: Measured
    thrust_n: Thrust
    torque_nm: Measured | None = None
    temperature_c: ranged(float, -100, 400, "°C") | None = None  # type: ignore[valid-type]
    flag: text(200) | None = None  # type: ignore[valid-type]

    @field_validator("flag")
    @classmethod
    def _known_flags(cls, value: str | None) -> str | None:
        unknown = [f for f in (value or "").split(",") if f and f not in FLAGS]
        if unknown:
            raise ValueError(f"unknown flag {unknown[0]!r}; flags are {', '.join(sorted(FLAGS))}")
        return value or None


class LibraryBenchRun(_Strict):
    ref: Ref | None = None
    motor_ref: Ref
    propeller_ref: Ref
    esc_ref: Ref
    pack_ref: Ref | None = None
    name: text(160) = ""  # type: ignore[valid-type]
    supply_voltage_v: ranged(float, 0.5, 200, "V") | None = None  # type: ignore[valid-type]
    altitude_m: ranged(float, -500, 11_000, "m") = 0.0  # type: ignore[valid-type]
    air_temperature_c: ranged(float, -60, 60, "°C") | None = None  # type: ignore[valid-type]
    air_pressure_pa: ranged(float, 20_000, 120_000, "Pa") | None = None  # type: ignore[valid-type]
    throttle_offset: ranged(float, -1, 1, "") = 0.0  # type: ignore[valid-type]
    throttle_scale: ranged(float, 0.1, 10, "") = 1.0  # type: ignore[valid-type]
    thrust_sign: ThrustSign = 1
    air_density_kg_m3: ranged(float, 0.05, 3, "kg/m³")  # type: ignore[valid-type]
    filename: text(255) = ""  # type: ignore[valid-type]
    notes: text(4000) = ""  # type: ignore[valid-type]
    sample_count: Count = 0
    flagged_count: Count = 0
    samples: list[LibrarySample] = Field(default_factory=list, max_length=MAX_ROWS)

    @model_validator(mode="after")
    def _one_supply(self) -> LibraryBenchRun:
        if (self.pack_ref is None) == (self.supply_voltage_v is None):
            raise ValueError("pack_ref: give either pack_ref or supply_voltage_v (one of them)")
        return self

    @model_validator(mode="after")
    def _thrust_offsets_only(self) -> LibraryBenchRun:
        """A stored sample's thrust is below zero only within the idle tolerance, as an upload would allow."""
        thrust = [s.thrust_n for s in self.samples]
        tolerance = idle_thrust_tolerance_n(thrust) if thrust else 0.0
        for k, value in enumerate(thrust):
            if value < -tolerance:
                raise ValueError(f"samples.{k}.thrust_n: {value:g} N is further below zero than a load cell's idle "
                                 f"offset may read ({tolerance:g} N for this run)")
        return self


class LibraryParameter(_Strict):
    """One fitted parameter: ``value`` (a number, or rows for a propeller's static table), its standard error."""

    value: float | list[StaticRow] | None
    stderr: float | dict[str, float | None] | None = None
    status: Literal["identified", "fixed"]
    unit: text(16) = ""  # type: ignore[valid-type]
    source: text(32) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _finite(self) -> LibraryParameter:
        errs = self.stderr.values() if isinstance(self.stderr, dict) else [self.stderr]
        if isinstance(self.value, float) and not math.isfinite(self.value):
            raise ValueError("value: must be a finite number")
        if any(e is not None and not (math.isfinite(e) and e >= 0) for e in errs):
            raise ValueError("stderr: must be finite and not negative")
        return self


def _check_parameter(kind: str, name: str, p: LibraryParameter) -> None:
    """The value's type is the one the part field has; an identified value lies within the part field's bounds."""
    if name == "static_table":
        if not isinstance(p.value, list) and p.value is not None:
            raise ValueError(f"{name}: value must be a list of rpm/ct/cp rows")
        rpms = [r.rpm for r in p.value or []]
        if any(b <= a for a, b in zip(rpms, rpms[1:], strict=False)):
            raise ValueError(f"{name}: rows must be sorted by strictly increasing rpm")
        if p.status == "identified" and not rpms:
            raise ValueError(f"{name}: an identified table needs rows")
        return
    if isinstance(p.value, list) or isinstance(p.stderr, dict):
        raise ValueError(f"{name}: value and stderr must be numbers")
    if p.status == "identified":
        bounds, _ = field_meta(CREATE_SCHEMAS[kind].model_fields[name])
        if p.value is None or not min(0.0, bounds["minimum"]) <= p.value <= bounds["maximum"]:
            raise ValueError(f"{name}: an identified value must lie between 0 and {bounds['maximum']:g}")


class LibraryCovariance(_Strict):
    """Covariance of a calibration's identified parameters: one row and column per name, finite numbers."""

    names: list[text(32)] = Field(min_length=1, max_length=64)  # type: ignore[valid-type]
    matrix: list[list[float]] = Field(max_length=64)

    @model_validator(mode="after")
    def _square_and_finite(self) -> LibraryCovariance:
        n = len(self.names)
        if len(self.matrix) != n or any(len(row) != n for row in self.matrix):
            raise ValueError(f"matrix: must be {n} x {n}, one row and column per name")
        if not all(math.isfinite(v) for row in self.matrix for v in row):
            raise ValueError("matrix: every value must be a finite number")
        return self


class LibraryCalibration(_Strict):
    part_kind: Literal["escs", "motors", "propellers"]
    part_ref: Ref
    run_refs: list[Ref] = Field(default_factory=list, max_length=MAX_ITEMS)
    parameters: dict[str, LibraryParameter] = Field(max_length=8)
    residual_rms: ranged(float, 0, 1e6, "") | None = None  # type: ignore[valid-type]
    residual_unit: text(16) = ""  # type: ignore[valid-type]
    sample_count: Count = 0
    notes: text(4000) = ""  # type: ignore[valid-type]
    engine_version: text(32) = ""  # type: ignore[valid-type]
    active: bool = True
    covariance: LibraryCovariance | None = None

    @model_validator(mode="after")
    def _parameters_of_the_kind(self) -> LibraryCalibration:
        allowed = CALIBRATED[self.part_kind]
        for name, parameter in self.parameters.items():
            if name not in allowed:
                raise ValueError(f"parameters: {name!r} is not calibrated for {self.part_kind} "
                                 f"(one of {', '.join(allowed)})")
            _check_parameter(self.part_kind, name, parameter)
        return self


class ImportFile(_Strict):
    """What ``POST /api/v1/import`` accepts: a file as ``GET /export`` writes it, every value checked."""

    format: Literal["liftmatch-library"]
    version: Literal[1]
    exported_at: text(64) | None = None  # type: ignore[valid-type]
    team: text(120) | None = None  # type: ignore[valid-type]
    parts: PartsSection = Field(default_factory=PartsSection)  # type: ignore[valid-type]
    airframes: list[LibraryAirframe] = Field(default_factory=list, max_length=MAX_ITEMS)
    missions: list[LibraryMission] = Field(default_factory=list, max_length=MAX_ITEMS)
    bench_runs: list[LibraryBenchRun] = Field(default_factory=list, max_length=MAX_ITEMS)
    calibrations: list[LibraryCalibration] = Field(default_factory=list, max_length=MAX_ITEMS)


class LibraryFile(Result):
    """A team's whole library: parts per kind, airframes, missions, bench runs with samples, calibrations.

    Ids are replaced by references local to the file (``ref``), so a file imports into any team.
    """

    format: str = Field(description="Always liftmatch-library")
    version: int
    exported_at: str | None = None
    team: str | None = None
    parts: dict[str, list[dict[str, Any]]] = Field(description="batteries, escs, motors, propellers")
    airframes: list[dict[str, Any]] = Field(default_factory=list)
    missions: list[dict[str, Any]] = Field(default_factory=list)
    bench_runs: list[dict[str, Any]] = Field(default_factory=list)
    calibrations: list[dict[str, Any]] = Field(default_factory=list)


class LibraryImported(Result):
    """How many of each were created from the file."""

    batteries: int | None = None
    escs: int | None = None
    motors: int | None = None
    propellers: int | None = None
    airframes: int | None = None
    missions: int | None = None
    bench_runs: int | None = None
    calibrations: int | None = None
