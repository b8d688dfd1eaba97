"""Ranking jobs and their stored results."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, Boolean, DateTime, Float, ForeignKey, Integer, LargeBinary, String, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base
from server.models._common import TeamOwned, utcnow

RANKING_STATUSES = ("queued", "running", "done", "failed", "cancelled")


class Ranking(TeamOwned, Base):
    """One evaluation of every power system of the team's library for a mission (a job)."""

    __tablename__ = "ranking"

    mission_id: Mapped[int | None] = mapped_column(ForeignKey("mission.id", ondelete="SET NULL"), nullable=True)
    mission_name: Mapped[str] = mapped_column(String(120), default="")
    objective: Mapped[str] = mapped_column(String(24))
    top_n: Mapped[int] = mapped_column(Integer, default=50)
    status: Mapped[str] = mapped_column(String(12), default="queued", index=True)
    progress: Mapped[float] = mapped_column(Float, default=0.0)
    combinations: Mapped[int] = mapped_column(Integer, default=0)
    evaluated: Mapped[int] = mapped_column(Integer, default=0)
    feasible: Mapped[int] = mapped_column(Integer, default=0)
    rejected: Mapped[dict[str, int]] = mapped_column(JSON, default=dict)
    rejected_examples: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict, server_default="{}")
    inputs: Mapped[dict[str, Any]] = mapped_column(JSON)
    engine_version: Mapped[str] = mapped_column(String(32))
    timings: Mapped[dict[str, float]] = mapped_column(JSON, default=dict)
    error: Mapped[str] = mapped_column(Text, default="")
    cancel_requested: Mapped[bool] = mapped_column(Boolean, default=False)
    attempts: Mapped[int] = mapped_column(Integer, default=0, server_default="0")
    created_by_id: Mapped[int | None] = mapped_column(
        ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True
    )
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    started_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
    finished_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)


class RankingResult(Base):
    """One stored candidate of a ranking (the top N and the Pareto set); parts it names cannot be deleted."""

    __tablename__ = "ranking_result"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    ranking_id: Mapped[int] = mapped_column(ForeignKey("ranking.id", ondelete="CASCADE"), index=True)
    rank: Mapped[int | None] = mapped_column(Integer, nullable=True)
    pareto: Mapped[bool] = mapped_column(Boolean, default=False)
    battery_id: Mapped[int] = mapped_column(ForeignKey("battery.id", ondelete="RESTRICT"), index=True)
    esc_id: Mapped[int] = mapped_column(ForeignKey("esc.id", ondelete="RESTRICT"), index=True)
    motor_id: Mapped[int] = mapped_column(ForeignKey("motor.id", ondelete="RESTRICT"), index=True)
    propeller_id: Mapped[int] = mapped_column(ForeignKey("propeller.id", ondelete="RESTRICT"), index=True)
    packs_in_parallel: Mapped[int] = mapped_column(Integer, default=1)
    cells_series: Mapped[int] = mapped_column(Integer)
    all_up_mass_g: Mapped[float] = mapped_column(Float)
    cruise_duty: Mapped[float] = mapped_column(Float)
    cruise_power_w: Mapped[float] = mapped_column(Float)
    specific_thrust_g_per_w: Mapped[float] = mapped_column(Float)
    thrust_to_weight: Mapped[float] = mapped_column(Float)
    endurance_min: Mapped[float] = mapped_column(Float)
    esc_current_a: Mapped[float] = mapped_column(Float)
    cost: Mapped[float | None] = mapped_column(Float, nullable=True)
    metrics: Mapped[dict[str, Any]] = mapped_column(JSON)


class RankingShard(TeamOwned, Base):
    """One shard of a large ranking: a contiguous group of its chunks that any worker screens (a job of its own).

    The reduced result (``partial``: counts, the best candidates, the Pareto set, rejection examples) is kept as
    ``.npz`` bytes until the ranking merges every shard (server.selection.shards).
    """

    __tablename__ = "ranking_shard"
    __table_args__ = (UniqueConstraint("ranking_id", "shard_index"),)

    ranking_id: Mapped[int] = mapped_column(ForeignKey("ranking.id", ondelete="CASCADE"), index=True)
    shard_index: Mapped[int] = mapped_column(Integer)
    shard_count: Mapped[int] = mapped_column(Integer)
    status: Mapped[str] = mapped_column(String(12), default="queued", index=True)
    progress: Mapped[float] = mapped_column(Float, default=0.0)
    error: Mapped[str] = mapped_column(Text, default="")
    cancel_requested: Mapped[bool] = mapped_column(Boolean, default=False)
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    partial: Mapped[bytes | None] = mapped_column(LargeBinary, nullable=True)
    started_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
    finished_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
