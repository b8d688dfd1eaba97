"""Typed results of evaluating a power system: one loss breakdown and the shapes rankings and compare share.

Response models keep unknown keys (``extra="allow"``): stored results written by an older engine version may
carry fields this version no longer computes, and scripts that read them must keep working. Every field the
engine writes today is declared here, so the OpenAPI document describes it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from pydantic import BaseModel, ConfigDict, Field, create_model

from server.physics.operating_point import LOSS_TERMS


class Result(BaseModel):
    """Base of response models: declared fields documented, other stored keys passed through."""

    model_config = ConfigDict(extra="allow")


if TYPE_CHECKING:  # mypy sees a plain model; the real one is built from the physics' list of terms below

    class LossBreakdown(Result):
        """Every loss term of one rotor at an operating point [W] (``pack_w``: the pack's loss, whole craft)."""

        pack_w: float | None = None

else:
    LossBreakdown = create_model(
        "LossBreakdown",
        __base__=Result,
        __doc__="Every loss term of one rotor at an operating point [W] (``pack_w``: the pack's loss, whole craft).",
        **{name: (float | None, Field(default=None, description=f"{label.capitalize()}, per rotor [W]"))
           for name, _, label in LOSS_TERMS},
        pack_w=(float | None, Field(default=None, description="Pack internal I² R, whole craft [W]")),
    )


class Margins(Result):
    """Ratings against the full-throttle point (fresh pack): below 1 (motor, pack) / above 1 (ESC) is inside."""

    motor_current_ratio: float | None = Field(default=None, description="Full-throttle motor current ÷ motor rating")
    esc_rating_ratio: float | None = Field(default=None, description="ESC rating ÷ full-throttle motor current")
    pack_current_ratio: float | None = Field(default=None, description="Full-throttle ÷ allowed pack current")


class RankedCruise(Result):
    """The cruise (hover) point of a ranked candidate at the mission's cruise state of charge."""

    duty: float | None = Field(default=None, description="PWM duty (hover/cruise throttle) [-]")
    rpm: float | None = Field(default=None, description="Shaft speed [rpm]")
    electrical_power_w: float | None = Field(default=None, description="ESC input power, whole craft [W]")
    specific_thrust_g_per_w: float | None = Field(default=None, description="Thrust per electrical power [g/W]")
    bus_current_a: float | None = Field(default=None, description="Pack current, whole craft [A]")
    bus_voltage_v: float | None = Field(default=None, description="Pack terminal (bus) voltage [V]")
    drive_efficiency: float | None = Field(default=None, description="Shaft ÷ electrical power (motor + ESC) [-]")
    thrust_n: float | None = Field(default=None, description="Thrust per rotor [N]")
    motor_current_a: float | None = Field(default=None, description="Motor current per rotor [A]")
    shaft_power_w: float | None = Field(default=None, description="Shaft power per rotor [W]")
    state_of_charge: float | None = Field(default=None, description="Pack state of charge of this point [-]")
    losses: LossBreakdown = Field(default_factory=lambda: LossBreakdown())
    electrical_power_w_band: list[float] | None = Field(
        default=None, description="80 % band [10th, 90th percentile] of the craft's electrical power [W]")
    specific_thrust_g_per_w_band: list[float] | None = Field(default=None, description="80 % band of g/W")
    thrust_per_rotor_n: float | None = Field(default=None, description="= thrust_n, named: per rotor [N]")
    motor_current_per_rotor_a: float | None = Field(default=None, description="= motor_current_a, named: per rotor [A]")
    shaft_power_per_rotor_w: float | None = Field(default=None, description="= shaft_power_w, named: per rotor [W]")
    electrical_power_craft_w: float | None = Field(default=None, description="= electrical_power_w, named: craft [W]")
    bus_current_craft_a: float | None = Field(default=None, description="= bus_current_a, named: craft [A]")
    winding_temperature_c: float | None = Field(
        default=None, description="Steady motor winding temperature at this point (missions with temperature "
                                  "effects; None: thermal runaway or not computed) [°C]")


class RankedFullThrottle(Result):
    """Full throttle (duty 1): thrust at the end of usable capacity, currents with a full pack."""

    thrust_to_weight: float | None = Field(default=None, description="Full-throttle thrust ÷ weight (end of usable)")
    thrust_n: float | None = Field(default=None, description="Thrust per rotor, end of usable capacity [N]")
    motor_current_a: float | None = Field(default=None, description="Motor current per rotor, full pack [A]")
    bus_current_a: float | None = Field(default=None, description="Pack current, whole craft, full pack [A]")
    bus_voltage_v: float | None = Field(default=None, description="Bus voltage, full pack [V]")
    rpm: float | None = Field(default=None, description="Shaft speed, full pack [rpm]")
    thrust_to_weight_band: list[float] | None = Field(default=None, description="80 % band of thrust ÷ weight")
    thrust_per_rotor_n: float | None = Field(default=None, description="= thrust_n, named: per rotor [N]")
    motor_current_per_rotor_a: float | None = Field(default=None, description="= motor_current_a, named: per rotor [A]")
    electrical_power_craft_w: float | None = Field(default=None, description="= electrical_power_w, named: craft [W]")
    bus_current_craft_a: float | None = Field(default=None, description="= bus_current_a, named: craft [A]")
    winding_temperature_c: float | None = Field(
        default=None, description="Motor winding temperature after the mission's full-throttle burst from the "
                                  "cruise temperature (missions with temperature effects) [°C]")


class RowAssumptions(Result):
    """Model parameters of each part that rest on a prior (neither stated on the part nor measured)."""

    battery: list[str] = Field(default_factory=list)
    esc: list[str] = Field(default_factory=list)
    motor: list[str] = Field(default_factory=list)
    propeller: list[str] = Field(default_factory=list)


class ProfileSegmentRead(Result):
    """One flown segment of a mission's flight profile (the reserve is the last one when the mission sets it)."""

    label: str
    kind: str = Field(description="hover | climb | descent | forward | cruise")
    duration_s: float = Field(description="Planned duration [s]")
    airspeed_m_s: float = Field(default=0.0, description="Airspeed (forward segments) [m/s]")
    climb_rate_m_s: float = Field(default=0.0, description="Vertical speed [m/s]")
    reserve: bool = Field(default=False, description="The reserve flown after the mission's own segments")
    start_state_of_charge: float | None = Field(default=None, description="State of charge at its start [-]")
    end_state_of_charge: float | None = Field(default=None, description="State of charge at its end [-]")
    energy_wh: float | None = Field(default=None, description="Energy drawn from the pack in it [Wh]")
    flown: bool = Field(default=True, description="Flown to its end")


class ProfileRead(Result):
    """The mission's flight profile flown by this system: state of charge carried over, sag and cut-off."""

    completed: bool = Field(description="Every segment and the reserve flown")
    stop: str = Field(description="completed, or why the flight stopped")
    stop_segment: int | None = Field(default=None, description="Index of the segment it stopped in")
    completed_share: float = Field(description="Share of the profile's time flown (1 when completed) [-]")
    total_energy_wh: float = Field(description="Energy over the mission's segments, reserve excluded [Wh]")
    total_energy_wh_band: list[float] | None = Field(default=None, description="80 % band of that energy [Wh]")
    reserve_min: float = Field(default=0.0, description="Reserve flown after the segments [min]")
    segments: list[ProfileSegmentRead]


class RankedCandidate(Result):
    """One ranked power system (craft totals unless a field says per rotor)."""

    rank: int | None = Field(default=None, description="1 = best by the objective; None for a Pareto-only row")
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    all_up_mass_g: float
    cruise: RankedCruise
    full_throttle: RankedFullThrottle
    endurance_min: float | None = Field(default=None, description="Flight time (discharge simulation) [min]")
    endurance_stop_reason: str | None = None
    endurance_refined: bool = False
    screening_endurance_min: float | None = Field(default=None, description="Usable capacity ÷ cruise current [min]")
    cost: float | None = Field(default=None, description="k packs + one ESC, motor and propeller per rotor [currency]")
    margins: Margins = Field(default_factory=lambda: Margins())
    pack_voltage_nominal_v: float | None = Field(default=None, description="S × nominal cell voltage [V]")
    cells_series: int | None = None
    pareto: bool = False
    result_id: int | None = None
    endurance_min_band: list[float] | None = Field(default=None, description="80 % band of the endurance [min]")
    indistinguishable_from_best: bool | None = Field(
        default=None, description="The objective's 80 % band overlaps rank 1's: the data cannot tell them apart "
                                  "(mass and cost: equal values). None without bands or rank")
    feasible_share: float | None = Field(
        default=None, description="Share of the uncertainty draws in which the system passes every limit [-]")
    assumed_share: float | None = Field(
        default=None, description="Width of the cruise-power band with only priors varied ÷ its full width [-]")
    assumed: RowAssumptions | None = Field(default=None, description="Parameters resting on priors, per part")
    profile: ProfileRead | None = Field(default=None, description="The flight profile flown (missions with segments)")


class EvaluatedCruise(Result):
    """The cruise (hover) point of one evaluated candidate (full physics engine)."""

    status: str = Field(description="ok | over_current | infeasible_thrust | ...")
    duty: float | None = None
    rpm: float | None = None
    thrust_n: float | None = Field(default=None, description="Thrust per rotor [N]")
    electrical_power_w: float | None = Field(default=None, description="ESC input power, whole craft [W]")
    electrical_power_per_rotor_w: float | None = Field(default=None, description="ESC input power per rotor [W]")
    bus_current_a: float | None = Field(default=None, description="Pack current, whole craft [A]")
    bus_voltage_v: float | None = None
    motor_current_a: float | None = Field(default=None, description="Per rotor [A]")
    shaft_power_w: float | None = Field(default=None, description="Per rotor [W]")
    specific_thrust_g_per_w: float | None = None
    drive_efficiency: float | None = None
    losses: LossBreakdown = Field(default_factory=lambda: LossBreakdown())
    losses_w: dict[str, float | None] = Field(default_factory=dict,
                                              description="The same per-rotor losses under the first names")
    pack_loss_w: float | None = Field(default=None, description="Pack internal loss, whole craft [W]")
    thrust_per_rotor_n: float | None = Field(default=None, description="= thrust_n, named: per rotor [N]")
    motor_current_per_rotor_a: float | None = Field(default=None, description="= motor_current_a, named: per rotor [A]")
    shaft_power_per_rotor_w: float | None = Field(default=None, description="= shaft_power_w, named: per rotor [W]")
    electrical_power_craft_w: float | None = Field(default=None, description="= electrical_power_w, named: craft [W]")
    bus_current_craft_a: float | None = Field(default=None, description="= bus_current_a, named: craft [A]")


class EvaluatedFullThrottle(Result):
    thrust_n: float | None = Field(default=None, description="Thrust per rotor, end of usable capacity [N]")
    thrust_to_weight: float | None = None
    motor_current_a: float | None = Field(default=None, description="Per rotor, full pack [A]")
    bus_current_a: float | None = Field(default=None, description="Pack current, whole craft, full pack [A]")
    bus_voltage_v: float | None = None
    electrical_power_w: float | None = Field(default=None, description="Whole craft, full pack [W]")
    thrust_per_rotor_n: float | None = Field(default=None, description="= thrust_n, named: per rotor [N]")
    motor_current_per_rotor_a: float | None = Field(default=None, description="= motor_current_a, named: per rotor [A]")
    electrical_power_craft_w: float | None = Field(default=None, description="= electrical_power_w, named: craft [W]")
    bus_current_craft_a: float | None = Field(default=None, description="= bus_current_a, named: craft [A]")


class Ratings(Result):
    motor_max_current_a: float | None = None
    esc_continuous_current_a: float | None = None
    pack_allowed_current_a: float | None = None


class SystemBands(Result):
    """80 % bands (10th–90th percentile over every parameter's uncertainty) of one power system's numbers."""

    level: float = 0.8
    cruise_electrical_power_w: list[float] | None = Field(default=None, description="Whole craft [W]")
    cruise_specific_thrust_g_per_w: list[float] | None = None
    full_throttle_thrust_to_weight: list[float] | None = None
    endurance_min: list[float] | None = None


class FlightStateRead(Result):
    """A multirotor's flight state at the cruise point (docs/model-reference.md#multirotor-flight-state); per rotor
    unless a field says craft. Full throttle stays static."""

    kind: str
    airspeed_m_s: float = Field(description="Horizontal airspeed [m/s]")
    climb_rate_m_s: float = Field(description="Climb rate, negative in descent [m/s]")
    drag_area_m2: float = Field(description="Airframe drag area C_D·A used (0: none stated) [m²]")
    coaxial: bool
    induced_factor: float | None = Field(default=None, description="Factor on induced power (coaxial 1.2808) [-]")
    tilt_deg: float | None = Field(default=None, description="Forward tilt of the thrust from vertical [°]")
    drag_n: float | None = Field(default=None, description="Airframe drag (craft) [N]")
    thrust_per_rotor_n: float | None = Field(default=None, description="Thrust per rotor [N]")
    induced_velocity_m_s: float | None = Field(default=None, description="Glauert induced velocity [m/s]")
    hover_induced_velocity_m_s: float | None = Field(default=None, description="v_h at this thrust [m/s]")
    through_disk_speed_m_s: float | None = Field(default=None, description="Free stream through the disk [m/s]")
    edgewise_speed_m_s: float | None = Field(default=None, description="Free stream in the disk plane [m/s]")
    edgewise_advance_ratio: float | None = Field(default=None, description="μ = V_∥ / (Ω R) [-]")
    profile_power_factor: float | None = Field(default=None, description="1 + 4.65 μ² on the non-ideal power [-]")
    ideal_power_per_rotor_w: float | None = Field(default=None, description="Momentum-theory power [W]")
    hover_ideal_power_per_rotor_w: float | None = Field(default=None, description="The same in hover [W]")
    electrical_power_w: float | None = Field(default=None, description="Craft electrical power at this point [W]")
    hover_electrical_power_w: float | None = Field(default=None, description="Craft electrical power in hover [W]")
    power_vs_hover: float | None = Field(default=None, description="Electrical power ÷ hover [-]")


class WindingHeat(Result):
    """Winding temperatures of a mission with temperature effects (docs/model-reference.md#heat)."""

    air_temperature_c: float | None = None
    cruise_winding_c: float | None = Field(default=None, description="Steady at the cruise point; None: runaway [°C]")
    burst_winding_c: float | None = Field(default=None, description="After the mission's full-throttle burst [°C]")
    burst_s: float | None = None
    runaway: bool | None = None
    max_winding_temperature_c: float | None = None
    thermal_resistance_k_per_w: float | None = None
    thermal_time_constant_s: float | None = None


class ColdDayCheck(Result):
    """The cold-day re-check of a mission with ``cold_day_temperature_c`` (docs/model-reference.md#cold)."""

    air_temperature_c: float | None = None
    thrust_to_weight: float | None = Field(default=None, description="Full throttle at SOC 1 − usable [-]")
    bus_holds: bool | None = Field(default=None, description="Full-throttle bus at least half the open-circuit voltage")
    endurance_min: float | None = Field(default=None, description="Usable capacity ÷ cruise pack current [min]")
    cell_resistance_factor: float | None = Field(default=None, description="Cell resistance ÷ its 25 °C value [-]")


class CandidateEvaluation(Result):
    """Every number of one power system for one mission (craft totals unless a field says per rotor)."""

    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    cells_series: int | None = None
    pack_nominal_voltage_v: float | None = None
    all_up_mass_g: float | None = None
    thrust_required_n: float | None = Field(default=None, description="Per rotor at the cruise point [N]")
    thrust_required_per_rotor_n: float | None = Field(default=None, description="= thrust_required_n, named [N]")
    cruise: EvaluatedCruise
    full_throttle: EvaluatedFullThrottle
    endurance_min: float | None = None
    endurance_stop_reason: str | None = None
    cost: float | None = None
    currency: str | None = None
    margins: Margins = Field(default_factory=lambda: Margins())
    ratings: Ratings = Field(default_factory=lambda: Ratings())
    sources: dict[str, dict[str, str]] = Field(
        default_factory=dict, description="Per part kind, where each parameter came from")
    curves: dict[str, list[float | None]] | None = None
    bands: SystemBands | None = Field(default=None, description="80 % bands of the ranking engine's numbers")
    assumed: RowAssumptions | None = Field(default=None, description="Parameters resting on priors, per part")
    assumed_share: float | None = Field(
        default=None, description="Width of the cruise-power band with only priors varied ÷ its full width [-]")
    feasible_share: float | None = Field(
        default=None, description="Share of the uncertainty draws in which the system passes every limit [-]")
    heat: WindingHeat | None = Field(default=None, description="Missions with temperature effects")
    cold_day: ColdDayCheck | None = Field(default=None, description="Missions with a cold-day check")
