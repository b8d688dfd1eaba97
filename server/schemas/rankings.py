"""Request/response models for rankings."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict

from server.schemas._fields import ranged

Objective = Literal["cruise_power", "endurance", "specific_thrust", "mass", "cost"]


class RankingCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    mission_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    objective: Objective = "cruise_power"
    top_n: ranged(int, 1, 500, "candidates", description="Candidates refined and stored") = 50  # type: ignore[valid-type]


class RankingStarted(BaseModel):
    id: int
    status: str
