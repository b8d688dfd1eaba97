"""Request and response models of fleet plans (names are a contract: scripts depend on them)."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import ranged, text
from server.schemas.evaluation import Result


class FleetMission(BaseModel):
    model_config = ConfigDict(extra="forbid")

    mission_id: ranged(int, 1, 2**63 - 1, "")  # type: ignore[valid-type]
    weight: ranged(float, 1e-6, 1e9, "", description="Airframes in service × flight hours a year, or any weight") = 1.0  # type: ignore[valid-type]  # noqa: E501
    airframes: ranged(int, 1, 100_000, "airframes", description="Airframes to equip (bill of materials)") = 1  # type: ignore[valid-type]  # noqa: E501


class PartLimits(BaseModel):
    model_config = ConfigDict(extra="forbid")

    batteries: ranged(int, 1, 1000, "part numbers") | None = None  # type: ignore[valid-type]
    escs: ranged(int, 1, 1000, "part numbers") | None = None  # type: ignore[valid-type]
    motors: ranged(int, 1, 1000, "part numbers") | None = None  # type: ignore[valid-type]
    propellers: ranged(int, 1, 1000, "part numbers") | None = None  # type: ignore[valid-type]


class FleetPlanCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1) = "Fleet plan"  # type: ignore[valid-type]
    missions: list[FleetMission] = Field(..., min_length=1, max_length=20)
    one_battery: bool = False
    max_part_numbers: PartLimits = Field(default_factory=PartLimits)
    stocking_cost: ranged(float, 0, 1e9, "", description="Per stocked part number, in the metric's units") = 0.0  # type: ignore[valid-type]  # noqa: E501
    metric: Literal["cruise_energy", "endurance_margin"] = "cruise_energy"
    candidates_per_mission: ranged(int, 1, 500, "candidates", description="Top K of each mission's ranking") = 300  # type: ignore[valid-type]  # noqa: E501

    @model_validator(mode="after")
    def _distinct(self) -> FleetPlanCreate:
        ids = [m.mission_id for m in self.missions]
        if len(ids) != len(set(ids)):
            raise ValueError("missions: each mission may appear once")
        return self


class FleetPlanStarted(Result):
    id: int
    status: str


class AssignmentRead(Result):
    """The power system one mission flies in the plan (metric values in the plan metric's units)."""

    mission_id: int
    candidate_index: int = Field(description="Position of the candidate in the mission's ranking (0 = best)")
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    metric_value: float | None = Field(default=None, description="Cruise power [W] or endurance margin [min]")
    own_best: float | None = Field(default=None, description="The mission's own best metric value")
    loss_vs_own_best: float | None = Field(default=None, description="What sharing parts costs this mission")
    loss_vs_own_best_weighted: float | None = None
    cruise_power_w: float | None = Field(default=None, description="Craft electrical power at cruise [W]")
    endurance_min: float | None = Field(default=None, description="Flight time [min]")
    margin_min: float | None = Field(default=None, description="Endurance above the mission's minimum [min]")
    weight: float | None = None
    thrust_to_weight: float | None = Field(default=None, description="At full throttle, end of usable capacity [-]")
    all_up_mass_g: float | None = Field(default=None, description="All-up mass [g]")
    cruise_duty: float | None = Field(default=None, description="PWM duty at the hover/cruise point [-]")
    cost: float | None = Field(default=None, description="Parts cost per airframe (the parts' currency)")


class InfeasibilityRead(Result):
    """Why no shared plan exists: the conflicting missions and the binding limits."""

    message: str
    binding: list[str] = Field(default_factory=list)
    conflicting_missions: list[int] = Field(default_factory=list)
    battery_conflicts: list[list[int]] = Field(default_factory=list)
    minimum_needed: dict[str, int] = Field(default_factory=dict)
    limits: dict[str, int | None] = Field(default_factory=dict)


class FleetResultRead(Result):
    """The optimal plan (``objective`` includes the stocking cost, ``fleet_metric`` does not)."""

    status: str = Field(description="optimal | limit_reached | infeasible | error")
    message: str | None = None
    metric: str | None = None
    objective: float | None = None
    fleet_metric: float | None = Field(default=None, description="Σ weight × cruise power [W], or worst margin [min]")
    part_numbers: int | None = None
    stocking_total: float | None = None
    dual_bound: float | None = None
    mip_gap: float | None = None
    assignments: list[AssignmentRead] = Field(default_factory=list)
    stocked: dict[str, list[int]] = Field(default_factory=dict, description="Part ids to stock, per kind")
    solve_time_s: float | None = None
    infeasibility: InfeasibilityRead | None = None
    mission_names: dict[str, str] = Field(default_factory=dict)


class TradeoffPointRead(Result):
    """One point of the price-of-commonality curve: the best plan stocking at most ``part_numbers`` parts."""

    part_numbers: int
    objective: float | None = None
    objective_with_stocking: float | None = None
    parts_used: int | None = None
    status: str | None = None
    mip_gap: float | None = None
    assignments: list[AssignmentRead] = Field(default_factory=list)
    stocked: dict[str, list[int]] = Field(default_factory=dict)
    solve_time_s: float | None = None


class FleetPlanMissionRead(Result):
    mission_id: int
    name: str
    weight: float
    airframes: int


class FleetPlanStatus(Result):
    """A fleet-plan job: status, the plan and its trade-off curve."""

    id: int
    name: str
    status: str = Field(description="queued | running | done | failed | cancelled")
    progress: float
    metric: str
    engine_version: str
    result: FleetResultRead | None = None
    tradeoff: list[TradeoffPointRead] | None = None
    timings: dict[str, float] = Field(default_factory=dict)
    error: str | None = None
    missions: list[FleetPlanMissionRead]
    created_at: datetime
    finished_at: datetime | None = None
