"""Request/response models for shortlists."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Any, TypeAlias

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import ranged, text
from server.schemas.evaluation import CandidateEvaluation, Result

if TYPE_CHECKING:  # the pydantic constrained-type pattern: mypy sees the plain type
    Id: TypeAlias = int
else:
    Id = ranged(int, 1, 2**63 - 1, "")
MAX_ENTRIES = 6


class ShortlistCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1)  # type: ignore[valid-type]
    mission_id: Id


class ShortlistRename(BaseModel):
    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1)  # type: ignore[valid-type]


class EntryCreate(BaseModel):
    """Four parts and a pack configuration, or a row of a ranking (``ranking_id`` + ``rank``)."""

    model_config = ConfigDict(extra="forbid")

    battery_id: Id | None = None
    esc_id: Id | None = None
    motor_id: Id | None = None
    propeller_id: Id | None = None
    packs_in_parallel: ranged(int, 1, 4, "packs") = 1  # type: ignore[valid-type]
    ranking_id: Id | None = None
    rank: ranged(int, 1, 1_000_000, "") | None = None  # type: ignore[valid-type]
    note: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _one_way(self) -> EntryCreate:
        parts = [self.battery_id, self.esc_id, self.motor_id, self.propeller_id]
        by_rank = self.ranking_id is not None or self.rank is not None
        if by_rank and any(p is not None for p in parts):
            raise ValueError("ranking_id: give either the four part ids or ranking_id with rank, not both")
        if by_rank and (self.ranking_id is None or self.rank is None):
            raise ValueError("ranking_id: an entry from a ranking needs both ranking_id and rank")
        if not by_rank and any(p is None for p in parts):
            raise ValueError("battery_id: give battery_id, esc_id, motor_id and propeller_id (or ranking_id and rank)")
        return self


class EntryUpdate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    note: text(4000) | None = None  # type: ignore[valid-type]


class Reorder(BaseModel):
    model_config = ConfigDict(extra="forbid")

    entry_ids: list[int] = Field(..., min_length=1, max_length=MAX_ENTRIES)


class EntryRead(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: int
    position: int
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    ranking_id: int | None
    note: str
    metrics: dict[str, Any]
    engine_version: str
    added_by: str | None = None
    added_at: datetime


class ShortlistRead(BaseModel):
    id: int
    name: str
    mission_id: int
    mission_name: str
    created_by: str | None
    created_at: datetime
    updated_at: datetime
    entries: list[EntryRead]


class ComparePart(Result):
    id: int
    name: str
    maker: str | None = None
    part_number: str | None = None
    mass_g: float | None = None
    unit_cost: float | None = None
    currency: str | None = None
    archived: bool = False


class NearLimit(Result):
    """A part run close to (or over) what the mission allows at full throttle (services.cautions, one rule)."""

    part: str = Field(description="motor | esc | pack")
    use: float = Field(description="Full-throttle current ÷ the allowed current (≥ 0.9 is near, > 1 over) [-]")
    over: bool
    text: str


class CompareEntry(Result):
    """One candidate of the comparison, freshly evaluated with the current engine and calibrations."""

    entry_id: int
    position: int
    note: str = ""
    added_by: str | None = None
    added_at: datetime
    from_ranking: int | None = None
    calibrated: dict[str, list[str]] = Field(default_factory=dict, description="Calibrated parameters per kind")
    parts: dict[str, ComparePart | None]
    packs_in_parallel: int
    metrics: CandidateEvaluation
    cautions: list[NearLimit] = Field(default_factory=list, description="Parts near or over their limit")
    snapshot_engine_version: str | None = None
    changed_since_snapshot: bool = False


class CompareRow(Result):
    """One compared quantity: a value per entry and which entries are best."""

    group: str
    key: str
    label: str
    unit: str
    better: str | None = Field(default=None, description="low | high | None (not compared)")
    values: list[Any]
    best: list[int] = Field(default_factory=list, description="Positions (0-based) of the best entries")


class CompareRead(Result):
    """The side-by-side comparison of a shortlist."""

    shortlist: dict[str, Any]
    mission: dict[str, Any]
    required_thrust_per_rotor_n: list[float | None]
    engine_version: str
    entries: list[CompareEntry]
    rows: list[CompareRow]


class EntryChange(Result):
    """What a re-evaluation changed for one entry."""

    entry_id: int
    engine_version_before: str | None = None
    engine_version_after: str
    changed: dict[str, dict[str, Any]] = Field(default_factory=dict,
                                               description="Per quantity: {before, after}")


class ReEvaluation(Result):
    changes: list[EntryChange]


class FromRanking(BaseModel):
    """A ranked row into a shortlist of the ranking's mission: an existing one (``shortlist_id``) or a new one
    (``name``, or "<mission> shortlist" with the next free number when omitted)."""

    model_config = ConfigDict(extra="forbid")

    rank: ranged(int, 1, 1_000_000, "", description="Rank of the row in the ranking")  # type: ignore[valid-type]
    shortlist_id: Id | None = None
    name: text(120, min_length=1) | None = None  # type: ignore[valid-type]
    note: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _one_target(self) -> FromRanking:
        if self.shortlist_id is not None and self.name is not None:
            raise ValueError("name: give shortlist_id (an existing shortlist) or name (a new one), not both")
        return self


class AddedToShortlist(BaseModel):
    """Where a candidate went: the shortlist (with all its entries), the new entry, and whether the shortlist is new."""

    shortlist: ShortlistRead
    entry: EntryRead
    created_shortlist: bool
