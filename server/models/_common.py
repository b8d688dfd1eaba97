"""Column helpers shared by the ORM modules."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from sqlalchemy import DateTime, ForeignKey, Integer
from sqlalchemy.orm import Mapped, declared_attr, mapped_column


def utcnow() -> datetime:
    return datetime.now(UTC)


class TeamOwned:
    """Mixin: every row belongs to one team; the team scope filters on ``team_id``."""

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    team_id: Mapped[int] = mapped_column(ForeignKey("team.id", ondelete="CASCADE"), index=True)


class Timestamped:
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    updated_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow, onupdate=utcnow)


class Versioned:
    """Mixin: optimistic concurrency through the ORM's version counter.

    Every UPDATE of such a row is ``UPDATE … SET version = v + 1 WHERE id = :id AND version = v`` with ``v`` the
    version this session read; when another transaction saved first the row count is 0 and the flush fails
    (``server.db.AppSession`` turns that into :class:`server.errors.VersionMismatch`, HTTP 412). So a read, a
    version check and the write can never lose another writer's update, on SQLite or PostgreSQL.
    """

    version: Mapped[int] = mapped_column(Integer, default=1)

    @declared_attr.directive
    def __mapper_args__(cls) -> dict[str, Any]:
        return {"version_id_col": cls.version}
