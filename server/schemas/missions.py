"""Request/response models for airframes and missions."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Literal, TypeAlias

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import partial_model, ranged, text

MissionKind = Literal["hover", "cruise", "forward_flight"]
SegmentKind = Literal["hover", "climb", "descent", "forward", "cruise"]
MAX_SEGMENTS = 40


class SegmentIn(BaseModel):
    """One segment of a flight profile, flown in the order given.

    How long it lasts: ``duration_s``, or ``distance_m`` (forward, cruise: at the segment's or the mission's
    airspeed), or ``height_m`` (climb, descent: at the climb rate). Exactly one of them.
    """

    model_config = ConfigDict(extra="forbid")

    kind: SegmentKind
    label: text(60) = ""  # type: ignore[valid-type]
    duration_s: ranged(float, 1, 86_400, "s", description="How long the segment lasts") | None = None  # type: ignore[valid-type]
    distance_m: ranged(float, 1, 1_000_000, "m", description="Ground distance (forward, cruise)") | None = None  # type: ignore[valid-type]
    height_m: ranged(float, 0.5, 10_000, "m", description="Height gained or lost (climb, descent)") | None = None  # type: ignore[valid-type]
    airspeed_m_s: ranged(float, 0.5, 60, "m/s", description="Airspeed (forward)") | None = None  # type: ignore[valid-type]
    climb_rate_m_s: ranged(  # type: ignore[valid-type]
        float, -30, 30, "m/s", description="Vertical speed (climb, descent: > 0; cruise: + up, − down)") | None = None

    @model_validator(mode="after")
    def _consistent(self) -> SegmentIn:
        given = [n for n in ("duration_s", "distance_m", "height_m") if getattr(self, n) is not None]
        if len(given) != 1:
            raise ValueError("duration_s: give exactly one of duration_s, distance_m or height_m")
        if self.kind == "forward" and self.airspeed_m_s is None:
            raise ValueError("airspeed_m_s: a forward segment needs its airspeed")
        if self.kind in ("climb", "descent") and not (self.climb_rate_m_s or 0.0) > 0.0:
            raise ValueError(f"climb_rate_m_s: a {self.kind} segment needs a vertical speed above 0")
        if self.distance_m is not None and self.kind not in ("forward", "cruise"):
            raise ValueError("distance_m: only forward and cruise segments cover a distance")
        if self.height_m is not None and self.kind not in ("climb", "descent"):
            raise ValueError("height_m: only climb and descent segments have a height")
        return self


class AirframeCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1)  # type: ignore[valid-type]
    rotor_count: ranged(int, 1, 16, "rotors", description="Rotors (1 for a fixed-wing puller)")  # type: ignore[valid-type]
    frame_mass_g: ranged(float, 1, 500_000, "g", description="Frame mass without motors, ESCs, props and packs")  # type: ignore[valid-type]
    max_prop_diameter_in: ranged(float, 1, 80, "in", description="Largest propeller that fits") | None = None  # type: ignore[valid-type]
    max_packs_in_parallel: ranged(int, 1, 4, "packs", description="Identical packs flown in parallel") = 1  # type: ignore[valid-type]
    drag_area_m2: ranged(  # type: ignore[valid-type]
        float, 0, 5, "m²", description="Airframe drag area C_D·A for multirotor forward flight and climb "
                                       "(drag = ½ρV²·C_D·A); blank: not stated, no airframe drag counted") | None = None
    frontal_area_note: text(500) = ""  # type: ignore[valid-type]
    coaxial: bool = False
    notes: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _pairs(self) -> AirframeCreate:
        if self.coaxial and self.rotor_count % 2:
            raise ValueError("coaxial: a coaxial airframe counts both rotors of every pair (an even rotor_count)")
        return self


class AirframeRead(AirframeCreate):
    model_config = ConfigDict(from_attributes=True, extra="ignore")

    id: int
    version: int
    created_at: datetime
    updated_at: datetime


class MissionCreate(BaseModel):
    """A mission; every limit defaults to common practice (no published source) and can be edited."""

    model_config = ConfigDict(extra="forbid")

    name: text(120, min_length=1)  # type: ignore[valid-type]
    airframe_id: ranged(int, 1, 2**63 - 1, "", description="Id of one of your airframes")  # type: ignore[valid-type]
    kind: MissionKind
    payload_mass_g: ranged(float, 0, 500_000, "g", description="Payload carried") = 0.0  # type: ignore[valid-type]
    altitude_m: ranged(float, -500, 11_000, "m", description="Altitude (ISA troposphere)") = 0.0  # type: ignore[valid-type]
    temperature_offset_c: ranged(float, -60, 60, "°C", description="Offset from the ISA temperature") = 0.0  # type: ignore[valid-type]
    cruise_airspeed_m_s: ranged(  # type: ignore[valid-type]
        float, 0.5, 150, "m/s", description="Cruise airspeed (cruise and forward-flight missions)") | None = None
    lift_to_drag: ranged(float, 1, 60, "", description="Lift-to-drag ratio at cruise") | None = None  # type: ignore[valid-type]
    min_thrust_to_weight: ranged(float, 0, 20, "", description="Minimum thrust-to-weight at full throttle") = 2.0  # type: ignore[valid-type]
    duty_min: ranged(float, 0.05, 1, "", description="Lowest acceptable hover/cruise PWM duty") = 0.40  # type: ignore[valid-type]
    duty_max: ranged(float, 0.05, 1, "", description="Highest acceptable hover/cruise PWM duty") = 0.75  # type: ignore[valid-type]
    min_endurance_min: ranged(float, 0, 1440, "min", description="Minimum endurance") = 0.0  # type: ignore[valid-type]
    usable_fraction: ranged(float, 0.1, 1, "", description="Usable share of pack capacity (1 − reserve)") = 0.8  # type: ignore[valid-type]
    cutoff_v_per_cell: ranged(float, 2.5, 4.0, "V", description="Under-load cut-off per cell") = 3.3  # type: ignore[valid-type]
    esc_current_margin: ranged(float, 1, 5, "", description="ESC continuous rating ÷ full-throttle motor current") = 1.2  # type: ignore[valid-type]
    pack_current_fraction: ranged(float, 0.05, 1, "", description="Allowed share of the pack's continuous C rating") = (  # type: ignore[valid-type]
        0.8
    )
    cruise_state_of_charge: ranged(  # type: ignore[valid-type]
        float, 0.05, 1, "", description="State of charge at which the cruise point is scored"
    ) = 0.5
    max_all_up_mass_g: ranged(float, 1, 1_000_000, "g", description="Largest acceptable all-up mass") | None = None  # type: ignore[valid-type]
    min_thrust_to_weight_motor_out: ranged(  # type: ignore[valid-type]
        float, 0, 20, "", description="Minimum thrust-to-weight with the worst single motor out (hexa and larger: "
                                      "a quad cannot hold attitude with one out); blank: not checked") | None = None
    climb_rate_m_s: ranged(  # type: ignore[valid-type]
        float, -10, 20, "m/s", description="Climb rate at the cruise point of a multirotor mission "
                                           "(hover, forward flight); negative: descent") = 0.0
    temperature_effects: bool = Field(
        default=False, description="Heat and cold at the mission's air temperature: motor windings at their "
                                   "temperature (and checked against their maximum), the pack at the air temperature; "
                                   "no (false): every part at the temperature its values are stated at")
    burst_s: ranged(  # type: ignore[valid-type]
        float, 0, 3600, "s", description="Full-throttle burst from the hover/cruise winding temperature, checked "
                                         "against the motor's maximum (with temperature effects)") = 0.0
    cold_day_temperature_c: ranged(  # type: ignore[valid-type]
        float, -60, 50, "°C", description="Re-check thrust-to-weight and endurance at this colder air temperature "
                                          "(pack resistance and air density of that day); blank: no cold-day check"
    ) | None = None
    segments: list[SegmentIn] = Field(default_factory=list, max_length=MAX_SEGMENTS,
                                      description="Flight profile flown in order (empty: the single cruise point)")
    reserve_min: ranged(  # type: ignore[valid-type]
        float, 0, 120, "min", description="Hover (multirotor) or cruise (fixed-wing) left after the profile") = 0.0
    notes: text(4000) = ""  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _consistent(self) -> MissionCreate:
        if self.kind == "forward_flight" and self.cruise_airspeed_m_s is None:
            raise ValueError("cruise_airspeed_m_s: a forward_flight mission needs its airspeed")
        if self.kind == "cruise" and self.climb_rate_m_s != 0:
            raise ValueError("climb_rate_m_s: applies to multirotor missions (hover, forward_flight) only")
        if self.duty_min > self.duty_max:
            raise ValueError("duty_min: must not be above the highest duty (duty_max)")
        if self.kind == "cruise" and self.cruise_airspeed_m_s is None:
            raise ValueError("cruise_airspeed_m_s: a cruise mission needs its cruise airspeed")
        if self.kind == "cruise" and self.lift_to_drag is None:
            raise ValueError("lift_to_drag: a cruise mission needs the lift-to-drag ratio at cruise")
        if self.burst_s > 0 and not self.temperature_effects:
            raise ValueError("burst_s: a full-throttle burst is checked by the winding temperature model: turn on "
                             "temperature_effects, or leave the burst at 0")
        allowed = ("cruise",) if self.kind == "cruise" else ("hover", "climb", "descent", "forward")
        for i, seg in enumerate(self.segments):
            if seg.kind not in allowed:
                raise ValueError(f"segments.{i}.kind: a {self.kind} mission flies {', '.join(allowed)} segments")
            if (seg.kind == "cruise" and seg.climb_rate_m_s is not None and self.cruise_airspeed_m_s is not None
                    and abs(seg.climb_rate_m_s) >= self.cruise_airspeed_m_s):
                raise ValueError(f"segments.{i}.climb_rate_m_s: must be below the cruise airspeed")
        if self.reserve_min > 0 and not self.segments:
            raise ValueError("reserve_min: a reserve belongs to a flight profile (add segments)")
        return self


class MissionRead(MissionCreate):
    model_config = ConfigDict(from_attributes=True, extra="ignore")

    id: int
    version: int
    created_at: datetime
    updated_at: datetime


if TYPE_CHECKING:  # built at run time, so mypy only knows they are models
    AirframeUpdate: TypeAlias = BaseModel
    MissionUpdate: TypeAlias = BaseModel
else:
    AirframeUpdate = partial_model(AirframeCreate, "AirframeUpdate")
    MissionUpdate = partial_model(MissionCreate, "MissionUpdate")
