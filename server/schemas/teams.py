"""Request/response models for teams, members and API keys."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, ConfigDict

from server.schemas._fields import text


class ApiKeyCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    name: text(120) = ""  # type: ignore[valid-type]
    scope: Literal["read", "write"] = "read"


class ApiKeyRead(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: int
    name: str
    prefix: str
    scope: str
    created_at: datetime
    last_used_at: datetime | None
    revoked_at: datetime | None


class ApiKeyCreated(ApiKeyRead):
    """Returned once, at creation: ``key`` is never shown again."""

    key: str


class MemberRead(BaseModel):
    user_id: int
    email: str
    display_name: str
    role: str


class Me(BaseModel):
    team_id: int
    team_name: str
    role: str
    via: Literal["session", "key"]
    can_write: bool
