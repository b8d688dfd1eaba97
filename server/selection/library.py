"""Inputs of the ranking engine: the team's parts as columns of numpy arrays, and one mission.

(About 410 lines, on purpose in one file: the four part libraries and the mission spec are one input contract —
the same missing-value conventions below, one shared row setup — and are read together by every engine module.)

One frozen dataclass per part kind holds one row per part (the service layer builds them from the ORM rows;
field names follow ``server/models/parts.py`` converted to SI). Conventions for missing values:

- **NaN means unknown** and the part is rejected as ``missing_data`` (every combination using it), except
- ESC loss fields (``r_on_path_ohm`` ... ``pwm_loss_coefficient``) and motor ``inductance_h``: NaN means
  "use the reference-model default" (:class:`server.physics.esc.EscParams`, 30 µH;
  docs/model-reference.md#reference-model-v1);
- ``inf`` means "no limit" (e.g. a motor without a stated ``max_cells`` or ``max_current_a``);
- ``cost`` may be NaN (unknown price): it never rejects a part, sorts last for the cost objective and counts
  as the worst cost in the Pareto set.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from typing import TYPE_CHECKING, Literal

import numpy as np
import numpy.typing as npt

from server.physics import atmosphere, forward_flight, sizing
from server.physics._types import CELSIUS_TO_KELVIN_K
from server.physics.esc import EscConstants, EscParams
from server.physics.motor import DEFAULT_INDUCTANCE_H
from server.physics.priors import thermal_defaults
from server.physics.propeller import PropellerTable, disk_area_m2
from server.physics.propeller_segments import PropModel

if TYPE_CHECKING:
    from _typeshed import DataclassInstance

MissionKind = Literal["hover", "cruise", "forward_flight"]
MISSION_KINDS: tuple[MissionKind, ...] = ("hover", "cruise", "forward_flight")
"""hover and forward_flight are multirotor flight (static tables, rotors lift); cruise is fixed-wing flight."""
SegmentKind = Literal["hover", "climb", "descent", "forward", "cruise"]
MULTIROTOR_SEGMENTS = ("hover", "climb", "descent", "forward")
FIXED_WING_SEGMENTS = ("cruise",)
PROP_APPLICATIONS = ("multirotor", "fixed_wing", "any")
"""What a propeller is made for; a multirotor propeller hovers, a fixed-wing one cruises, ``any`` does both."""
INCH_M = 0.0254
THERMAL_FIELDS = ("thermal_resistance_k_per_w", "thermal_time_constant_s", "max_winding_temperature_c")
"""The motor's heat-model fields (:class:`MotorLibrary`)."""


def _float(a: object) -> np.ndarray:
    return np.atleast_1d(np.asarray(a, dtype=np.float64))


def _freeze(obj: DataclassInstance, skip: tuple[str, ...] = ("ids",)) -> None:
    for f in fields(obj):
        if f.name in skip:
            continue
        value = getattr(obj, f.name)
        if not isinstance(value, np.ndarray | list | tuple | float | int):
            continue
        arr = _float(value)
        arr.setflags(write=False)
        object.__setattr__(obj, f.name, arr)


def _ids(ids: object, n: int) -> np.ndarray:
    arr = np.asarray(ids)
    if arr.shape != (n,):
        raise ValueError(f"ids must have one entry per part ({n}), got shape {arr.shape}")
    return arr


def _rows(obj: DataclassInstance, counted: str, skip: tuple[str, ...] = ("ids",)) -> int:
    """Freeze a part library's arrays, check its ids and that every array has as many rows as ``counted``."""
    _freeze(obj, skip=skip)
    n = int(getattr(obj, counted).shape[0])
    object.__setattr__(obj, "ids", _ids(obj.ids, n))  # type: ignore[attr-defined]
    _check_lengths(obj, n)
    return n


def _check_lengths(obj: DataclassInstance, n: int) -> None:
    for f in fields(obj):
        if not f.init:
            continue
        value = getattr(obj, f.name)
        if isinstance(value, np.ndarray) and value.ndim == 1 and value.shape != (n,):
            raise ValueError(f"{type(obj).__name__}.{f.name} has {value.shape[0]} rows, expected {n}")


@dataclass(frozen=True)
class PackLibrary:
    """Battery packs as sold (one row each); a mission may fly k identical packs in parallel.

    Parameters
    ----------
    ids : array_like
        Part ids (any sortable scalars; ties in the ranking are broken by them).
    cells_series, cells_parallel : array_like
        S and P. [-]
    capacity_ah : array_like
        Labelled capacity of one pack (all P strings). [Ah]
    cell_resistance_ohm : array_like
        DC internal resistance of one cell; pack ``S r / P``. [Ω]
    full_voltage_per_cell_v : array_like
        OCV at 100 % SOC (LiPo 4.20, LiHV 4.35); the OCV table is scaled to it. [V]
    max_continuous_c : array_like
        Continuous C-rating on the pack capacity. [1/h]
    mass_kg, cost : array_like
        Mass of one pack [kg]; unit cost [currency] (NaN = unknown).
    """

    ids: np.ndarray
    cells_series: np.ndarray
    cells_parallel: np.ndarray
    capacity_ah: np.ndarray
    cell_resistance_ohm: np.ndarray
    full_voltage_per_cell_v: np.ndarray
    max_continuous_c: np.ndarray
    mass_kg: np.ndarray
    cost: np.ndarray
    assumed: np.ndarray | None = None
    """Per part, how many of its model parameters rest on priors (not stated, not measured); ties between
    otherwise equal candidates go to the better-measured part. None: all measured alike."""

    def __post_init__(self) -> None:
        _rows(self, "cells_series")

    def __len__(self) -> int:
        return int(self.cells_series.shape[0])

    def valid(self) -> np.ndarray:
        """Packs with every needed value known (finite, positive where it must be)."""
        ok = np.ones(len(self), dtype=bool)
        for name in ("cells_series", "cells_parallel", "capacity_ah", "full_voltage_per_cell_v",
                     "max_continuous_c", "mass_kg"):
            a = getattr(self, name)
            ok &= np.isfinite(a) & (a > 0)
        valid: np.ndarray = ok & np.isfinite(self.cell_resistance_ohm) & (self.cell_resistance_ohm >= 0)
        return valid


@dataclass(frozen=True)
class EscLibrary:
    """ESCs (one row each). NaN loss parameters take the reference-model defaults (docs/model-reference.md#esc).

    Parameters
    ----------
    continuous_current_a : array_like
        Continuous current rating. [A]
    min_cells, max_cells : array_like
        Supported pack cell counts (``inf`` = no upper limit). [-]
    r_on_path_ohm : array_like
        Conduction resistance in series with the motor (2 R_DS(on)). [Ω]
    switching_frequency_hz, switching_time_s, dead_time_s : array_like
        PWM frequency [Hz], turn-on + turn-off transition time [s], dead time per edge [s].
    diode_drop_v, input_esr_ohm, pwm_loss_coefficient : array_like
        Body-diode drop [V], input-capacitor ESR [Ω], calibrated k_pwm [-].
    mass_kg, cost : array_like
        Mass [kg]; unit cost [currency].
    """

    ids: np.ndarray
    continuous_current_a: np.ndarray
    min_cells: np.ndarray
    max_cells: np.ndarray
    r_on_path_ohm: np.ndarray
    switching_frequency_hz: np.ndarray
    switching_time_s: np.ndarray
    dead_time_s: np.ndarray
    diode_drop_v: np.ndarray
    input_esr_ohm: np.ndarray
    pwm_loss_coefficient: np.ndarray
    mass_kg: np.ndarray
    cost: np.ndarray
    assumed: np.ndarray | None = None  # as PackLibrary.assumed
    constants: EscConstants = field(init=False, repr=False, compare=False)
    """The loss-term constants of every ESC, combined once (:class:`server.physics.esc.EscConstants`)."""

    def __post_init__(self) -> None:
        _rows(self, "continuous_current_a", skip=("ids", "constants"))
        defaults = EscParams()
        for name, default in (("r_on_path_ohm", defaults.on_path_resistance_ohm),
                              ("switching_frequency_hz", defaults.switching_frequency_hz),
                              ("switching_time_s", defaults.transition_time_s),
                              ("dead_time_s", defaults.dead_time_s), ("diode_drop_v", defaults.body_diode_drop_v),
                              ("input_esr_ohm", defaults.input_esr_ohm),
                              ("pwm_loss_coefficient", defaults.pwm_loss_coefficient)):
            a = getattr(self, name)
            filled = np.where(np.isnan(a), float(default), a)
            filled.setflags(write=False)
            object.__setattr__(self, name, filled)
        object.__setattr__(self, "constants", EscConstants.of(self.params()))

    def __len__(self) -> int:
        return int(self.continuous_current_a.shape[0])

    def valid(self) -> np.ndarray:
        """ESCs with every needed value known."""
        ok = ~np.isnan(self.continuous_current_a) & (self.continuous_current_a > 0)
        ok &= np.isfinite(self.min_cells) & ~np.isnan(self.max_cells) & np.isfinite(self.mass_kg)
        for name in ("r_on_path_ohm", "switching_frequency_hz", "switching_time_s", "dead_time_s", "diode_drop_v",
                     "input_esr_ohm", "pwm_loss_coefficient"):
            ok &= np.isfinite(getattr(self, name))
        valid: np.ndarray = ok & (self.switching_frequency_hz > 0)
        return valid

    def params(self, index: np.ndarray | slice = slice(None)) -> EscParams:
        """Physics ESC parameters of the rows ``index`` (continuous rating as max current)."""
        return EscParams(on_path_resistance_ohm=self.r_on_path_ohm[index],
                         switching_frequency_hz=self.switching_frequency_hz[index],
                         transition_time_s=self.switching_time_s[index], dead_time_s=self.dead_time_s[index],
                         body_diode_drop_v=self.diode_drop_v[index], input_esr_ohm=self.input_esr_ohm[index],
                         pwm_loss_coefficient=self.pwm_loss_coefficient[index],
                         max_current_a=self.continuous_current_a[index])


@dataclass(frozen=True)
class MotorLibrary:
    """Motors (one row each); NaN resistance or no-load current = unknown (rejected as missing data).

    Parameters
    ----------
    kv_rpm_per_v : array_like
        Speed constant. [rpm/V]
    resistance_ohm : array_like
        Line-to-line winding resistance. [Ω]
    no_load_current_a : array_like
        No-load current I0. [A]
    inductance_h : array_like
        Line-to-line inductance (NaN = 30 µH default). [H]
    max_current_a : array_like
        Rated maximum current (``inf`` = none stated). [A]
    max_cells : array_like
        Highest pack cell count allowed (``inf`` = none stated). [-]
    mass_kg, cost : array_like
        Mass [kg]; unit cost [currency].
    thermal_resistance_k_per_w, thermal_time_constant_s, max_winding_temperature_c : array_like, optional
        Winding-to-air thermal resistance [K/W], thermal time constant [s], highest allowed winding temperature
        [°C]; NaN or omitted: the priors of :func:`server.physics.priors.thermal_defaults` (used only by
        missions with ``temperature_effects``).
    """

    ids: np.ndarray
    kv_rpm_per_v: np.ndarray
    resistance_ohm: np.ndarray
    no_load_current_a: np.ndarray
    inductance_h: np.ndarray
    max_current_a: np.ndarray
    max_cells: np.ndarray
    mass_kg: np.ndarray
    cost: np.ndarray
    assumed: np.ndarray | None = None  # as PackLibrary.assumed
    thermal_resistance_k_per_w: np.ndarray | None = None
    thermal_time_constant_s: np.ndarray | None = None
    max_winding_temperature_c: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = _rows(self, "kv_rpm_per_v")
        filled = np.where(np.isnan(self.inductance_h), DEFAULT_INDUCTANCE_H, self.inductance_h)
        filled.setflags(write=False)
        object.__setattr__(self, "inductance_h", filled)
        thermal = [np.full(n, np.nan) if getattr(self, name) is None else _float(getattr(self, name))
                   for name in THERMAL_FIELDS]
        for name, values in zip(THERMAL_FIELDS, thermal_defaults(self.mass_kg, *thermal), strict=True):
            if values.shape != (n,):
                raise ValueError(f"MotorLibrary.{name} has {values.shape[0]} rows, expected {n}")
            values.setflags(write=False)
            object.__setattr__(self, name, values)

    def __len__(self) -> int:
        return int(self.kv_rpm_per_v.shape[0])

    def valid(self) -> np.ndarray:
        """Motors with every needed value known."""
        ok = np.isfinite(self.kv_rpm_per_v) & (self.kv_rpm_per_v > 0)
        ok &= np.isfinite(self.resistance_ohm) & (self.resistance_ohm >= 0)
        ok &= np.isfinite(self.no_load_current_a) & (self.no_load_current_a >= 0)
        ok &= (self.inductance_h > 0) & ~np.isnan(self.max_current_a) & ~np.isnan(self.max_cells)
        valid: np.ndarray = ok & np.isfinite(self.mass_kg)
        return valid


@dataclass(frozen=True)
class PropellerLibrary:
    """Propellers (one row each) with static CT/CP versus rpm and optional forward CT/CP versus J.

    Parameters
    ----------
    diameter_m, diameter_in : array_like
        Diameter in metres (physics) and inches (the airframe limit is in inches). [m], [in]
    static : PropellerTable
        Static coefficients versus rpm, batch ``(n,)``; an all-NaN row means "unknown" (a constant
        ct/cp pair is a one-point row).
    forward : PropellerTable or None
        Coefficients versus advance ratio J, batch ``(n,)``; all-NaN rows for propellers without data.
    mass_kg, cost : array_like
        Mass [kg]; unit cost [currency].
    application : array_like of str, optional
        What each propeller is made for: ``multirotor`` (hover missions), ``fixed_wing`` (cruise missions) or
        ``any`` (both; the default for every propeller when omitted).
    """

    ids: np.ndarray
    diameter_m: np.ndarray
    diameter_in: np.ndarray
    static: PropellerTable
    forward: PropellerTable | None
    mass_kg: np.ndarray
    cost: np.ndarray
    assumed: np.ndarray | None = None  # as PackLibrary.assumed
    application: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = _rows(self, "diameter_m", skip=("ids", "static", "forward", "application"))
        application = np.full(n, "any") if self.application is None else np.asarray(self.application, dtype=str)
        if application.shape != (n,) or not np.isin(application, PROP_APPLICATIONS).all():
            raise ValueError(f"application must be one of {', '.join(PROP_APPLICATIONS)} per propeller ({n})")
        object.__setattr__(self, "application", application)
        for name, table, axis in (("static", self.static, "rpm"), ("forward", self.forward, "advance_ratio")):
            if table is None:
                continue
            if table.axis != axis or table.axis_values.shape[:-1] != (n,):
                raise ValueError(f"{name} table must be versus {axis} with one row per propeller")

    def __len__(self) -> int:
        return int(self.diameter_m.shape[0])

    def suits(self, kind: MissionKind) -> np.ndarray:
        """Propellers made for this kind of flight: multirotor ones hover, fixed-wing ones cruise, ``any`` both."""
        made_for = "fixed_wing" if kind == "cruise" else "multirotor"
        application = np.full(len(self), "any") if self.application is None else self.application  # set in init
        suits: np.ndarray = np.isin(application, ("any", made_for))
        return suits

    def made_for(self, index: int) -> str:
        """What one propeller is made for, in words ("fixed-wing", "multirotor", "any")."""
        return "any" if self.application is None else str(self.application[index]).replace("_", "-")

    def valid(self) -> np.ndarray:
        """Propellers whose diameter and mass are known (the tables are checked per mission)."""
        valid: np.ndarray = (np.isfinite(self.diameter_m) & (self.diameter_m > 0) & np.isfinite(self.diameter_in)
                             & np.isfinite(self.mass_kg))
        return valid


@dataclass(frozen=True)
class PartsLibrary:
    """The four part libraries one ranking draws from."""

    packs: PackLibrary
    escs: EscLibrary
    motors: MotorLibrary
    propellers: PropellerLibrary

    @property
    def sizes(self) -> tuple[int, int, int, int]:
        return len(self.packs), len(self.escs), len(self.motors), len(self.propellers)


@dataclass(frozen=True)
class Segment:
    """One segment of a flight profile (:mod:`.profile`), in SI.

    ``hover``: still air; ``climb``/``descent``: vertical at ``climb_rate_m_s`` (> 0; the kind gives the sign);
    ``forward``: multirotor at ``airspeed_m_s``; ``cruise``: fixed-wing at the mission's airspeed, climbing at
    ``climb_rate_m_s`` when it is set (negative: descending).
    """

    kind: SegmentKind
    duration_s: float
    airspeed_m_s: float = 0.0
    climb_rate_m_s: float = 0.0
    label: str = ""

    def __post_init__(self) -> None:
        if self.kind not in (*MULTIROTOR_SEGMENTS, *FIXED_WING_SEGMENTS):
            raise ValueError(f"unknown segment kind {self.kind!r}")
        if not (self.duration_s > 0.0 and np.isfinite(self.duration_s)):
            raise ValueError("a segment needs a positive, finite duration")
        if self.kind in ("climb", "descent") and not self.climb_rate_m_s > 0.0:
            raise ValueError(f"a {self.kind} segment needs climb_rate_m_s > 0")
        if self.kind == "forward" and not self.airspeed_m_s > 0.0:
            raise ValueError("a forward segment needs airspeed_m_s > 0")

    def flight_fields(self, mission: MissionSpec) -> dict[str, object]:
        """The mission fields that make ``mission`` fly like this segment (see :func:`.profile.segment_mission`)."""
        if self.kind == "cruise":
            return {"kind": "cruise", "climb_rate_m_s": float(self.climb_rate_m_s)}
        if self.kind == "forward":
            return {"kind": "forward_flight", "cruise_airspeed_m_s": float(self.airspeed_m_s),
                    "climb_rate_m_s": 0.0}
        rate = {"hover": 0.0, "climb": 1.0, "descent": -1.0}[self.kind] * float(self.climb_rate_m_s)
        return {"kind": "hover", "cruise_airspeed_m_s": 0.0, "climb_rate_m_s": rate}


@dataclass(frozen=True)
class MissionSpec:
    """One airframe's mission (field names follow ``server/models/missions.py`` in SI).

    Defaults are the issue's common-practice values (no source): thrust-to-weight 2.0, duty band 0.40-0.75,
    ESC continuous >= 1.2 x full-throttle motor current, pack current <= 0.8 x C x capacity, 80 % usable
    capacity, 3.3 V per cell cut-off, cruise point at 50 % state of charge.
    """

    rotor_count: int
    frame_mass_kg: float
    kind: MissionKind = "hover"
    payload_kg: float = 0.0
    max_prop_diameter_in: float = float("inf")
    max_packs_in_parallel: int = 1
    cruise_airspeed_m_s: float = 0.0
    lift_to_drag: float = float("nan")
    altitude_m: float = 0.0
    temperature_offset_c: float = 0.0
    min_thrust_to_weight: float = 2.0
    duty_min: float = 0.40
    duty_max: float = 0.75
    min_endurance_min: float = 0.0
    usable_fraction: float = 0.8
    cutoff_v_per_cell: float = 3.3
    esc_current_margin: float = 1.2
    pack_current_fraction: float = 0.8
    cruise_state_of_charge: float = 0.5
    max_all_up_mass_kg: float | None = None
    min_thrust_to_weight_motor_out: float | None = None
    """Thrust-to-weight floor with the worst single motor out (:mod:`server.physics.motor_out`); None: unchecked."""
    temperature_effects: bool = False
    """Heat and cold at the mission's air temperature (:mod:`.temperature`): winding resistance at the winding
    temperature, pack resistance at the air temperature, the winding limit. False: every part at the temperature
    its values are stated at (reference model v1)."""
    burst_s: float = 0.0
    """Length of a full-throttle burst from the cruise winding temperature (with ``temperature_effects``). [s]"""
    cold_day_temperature_c: float | None = None
    """A second, colder air temperature at which thrust-to-weight and endurance are re-checked; None: no check."""
    climb_rate_m_s: float = 0.0
    """Vertical speed at the cruise point (negative: descent): of a multirotor (hover and forward_flight kinds), or
    of a fixed wing's climbing cruise (a profile segment's; |ROC| below the airspeed). [m/s]"""
    drag_area_m2: float = 0.0
    """Airframe drag area C_D A (0: no airframe drag) of a multirotor in forward flight or climb. [m^2]"""
    coaxial: bool = False
    """Rotors stacked in coaxial pairs (induced power of the pair, :mod:`server.physics.forward_flight`)."""
    segments: tuple[Segment, ...] = ()
    """Flight profile flown in order (:mod:`.profile`); empty: a single-point mission."""
    reserve_min: float = 0.0
    """Hover (multirotor) or cruise (fixed-wing) still possible after the last segment. [min]"""

    def __post_init__(self) -> None:
        if self.kind not in MISSION_KINDS:
            raise ValueError(f"unknown mission kind {self.kind!r}")
        if self.kind == "forward_flight" and not self.cruise_airspeed_m_s > 0:
            raise ValueError("a forward_flight mission needs cruise_airspeed_m_s > 0")
        if not (np.isfinite(self.climb_rate_m_s) and np.isfinite(self.drag_area_m2) and self.drag_area_m2 >= 0):
            raise ValueError("climb_rate_m_s must be finite and drag_area_m2 finite and >= 0")
        if self.kind == "cruise" and not abs(self.climb_rate_m_s) < self.cruise_airspeed_m_s:
            raise ValueError("a fixed wing's climb_rate_m_s must stay below its airspeed")
        if self.coaxial and int(self.rotor_count) % 2:
            raise ValueError("a coaxial airframe has an even rotor_count (both rotors of every pair)")
        if int(self.rotor_count) < 1 or int(self.max_packs_in_parallel) < 1:
            raise ValueError("rotor_count and max_packs_in_parallel must be at least 1")
        if self.kind == "cruise" and not (self.cruise_airspeed_m_s > 0 and self.lift_to_drag > 0):
            raise ValueError("a cruise mission needs cruise_airspeed_m_s > 0 and lift_to_drag > 0")
        if not 0.0 < self.usable_fraction <= 1.0 or not 0.0 <= self.cruise_state_of_charge <= 1.0:
            raise ValueError("usable_fraction must be in (0, 1] and cruise_state_of_charge in [0, 1]")
        if not np.isfinite(self.frame_mass_kg + self.payload_kg):
            raise ValueError("frame and payload mass must be finite")
        if not (np.isfinite(self.burst_s) and self.burst_s >= 0.0):
            raise ValueError("burst_s must be a finite number of seconds, 0 or more")
        allowed = FIXED_WING_SEGMENTS if self.kind == "cruise" else MULTIROTOR_SEGMENTS
        for segment in self.segments:
            if segment.kind not in allowed:
                raise ValueError(f"a {self.kind} mission cannot fly a {segment.kind} segment "
                                 f"(allowed: {', '.join(allowed)})")
        if not (0.0 <= self.reserve_min < float("inf")):
            raise ValueError("reserve_min must be finite and >= 0")

    @property
    def has_profile(self) -> bool:
        """The mission is flown through a profile (its segments, then its reserve) as well as at its cruise point."""
        return bool(self.segments)

    @property
    def air_temperature_c(self) -> float:
        """Air temperature of the mission: ISA at its altitude plus the offset. [°C]"""
        return float(atmosphere.air_temperature_k(self.altitude_m, self.temperature_offset_c)) - CELSIUS_TO_KELVIN_K

    @property
    def density_kg_m3(self) -> float:
        """ISA density at the mission altitude and temperature offset. [kg/m^3]"""
        return float(atmosphere.air_density_kg_m3(self.altitude_m, self.temperature_offset_c))

    @property
    def airspeed_m_s(self) -> float:
        """Axial airspeed of the cruise and full-throttle points (0 for hover). [m/s]"""
        return float(self.cruise_airspeed_m_s) if self.kind == "cruise" else 0.0

    @property
    def thrust_per_weight(self) -> float:
        """Required thrust over weight at the cruise point: 1 (hover), 1/(L/D) (cruise), or a climbing (descending)
        fixed wing's ``cos γ / (L/D) + sin γ``; a multirotor flight state's thrust (:attr:`has_flight_state`) comes
        from :meth:`thrust_per_rotor_n`. [-]"""
        if self.kind != "cruise":
            return 1.0
        if self.climb_rate_m_s != 0.0:  # T = W (cos γ / (L/D) + sin γ), sin γ = ROC/V (Anderson 1999); never < 0
            thrust = sizing.fixed_wing_climb_thrust_n(1.0, float(self.lift_to_drag), float(self.climb_rate_m_s),
                                                      float(self.cruise_airspeed_m_s))
            return max(float(thrust), 0.0)
        return 1.0 / float(self.lift_to_drag)

    def thrust_per_rotor_n(self, mass_kg: npt.ArrayLike, density_kg_m3: float | None = None) -> np.ndarray:
        """Thrust each rotor makes at the cruise point for all-up mass ``mass_kg`` (airframe drag in air of
        ``density_kg_m3``, default the mission's). [N]"""
        if self.has_flight_state:
            rho = self.density_kg_m3 if density_kg_m3 is None else float(density_kg_m3)
            total, _, _ = forward_flight.craft_thrust_n(forward_flight.weight_n(mass_kg), rho,
                                                        self.horizontal_airspeed_m_s, self.climb_rate_m_s,
                                                        self.drag_area_m2)
            thrust: np.ndarray = total / float(self.rotor_count)
            return thrust
        return sizing.thrust_per_rotor_n(mass_kg, float(self.rotor_count), self.thrust_per_weight)

    @property
    def has_flight_state(self) -> bool:
        """The cruise point needs the multirotor flight state (forward flight, a climb or descent, coaxial pairs);
        a plain hover (the default) keeps the static propeller power unchanged."""
        return self.kind == "forward_flight" or (self.kind == "hover" and (self.climb_rate_m_s != 0 or self.coaxial))

    @property
    def horizontal_airspeed_m_s(self) -> float:
        """Horizontal airspeed of a multirotor at the cruise point (forward_flight; 0 otherwise). [m/s]"""
        return float(self.cruise_airspeed_m_s) if self.kind == "forward_flight" else 0.0

    def flight_state(self, mass_kg: npt.ArrayLike, diameter_m: npt.ArrayLike,
                     density_kg_m3: float | None = None) -> forward_flight.FlightState | None:
        """Multirotor flight state at the cruise point for all-up mass and propeller diameter (broadcast), in air
        of ``density_kg_m3`` (default the mission's); None where :attr:`has_flight_state` is false (the static
        propeller power applies as it is)."""
        if not self.has_flight_state:
            return None
        rho = self.density_kg_m3 if density_kg_m3 is None else float(density_kg_m3)
        return forward_flight.flight_state(forward_flight.weight_n(mass_kg), float(self.rotor_count),
                                           disk_area_m2(diameter_m), rho, self.horizontal_airspeed_m_s,
                                           self.climb_rate_m_s, self.drag_area_m2, self.coaxial)

    def propeller_model(self, props: PropellerLibrary) -> PropModel:
        """The segment model of the table this mission flies (static for hover, versus J for cruise).

        A propeller is usable when its table is and its own data (diameter, mass) are known.
        """
        forward = self.kind == "cruise"
        model = PropModel.build(props.forward if forward else props.static, props.diameter_m,
                                density_kg_m3=self.density_kg_m3, airspeed_m_s=self.airspeed_m_s, forward=forward)
        return replace(model, valid=model.valid & props.valid())

    @property
    def low_state_of_charge(self) -> float:
        """State of charge at the end of usable capacity, where thrust-to-weight is checked. [-]"""
        return 1.0 - float(self.usable_fraction)
