"""Request/response models for rankings."""

from __future__ import annotations

from datetime import datetime

from pydantic import BaseModel, ConfigDict, Field

from server.schemas._fields import ranged
from server.schemas.evaluation import (
    FlightStateRead,
    Margins,
    ProfileRead,
    RankedCandidate,
    RankedCruise,
    RankedFullThrottle,
    Result,
    RowAssumptions,
)
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
    rejected_examples: dict[str, list[CandidateKey]] = Field(
        default_factory=dict, description="Per reason, the first few rejected combinations in part-id order "
                                          "(explain them with POST /api/v1/explain)")
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


class CandidateKey(Result):
    """One power system by its parts."""

    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int = 1


class ExplainRequest(BaseModel):
    """A power system and the mission (or the ranking, whose stored library is then used) to explain it for."""

    model_config = ConfigDict(extra="forbid")

    mission_id: ranged(int, 1, 2**63 - 1, "") | None = None  # type: ignore[valid-type]
    ranking_id: ranged(int, 1, 2**63 - 1, "", description="Use this ranking's library as it ran") | None = None  # type: ignore[valid-type]  # noqa: E501
    battery_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    esc_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    motor_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    propeller_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    packs_in_parallel: ranged(int, 1, 8, "packs") = 1  # type: ignore[valid-type]


class CheckRead(Result):
    """One rejection reason for the candidate, with the number it was decided on."""

    reason: str = Field(description="The ranking's reason key (same keys and order as its rejected counts)")
    passed: bool | None = Field(description="None: not evaluated (an earlier check lacks the data it needs)")
    value: float | None = None
    limit: float | list[float] | None = Field(default=None, description="A number, or [low, high] for a band")
    unit: str = ""
    margin: float | None = Field(default=None, description="How far inside the limit (negative: outside)")
    text: str = ""
    detail: str = ""


class Explanation(Result):
    """Why this verdict: every check in the ranking's order, the first that failed, and the numbers."""

    mission_id: int | None
    ranking_id: int | None = None
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    feasible: bool
    first_failed: str | None
    checks: list[CheckRead]
    cruise: RankedCruise | None = None
    full_throttle: RankedFullThrottle | None = None
    endurance_min: float | None = None
    all_up_mass_g: float | None = None
    cost: float | None = None
    margins: Margins | None = None
    profile: ProfileRead | None = Field(default=None, description="The flight profile flown (missions with segments)")
    sources: dict[str, dict[str, str]] = Field(default_factory=dict,
                                               description="Per part kind, parameters not from the part itself")
    notes: list[str] = Field(default_factory=list)
    endurance_min_band: list[float] | None = Field(default=None, description="80 % band of the endurance [min]")
    feasible_share: float | None = Field(
        default=None, description="Share of the uncertainty draws in which the system passes every limit [-]")
    assumed_share: float | None = Field(
        default=None, description="Width of the cruise-power band with only priors varied ÷ its full width [-]")
    assumed: RowAssumptions | None = Field(default=None, description="Parameters resting on priors, per part")
    flight: FlightStateRead | None = Field(default=None, description="Multirotor flight state (forward flight, "
                                                                     "climb, coaxial); null for a plain hover")
