"""Request/response models of POST /api/v1/predict (units in every field name)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Literal, TypeAlias

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.schemas._fields import ranged
from server.schemas.evaluation import FlightStateRead, LossBreakdown
from server.schemas.parts import ForwardRow, StaticRow

if TYPE_CHECKING:  # the pydantic constrained-type pattern: mypy sees the plain type
    Id: TypeAlias = int
else:
    Id = ranged(int, 1, 2**63 - 1, "", description="Id of a saved part of your team")


class BatteryIn(BaseModel):
    """A saved pack (``id``, fields override it), an inline pack, or a stiff bench supply (``supply_voltage_v``)."""

    model_config = ConfigDict(extra="forbid")

    id: Id | None = None
    supply_voltage_v: ranged(float, 0.5, 200, "V", description="Stiff bench supply: no sag, no endurance") | None = None  # type: ignore[valid-type]  # noqa: E501
    chemistry: Literal["lipo", "lihv", "liion"] | None = None
    cells_series: ranged(int, 1, 24, "cells") | None = None  # type: ignore[valid-type]
    cells_parallel: ranged(int, 1, 20, "cells") | None = None  # type: ignore[valid-type]
    capacity_mah: ranged(float, 50, 500_000, "mAh") | None = None  # type: ignore[valid-type]
    cell_resistance_mohm: ranged(float, 0.1, 1000, "mΩ") | None = None  # type: ignore[valid-type]
    max_continuous_c: ranged(float, 0.1, 500, "C") | None = None  # type: ignore[valid-type]
    wiring_resistance_ohm: ranged(float, 0, 1, "Ω", description="Leads and connectors") = 0.0  # type: ignore[valid-type]
    packs_in_parallel: ranged(int, 1, 4, "packs") = 1  # type: ignore[valid-type]
    state_of_charge: ranged(float, 0, 1, "", description="Pack state of charge for the points") = 1.0  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _supply_alone(self) -> BatteryIn:
        if self.supply_voltage_v is not None and self.id is not None:
            raise ValueError("supply_voltage_v: give either a bench supply voltage or a pack, not both")
        return self


class EscIn(BaseModel):
    model_config = ConfigDict(extra="forbid")

    id: Id | None = None
    r_on_path_ohm: ranged(float, 0, 1, "Ω") | None = None  # type: ignore[valid-type]
    pwm_frequency_khz: ranged(float, 1, 200, "kHz") | None = None  # type: ignore[valid-type]
    switching_time_ns: ranged(float, 0, 10_000, "ns") | None = None  # type: ignore[valid-type]
    dead_time_ns: ranged(float, 0, 10_000, "ns") | None = None  # type: ignore[valid-type]
    diode_drop_v: ranged(float, 0, 3, "V") | None = None  # type: ignore[valid-type]
    input_esr_ohm: ranged(float, 0, 1, "Ω") | None = None  # type: ignore[valid-type]
    k_pwm: ranged(float, 0, 10, "") | None = None  # type: ignore[valid-type]
    continuous_current_a: ranged(float, 1, 1000, "A") | None = None  # type: ignore[valid-type]


class MotorIn(BaseModel):
    model_config = ConfigDict(extra="forbid")

    id: Id | None = None
    kv_rpm_per_v: ranged(float, 10, 20_000, "rpm/V") | None = None  # type: ignore[valid-type]
    winding_resistance_ohm: ranged(float, 0.0005, 50, "Ω") | None = None  # type: ignore[valid-type]
    no_load_current_a: ranged(float, 0, 50, "A") | None = None  # type: ignore[valid-type]
    inductance_uh: ranged(float, 0.1, 100_000, "µH") | None = None  # type: ignore[valid-type]
    max_current_a: ranged(float, 0.1, 1000, "A") | None = None  # type: ignore[valid-type]
    thermal_resistance_k_per_w: ranged(float, 0.01, 100, "K/W") | None = None  # type: ignore[valid-type]
    thermal_time_constant_s: ranged(float, 1, 10_000, "s") | None = None  # type: ignore[valid-type]
    max_winding_temperature_c: ranged(float, 40, 250, "°C") | None = None  # type: ignore[valid-type]


class PropellerIn(BaseModel):
    model_config = ConfigDict(extra="forbid")

    id: Id | None = None
    diameter_in: ranged(float, 1, 80, "in") | None = None  # type: ignore[valid-type]
    pitch_in: ranged(float, 0.5, 80, "in") | None = None  # type: ignore[valid-type]
    blades: ranged(int, 1, 8, "blades") | None = None  # type: ignore[valid-type]
    ct: ranged(float, 0.001, 1, "") | None = None  # type: ignore[valid-type]
    cp: ranged(float, 0.001, 1, "") | None = None  # type: ignore[valid-type]
    static_table: list[StaticRow] | None = Field(None, min_length=1, max_length=500)
    forward_table: list[ForwardRow] | None = Field(None, min_length=2, max_length=500)


class Conditions(BaseModel):
    model_config = ConfigDict(extra="forbid")

    altitude_m: ranged(float, -500, 11_000, "m") = 0.0  # type: ignore[valid-type]
    temperature_offset_c: ranged(float, -60, 60, "°C", description="Offset from ISA") | None = None  # type: ignore[valid-type]
    air_temperature_c: ranged(float, -60, 60, "°C", description="Measured air temperature") | None = None  # type: ignore[valid-type]
    airspeed_m_s: ranged(float, 0, 150, "m/s", description="Axial airspeed (forward table)") = 0.0  # type: ignore[valid-type]
    forward_airspeed_m_s: ranged(  # type: ignore[valid-type]
        float, 0, 60, "m/s", description="Horizontal airspeed of a multirotor: thrust points in forward flight "
                                         "(static table, docs/model-reference.md#multirotor-flight-state)") = 0.0
    climb_rate_m_s: ranged(  # type: ignore[valid-type]
        float, -10, 20, "m/s", description="Climb rate of a multirotor at thrust points (negative: descent)") = 0.0
    drag_area_m2: ranged(  # type: ignore[valid-type]
        float, 0, 5, "m²", description="Airframe drag area C_D·A in forward flight and climb") = 0.0
    coaxial: bool = False  # rotors stacked in coaxial pairs: induced power × 1.2808 at thrust points

    @model_validator(mode="after")
    def _one_temperature(self) -> Conditions:
        if self.temperature_offset_c is not None and self.air_temperature_c is not None:
            raise ValueError("air_temperature_c: give either temperature_offset_c or air_temperature_c")
        if self.airspeed_m_s > 0 and (self.forward_airspeed_m_s > 0 or self.climb_rate_m_s != 0 or self.coaxial):
            raise ValueError("airspeed_m_s: the axial airspeed reads a fixed-wing forward table; a multirotor's flight "
                             "(forward_airspeed_m_s, climb_rate_m_s, coaxial) uses the static table")
        return self

    @property
    def multirotor_flight(self) -> bool:
        """Thrust points take the multirotor flight state (forward flight, climb or descent, coaxial pairs)."""
        return self.forward_airspeed_m_s > 0 or self.climb_rate_m_s != 0 or self.coaxial


class PointIn(BaseModel):
    """Exactly one of throttle (PWM duty 0–1), thrust_n (per rotor) or rpm."""

    model_config = ConfigDict(extra="forbid")

    throttle: ranged(float, 0.01, 1, "") | None = None  # type: ignore[valid-type]
    thrust_n: ranged(float, 0.001, 100_000, "N", description="Thrust per rotor") | None = None  # type: ignore[valid-type]
    rpm: ranged(float, 1, 200_000, "rpm") | None = None  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _exactly_one(self) -> PointIn:
        given = [k for k in ("throttle", "thrust_n", "rpm") if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError("points: each point needs exactly one of throttle, thrust_n or rpm")
        return self

    @property
    def kind(self) -> str:
        return next(k for k in ("throttle", "thrust_n", "rpm") if getattr(self, k) is not None)


class EnduranceIn(BaseModel):
    """Discharge at a constant thrust per rotor (the usual case) or at a constant pack power."""

    model_config = ConfigDict(extra="forbid")

    thrust_n: ranged(float, 0.001, 100_000, "N", description="Thrust per rotor held during the discharge") | None = None  # type: ignore[valid-type]  # noqa: E501
    power_w: ranged(float, 0.1, 1_000_000, "W", description="Constant power at the pack terminals") | None = None  # type: ignore[valid-type]  # noqa: E501
    usable_fraction: ranged(float, 0.05, 1, "") = 0.8  # type: ignore[valid-type]
    cutoff_v_per_cell: ranged(float, 2.5, 4.0, "V") = 3.3  # type: ignore[valid-type]
    peukert_exponent: ranged(float, 1, 1.5, "") = 1.0  # type: ignore[valid-type]

    @model_validator(mode="after")
    def _one_load(self) -> EnduranceIn:
        if (self.thrust_n is None) == (self.power_w is None):
            raise ValueError("endurance: give exactly one of thrust_n or power_w")
        return self


class HeatIn(BaseModel):
    """Ask for winding temperatures: each point's steady temperature and a full-throttle burst from the hover point."""

    model_config = ConfigDict(extra="forbid")

    burst_s: ranged(  # type: ignore[valid-type]
        float, 0, 3600, "s", description="Full-throttle burst from the temperature of the first point by thrust (else "
                                         "the first point)") = 0.0
    motor_mass_g: ranged(  # type: ignore[valid-type]
        float, 1, 100_000, "g", description="For the assumed thermal resistance of a motor given without one (a saved "
                                            "motor's own mass otherwise)") | None = None


class PredictRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    battery: BatteryIn
    esc: EscIn = Field(default_factory=EscIn)
    motor: MotorIn
    propeller: PropellerIn
    rotor_count: ranged(int, 1, 16, "rotors") = 1  # type: ignore[valid-type]
    all_up_mass_g: ranged(float, 1, 1_000_000, "g", description="For thrust-to-weight") | None = None  # type: ignore[valid-type]
    conditions: Conditions = Field(default_factory=Conditions)
    points: list[PointIn] = Field(..., min_length=1, max_length=200)
    endurance: EnduranceIn | None = None
    heat: HeatIn | None = None


class Losses(BaseModel):
    """``losses_w``: the first API version's names of :class:`LossBreakdown`'s values (kept for scripts)."""

    motor_copper: float | None
    motor_no_load: float | None
    esc_conduction: float | None
    pwm_ripple: float | None
    switching: float | None
    dead_time: float | None
    input_capacitor: float | None
    calibrated_pwm: float | None


class Craft(BaseModel):
    thrust_n: float | None
    bus_current_a: float | None
    electrical_power_w: float | None
    pack_loss_w: float | None
    thrust_to_weight: float | None = None


class PointBands(BaseModel):
    """The central 80 % of the predictions over every uncertain parameter (per rotor; 10th and 90th percentiles)."""

    level: float = Field(description="Central probability of each band")
    electrical_power_w: list[float | None] = Field(default_factory=list, description="[low, high] per rotor [W]")
    thrust_n: list[float | None] = Field(default_factory=list, description="[low, high] per rotor [N]")
    motor_current_a: list[float | None] = Field(default_factory=list, description="[low, high] per rotor [A]")


class PointOut(BaseModel):
    request: dict[str, float]
    status: str
    rpm: float | None
    thrust_n: float | None
    torque_nm: float | None
    shaft_power_w: float | None
    duty: float | None
    motor_current_a: float | None
    motor_voltage_v: float | None
    bus_voltage_v: float | None
    bus_current_a: float | None
    electrical_power_w: float | None
    drive_efficiency: float | None
    specific_thrust_g_per_w: float | None
    losses: LossBreakdown = Field(description="Every loss term of one rotor at this point [W]")
    losses_w: Losses
    craft: Craft
    warnings: list[str]
    bands: PointBands | None = None
    flight: FlightStateRead | None = Field(default=None, description="Multirotor flight state of a thrust point "
                                                                     "(with forward_airspeed_m_s, climb or coaxial)")


class EnduranceOut(BaseModel):
    minutes: float | None
    seconds: float | None
    stop_reason: str
    final_state_of_charge: float | None
    start: dict[str, float | None]
    end: dict[str, float | None]
    minutes_band: list[float | None] | None = Field(default=None, description="[low, high] 80 % band [min]")


class HeatPoint(BaseModel):
    winding_temperature_c: float | None = Field(description="Steady winding temperature at this point [°C]")
    runaway: bool = Field(description="No steady temperature: copper loss rises faster than the air removes it")
    over_limit: bool = Field(description="Above the motor's maximum winding temperature (or runaway)")


class BurstCurve(BaseModel):
    t_s: list[float]
    temperature_c: list[float | None]


class BurstOut(BaseModel):
    from_point: int = Field(description="The point (1-based, request order) the burst starts from: the first by "
                                        "thrust (the hover or cruise point), else the first")
    from_c: float | None = Field(description="Winding temperature at the start (that point's) [°C]")
    after_c: float | None = Field(description="Winding temperature at the end of the burst [°C]")
    full_throttle_current_a: float | None = Field(description="Motor current at full throttle (R as stated) [A]")
    over_limit: bool
    curve: BurstCurve


class HeatOut(BaseModel):
    """Winding temperatures (docs/model-reference.md#heat)."""

    air_temperature_c: float
    burst_s: float
    thermal_resistance_k_per_w: float
    thermal_time_constant_s: float
    max_winding_temperature_c: float
    sources: dict[str, str] = Field(description="Per thermal value: stated (part or request) or prior")
    points: list[HeatPoint]
    burst: BurstOut | None = None


class PredictResponse(BaseModel):
    air_density_kg_m3: float
    points: list[PointOut]
    endurance: EnduranceOut | None = None
    parameters: dict[str, dict[str, dict[str, Any]]]
    assumed: dict[str, list[str]] = Field(default_factory=dict,
                                          description="Per part, the parameters that rest on a prior (not measured)")
    warnings: list[str]
    heat: HeatOut | None = None
