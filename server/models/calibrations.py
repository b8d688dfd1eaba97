"""Calibrations: parameters fitted from a team's bench runs, stored per part with standard errors."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, Boolean, DateTime, Float, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base
from server.models._common import TeamOwned, utcnow


class Calibration(TeamOwned, Base):
    """Parameters of one part fitted from bench runs; the newest active one replaces the part's defaults."""

    __tablename__ = "calibration"

    part_kind: Mapped[str] = mapped_column(String(16), index=True)
    part_id: Mapped[int] = mapped_column(Integer, index=True)
    parameters: Mapped[dict[str, Any]] = mapped_column(JSON)
    covariance: Mapped[dict[str, Any] | None] = mapped_column(JSON, nullable=True)
    """Covariance of the identified parameters: {"names": [...], "matrix": [[...]]} in the parameters' units."""
    residual_rms: Mapped[float | None] = mapped_column(Float, nullable=True)
    residual_unit: Mapped[str] = mapped_column(String(16), default="")
    sample_count: Mapped[int] = mapped_column(Integer, default=0)
    run_ids: Mapped[list[int]] = mapped_column(JSON, default=list)
    notes: Mapped[str] = mapped_column(Text, default="")
    engine_version: Mapped[str] = mapped_column(String(32))
    active: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
