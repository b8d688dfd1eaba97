"""Shortlists: named, team-shared sets of candidate power systems for a mission."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, DateTime, ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.db import Base
from server.models._common import TeamOwned, Timestamped, utcnow


class Shortlist(TeamOwned, Timestamped, Base):
    __tablename__ = "shortlist"

    name: Mapped[str] = mapped_column(String(120))
    mission_id: Mapped[int] = mapped_column(ForeignKey("mission.id", ondelete="RESTRICT"), index=True)
    created_by_id: Mapped[int | None] = mapped_column(
        ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True
    )

    entries: Mapped[list[ShortlistEntry]] = relationship(
        back_populates="shortlist", cascade="all, delete-orphan", passive_deletes=True,
        order_by="ShortlistEntry.position",
    )


class ShortlistEntry(Base):
    """One candidate: its four parts, pack configuration, a snapshot of its metrics, and a note."""

    __tablename__ = "shortlist_entry"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    shortlist_id: Mapped[int] = mapped_column(ForeignKey("shortlist.id", ondelete="CASCADE"), index=True)
    position: Mapped[int] = mapped_column(Integer, default=0)
    battery_id: Mapped[int] = mapped_column(ForeignKey("battery.id", ondelete="RESTRICT"), index=True)
    esc_id: Mapped[int] = mapped_column(ForeignKey("esc.id", ondelete="RESTRICT"), index=True)
    motor_id: Mapped[int] = mapped_column(ForeignKey("motor.id", ondelete="RESTRICT"), index=True)
    propeller_id: Mapped[int] = mapped_column(ForeignKey("propeller.id", ondelete="RESTRICT"), index=True)
    packs_in_parallel: Mapped[int] = mapped_column(Integer, default=1)
    ranking_id: Mapped[int | None] = mapped_column(ForeignKey("ranking.id", ondelete="SET NULL"), nullable=True)
    note: Mapped[str] = mapped_column(Text, default="")
    metrics: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    engine_version: Mapped[str] = mapped_column(String(32), default="")
    added_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True)
    added_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    shortlist: Mapped[Shortlist] = relationship(back_populates="entries")
