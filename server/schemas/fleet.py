"""Request model of a fleet plan (names are a contract: scripts depend on them)."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import ranged, text


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
