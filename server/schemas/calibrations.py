"""Response models for calibrations (parameters fitted from a team's bench runs)."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from pydantic import BaseModel, ConfigDict, Field

from server.schemas.evaluation import Result


class FittedValue(Result):
    """One calibrated parameter (a number, or for a propeller the fitted CT/CP table)."""

    value: float | list[dict[str, Any]] | None = Field(description="The fitted value (unit below), or table rows")
    stderr: float | dict[str, float | None] | None = Field(
        default=None, description="Standard error of the value (per table coefficient for a table)")
    status: str = Field(description="identified (the data determined it) | fixed (kept at its start value)")
    unit: str = ""
    source: str = Field(default="fit", description="fit | datasheet | default | start")


class CalibrationRead(Result):
    """A part's calibration: the fitted parameters with standard errors, residuals and provenance."""

    id: int
    part_kind: str = Field(description="escs | motors | propellers")
    part_id: int
    parameters: dict[str, FittedValue]
    residual_rms: float | None = Field(default=None, description="RMS of the relative residual of the fit")
    residual_unit: str = "relative"
    sample_count: int | None = None
    run_ids: list[int] = Field(default_factory=list, description="Bench runs pooled in the fit")
    notes: str = ""
    engine_version: str
    active: bool = Field(description="Whether predictions and rankings use this calibration")
    created_at: datetime
    covariance: dict[str, Any] | None = Field(
        default=None, description="Covariance of the identified parameters: {names, matrix} in their units")


class CalibrationChange(Result):
    """A parameter a pooled re-fit moved: the part's previous calibration against its new one."""

    part_kind: str = Field(description="escs | motors | propellers")
    part_id: int
    part_name: str | None = None
    parameter: str = Field(description="Parameter name; for a table 'ct@<rpm>' or 'cp@<rpm>' (at its median rpm)")
    label: str = ""
    unit: str = ""
    before: float
    before_stderr: float | None = None
    after: float
    after_stderr: float | None = None
    change: float | None = Field(default=None, description="after ÷ before − 1 [-]")
    beyond_stderr: bool = Field(description="The move is larger than the two standard errors combined")
    before_id: int = Field(description="Calibration id before")
    after_id: int = Field(description="Calibration id after")


class CalibrationOutcome(Result):
    """What one pooled re-fit stored (one calibration per part it identified), or why it stored nothing, and
    which parameters of the pool's parts it moved."""

    calibrations: list[CalibrationRead] = Field(default_factory=list)
    error: str | None = None
    changes: list[CalibrationChange] = Field(default_factory=list)


class RefitStatus(CalibrationOutcome):
    """A refit job (re-fitting an ESC's pool of bench runs after an upload): its status, and once ``done`` the
    calibrations it stored (``calibrations``/``error`` as before the fit became a job)."""

    refit_id: int
    status: str = Field(description="queued, running, done or failed")
    esc_id: int
    run_id: int | None = None
    created_at: datetime | None = None
    started_at: datetime | None = None
    finished_at: datetime | None = None
    url: str = Field(description="Poll this for the status")


class PartCalibrated(Result):
    """The part's calibration after re-fitting every pool its bench runs belong to."""

    calibration: CalibrationRead | None = None
    errors: list[str] = Field(default_factory=list)


class CalibrationSwitch(BaseModel):
    """The "use this calibration" switch."""

    model_config = ConfigDict(extra="forbid")

    active: bool
