"""Refits: re-fitting the calibration of an ESC's pool of bench runs, as a job after an upload (or on demand)."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, Boolean, DateTime, Float, ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base
from server.models._common import TeamOwned, utcnow


class Refit(TeamOwned, Base):
    """One pooled calibration of every run of the team that used ``esc_id`` (queued → running → done | failed)."""

    __tablename__ = "refit"

    esc_id: Mapped[int] = mapped_column(Integer, index=True)  # no foreign key (as calibrations): parts stay deletable
    run_id: Mapped[int | None] = mapped_column(ForeignKey("bench_run.id", ondelete="SET NULL"), nullable=True)
    status: Mapped[str] = mapped_column(String(12), default="queued", index=True)
    progress: Mapped[float] = mapped_column(Float, default=0.0)
    result: Mapped[dict[str, Any] | None] = mapped_column(JSON, nullable=True)
    error: Mapped[str] = mapped_column(Text, default="")
    cancel_requested: Mapped[bool] = mapped_column(Boolean, default=False)
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    started_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
    finished_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
