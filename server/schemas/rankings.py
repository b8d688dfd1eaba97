"""Request/response models for rankings."""

from __future__ import annotations

from datetime import datetime

from pydantic import BaseModel, ConfigDict, Field

from server.schemas._fields import ranged
from server.schemas.evaluation import RankedCandidate, Result
from server.selection.result import Objective


class RankingCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    mission_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    objective: Objective = "cruise_power"
    top_n: ranged(int, 1, 500, "candidates", description="Candidates refined and stored") = 50  # type: ignore[valid-type]


class RankingStarted(BaseModel):
    id: int
    status: str


class RankingStatus(Result):
    """A ranking job: status, progress, counts per rejection reason and timings."""

    id: int
    status: str = Field(description="queued | running | done | failed | cancelled")
    progress: float = Field(description="0–1")
    mission_id: int | None
    mission_name: str
    objective: str
    top_n: int
    combinations: int | None = Field(default=None, description="Every pack × k × ESC × motor × propeller")
    evaluated: int | None = Field(default=None, description="Combinations whose operating points were solved")
    feasible: int | None = Field(default=None, description="Combinations that pass every limit")
    rejected: dict[str, int] = Field(description="Rejected combinations per reason (first failing reason only)")
    engine_version: str
    elapsed_s: float | None = None
    timings: dict[str, float] = Field(default_factory=dict)
    error: str | None = None
    created_at: datetime
    finished_at: datetime | None = None


class RankingResultsPage(Result):
    """One page of ranked candidates."""

    items: list[RankedCandidate]
    total: int
    page: int
    page_size: int


class ParetoSet(Result):
    """The non-dominated candidates over endurance, thrust-to-weight, all-up mass and cost."""

    items: list[RankedCandidate]
    total: int
