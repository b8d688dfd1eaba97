"""Brute-force reference: every combination, one at a time, through the physics engine's own solvers.

Independent of the ranking engine's code: it loops over candidates in Python, calls
:func:`server.physics.drive.for_thrust` and :func:`server.physics.drive.full_throttle` (bracketed root
finding) for each, applies the constraints in the documented order, sorts with Python tuples, refines with
:func:`server.physics.endurance.constant_thrust`, and finds the Pareto set by comparing every pair.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import solve_ivp

from server.physics import atmosphere, drive, endurance, forward_flight, profile, sizing
from server.physics._types import STANDARD_GRAVITY_M_S2, Status
from server.physics.battery import PackParams, open_circuit_voltage_per_cell_v
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from server.selection import MissionSpec, PartsLibrary
from server.selection.library import Segment

G0 = STANDARD_GRAVITY_M_S2
ESC_DEFAULTS = EscParams()


MOTOR_OUT_SHARE = {4: 0.0, 6: 2.0 / 3.0, 8: 1.0 / math.sqrt(2.0)}
"""Thrust share left with the worst single motor out, by hand (docs/model-reference.md#motor-out): a hexa trims by
stopping the opposite rotor (4 of 6), an octo by running the three rotors across from the failed one at
sqrt(2) - 1, 2 (sqrt(2) - 1) and sqrt(2) - 1 of full thrust; a quad cannot trim at all."""


@dataclass
class Record:
    key: tuple[int, int, int, int, int]  # pack, k, esc, motor, prop (library positions)
    ids: tuple[object, object, object, object]
    tie: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)  # assumed parameters per part (fewer first)
    metrics: dict[str, float] = field(default_factory=dict)


def _row(table: PropellerTable, i: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    x = np.asarray(table.axis_values[i])
    keep = ~np.isnan(x)
    return x[keep], np.asarray(table.thrust_coefficient[i])[keep], np.asarray(table.power_coefficient[i])[keep]


def _or(value: float, default: float) -> float:
    return default if math.isnan(value) else value


def _table_physical(x: np.ndarray, ct: np.ndarray, cp: np.ndarray, *, forward: bool) -> bool:
    """Every measured point within momentum theory: FM = sqrt(2/pi) CT^1.5/CP <= 1 static (x = rpm) or, versus
    advance ratio J > 0, J CT/CP <= 2/(1 + sqrt(1 + 8 CT/(pi J^2))) (Froude; Leishman 2006, ch. 2)."""
    for xi, cti, cpi in zip(x, ct, cp, strict=True):
        if cti <= 0:
            continue
        if forward and xi > 0:
            limit = 2.0 / (1.0 + math.sqrt(1.0 + 8.0 * cti / (math.pi * xi * xi)))
            if xi * cti / cpi > limit:
                return False
        elif math.sqrt(2.0 / math.pi) * cti**1.5 / cpi > 1.0:
            return False
    return True


COPPER_PER_K = 0.00393  # IACS annealed copper at 20 °C (K. C. Agrawal, Industrial Power Engineering Handbook)
ELECTROLYTE_EA_J_PER_MOL = 17_100.0  # Ecker et al., J. Electrochem. Soc. 162(9) A1836, 2015
GAS_J_PER_MOL_K = 8.314462618


def _pack_factor(air_c: float) -> float:
    """Cell resistance at air_c over its 25 °C value (Arrhenius, written out here)."""
    return math.exp(ELECTROLYTE_EA_J_PER_MOL / GAS_J_PER_MOL_K * (1.0 / (air_c + 273.15) - 1.0 / 298.15))


def _hot(motor: MotorParams, temperature_c: float) -> MotorParams:
    r20 = float(motor.resistance_ohm)
    return MotorParams(float(motor.kv_rpm_per_v), r20 * (1.0 + COPPER_PER_K * (temperature_c - 20.0)),
                       float(motor.no_load_current_a), inductance_h=float(motor.inductance_h),
                       max_current_a=float(motor.max_current_a))


def _heated(common: dict, mission: MissionSpec, air_c: float, thrust: float, voc: object,
            limits: tuple[float, float, float],
            flight: forward_flight.FlightState | None = None) -> tuple[dict, dict, tuple[float, float]]:
    """Cruise and full-throttle solver arguments at temperature, and the (cruise, after-burst) winding temperatures.

    Independent of the engine's closed forms: the cruise temperature by plain fixed-point iteration of
    T = T_air + R_th P(T), the burst by integrating C dT/dt = P(T) - (T - T_air)/R_th numerically (scipy).
    """
    r_th, tau, t_max = limits
    cold = dict(common, pack_resistance_ohm=common["pack_resistance_ohm"] * _pack_factor(air_c))
    motor = cold["motor"]
    r20 = float(motor.resistance_ohm)
    op = drive.for_thrust(thrust, open_circuit_voltage_v=voc(mission.cruise_state_of_charge), flight=flight,  # type: ignore[operator]
                          **cold)
    i, p0 = float(op.motor_current_a[0]), float(op.motor_no_load_loss_w[0])
    t = air_c
    for _ in range(2000):
        t_next = air_c + r_th * (i * i * r20 * (1.0 + COPPER_PER_K * (t - 20.0)) + p0)
        if not math.isfinite(t_next) or t_next > 1e4:
            t = math.nan
            break
        if abs(t_next - t) < 1e-12:
            t = t_next
            break
        t = t_next
    usable = t if math.isfinite(t) else t_max
    cruise = dict(cold, motor=_hot(motor, usable))
    end = t
    if mission.burst_s > 0.0 and math.isfinite(t):
        ft = drive.full_throttle(open_circuit_voltage_v=voc(1.0), **cruise)  # type: ignore[operator]
        i_f, p0_f = float(ft.motor_current_a[0]), float(ft.motor_no_load_loss_w[0])
        heat_capacity = tau / r_th

        def rate(_: float, y: np.ndarray) -> np.ndarray:
            loss = i_f * i_f * r20 * (1.0 + COPPER_PER_K * (y[0] - 20.0)) + p0_f
            return np.array([(loss - (y[0] - air_c) / r_th) / heat_capacity])

        end = float(solve_ivp(rate, (0.0, mission.burst_s), [t], rtol=1e-11, atol=1e-9).y[0, -1])
    full = dict(cold, motor=_hot(motor, end if math.isfinite(end) else t_max)) if mission.burst_s > 0 else cruise
    return cruise, full, (t, end)


def _cold_day(common: dict, mission: MissionSpec, thrust: float, voc: object, mass: float, capacity_ah: float,
              limits: tuple[float, float, float], diameter_m: float) -> tuple[bool, bool]:
    """(thrust-to-weight and bus hold, endurance holds) at the mission's cold-day air temperature."""
    air_c = float(mission.cold_day_temperature_c)  # type: ignore[arg-type]
    isa_c = float(atmosphere.standard_temperature_k(mission.altitude_m)) - 273.15
    rho = float(atmosphere.air_density_kg_m3(mission.altitude_m, air_c - isa_c))
    common = dict(common, density_kg_m3=rho)
    flight = _flight(mission, mass, diameter_m, rho)  # forward flight in the cold air: more drag
    if flight is not None:
        thrust = float(flight.thrust_n)
    if mission.temperature_effects:
        cruise, full_args, _ = _heated(common, mission, air_c, thrust, voc, limits, flight)
    else:
        cruise = full_args = dict(common, pack_resistance_ohm=common["pack_resistance_ohm"] * _pack_factor(air_c))
    op = drive.for_thrust(thrust, open_circuit_voltage_v=voc(mission.cruise_state_of_charge), flight=flight,  # type: ignore[operator]
                          **cruise)
    low_voc, full_voc = voc(1.0 - mission.usable_fraction), voc(1.0)  # type: ignore[operator]
    low = drive.full_throttle(open_circuit_voltage_v=low_voc, **full_args)
    full = drive.full_throttle(open_circuit_voltage_v=full_voc, **full_args)
    n_r = float(mission.rotor_count)
    tw = n_r * float(low.thrust_n[0]) / (mass * G0)
    holds = float(low.bus_voltage_v[0]) >= 0.5 * low_voc and float(full.bus_voltage_v[0]) >= 0.5 * full_voc
    reachable = int(op.status[0]) in (Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR)
    minutes = mission.usable_fraction * capacity_ah * 60.0 / float(op.pack_current_a[0]) if reachable else math.nan
    return tw >= mission.min_thrust_to_weight and holds, minutes >= mission.min_endurance_min


def _flight(mission: MissionSpec, mass_kg: object, diameter_m: object,
            density_kg_m3: float | None = None) -> forward_flight.FlightState | None:
    """The multirotor flight state from the physics module directly (not through MissionSpec): forward flight at
    the mission's airspeed, any climb rate, coaxial pairs; None for a plain hover or a fixed-wing cruise."""
    if mission.kind == "cruise" or (mission.kind == "hover" and mission.climb_rate_m_s == 0 and not mission.coaxial):
        return None
    speed = mission.cruise_airspeed_m_s if mission.kind == "forward_flight" else 0.0
    d = np.asarray(diameter_m, dtype=float)
    return forward_flight.flight_state(np.asarray(mass_kg, dtype=float) * G0, float(mission.rotor_count),
                                       math.pi * d * d / 4.0, mission.density_kg_m3 if density_kg_m3 is None
                                       else density_kg_m3, speed, mission.climb_rate_m_s,
                                       mission.drag_area_m2, mission.coaxial)


def evaluate(library: PartsLibrary, mission: MissionSpec) -> tuple[dict[str, int], list[Record]]:
    """Rejection counts (first failing reason) and the feasible candidates with their metrics."""
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    counts: dict[str, int] = {}
    feasible: list[Record] = []
    n_r = mission.rotor_count
    rho = mission.density_kg_m3
    speed = mission.cruise_airspeed_m_s if mission.kind == "cruise" else 0.0
    table = pr.forward if mission.kind == "cruise" else pr.static
    for p, k, e, m, q in itertools.product(range(len(pk)), range(1, mission.max_packs_in_parallel + 1),
                                           range(len(es)), range(len(mo)), range(len(pr))):
        reason = None
        x, ct, cp = _row(table, q) if table is not None else (np.empty(0),) * 3
        cells = float(pk.cells_series[p])
        missing = (any(math.isnan(float(v)) for v in (pk.cell_resistance_ohm[p], pk.capacity_ah[p], pk.mass_kg[p]))
                   or math.isnan(float(mo.resistance_ohm[m])) or math.isnan(float(mo.no_load_current_a[m]))
                   or math.isnan(float(es.continuous_current_a[e])) or math.isnan(float(pr.diameter_m[q]))
                   or (mission.kind != "cruise" and x.size == 0))
        if missing:
            reason = "missing_data"
        elif x.size and not _table_physical(x, ct, cp, forward=mission.kind == "cruise"):
            reason = "prop_data_invalid"
        elif float(pr.diameter_in[q]) > mission.max_prop_diameter_in:
            reason = "prop_too_large"
        elif str(pr.application[q]) not in ("any", "fixed_wing" if mission.kind == "cruise" else "multirotor"):
            reason = "prop_application"
        elif x.size == 0:
            reason = "no_forward_table"
        elif not float(es.min_cells[e]) <= cells <= float(es.max_cells[e]):
            reason = "esc_cell_range"
        elif cells > float(mo.max_cells[m]):
            reason = "motor_cell_limit"
        if reason is not None:
            counts[reason] = counts.get(reason, 0) + 1
            continue
        mass = float(sizing.all_up_mass_kg(mission.frame_mass_kg + mission.payload_kg, k, float(pk.mass_kg[p]), n_r,
                                           float(es.mass_kg[e]), float(mo.mass_kg[m]), float(pr.mass_kg[q])))
        flight = _flight(mission, mass, float(pr.diameter_m[q]))
        thrust = float(sizing.thrust_per_rotor_n(mass, n_r, 1.0 if mission.kind == "hover"
                                                 else 1.0 / mission.lift_to_drag)) if flight is None else float(
            flight.thrust_n)
        motor = MotorParams(float(mo.kv_rpm_per_v[m]), float(mo.resistance_ohm[m]), float(mo.no_load_current_a[m]),
                            inductance_h=_or(float(mo.inductance_h[m]), 30e-6),
                            max_current_a=float(mo.max_current_a[m]))
        esc = EscParams(on_path_resistance_ohm=_or(float(es.r_on_path_ohm[e]), 0.010),
                        switching_frequency_hz=_or(float(es.switching_frequency_hz[e]), 24e3),
                        transition_time_s=_or(float(es.switching_time_s[e]), 200e-9),
                        dead_time_s=_or(float(es.dead_time_s[e]), 0.5e-6),
                        body_diode_drop_v=_or(float(es.diode_drop_v[e]), 0.8),
                        input_esr_ohm=_or(float(es.input_esr_ohm[e]), 0.020),
                        pwm_loss_coefficient=_or(float(es.pwm_loss_coefficient[e]), 0.0),
                        max_current_a=float(es.continuous_current_a[e]))
        prop = PropellerTable.from_rows(float(pr.diameter_m[q]), [(x, ct, cp)],
                                        "advance_ratio" if mission.kind == "cruise" else "rpm")

        def voc(soc: float, p: int = p, cells: float = cells) -> float:
            return cells * float(open_circuit_voltage_per_cell_v(soc, float(pk.full_voltage_per_cell_v[p])))

        pack_r = cells * float(pk.cell_resistance_ohm[p]) / (float(pk.cells_parallel[p]) * k)
        common = {"motor": motor, "esc": esc, "propeller": prop, "pack_resistance_ohm": pack_r,
                  "rotor_count": n_r, "density_kg_m3": rho, "airspeed_m_s": speed}
        thermal_limits = (float(mo.thermal_resistance_k_per_w[m]), float(mo.thermal_time_constant_s[m]),
                          float(mo.max_winding_temperature_c[m]))
        winding = None
        if mission.temperature_effects:
            common, full_common, winding = _heated(common, mission, mission.air_temperature_c, thrust, voc,
                                                   thermal_limits, flight)
        else:
            full_common = common
        op = drive.for_thrust(thrust, open_circuit_voltage_v=voc(mission.cruise_state_of_charge), flight=flight,
                              **common)
        low = drive.full_throttle(open_circuit_voltage_v=voc(1.0 - mission.usable_fraction), **full_common)
        full = drive.full_throttle(open_circuit_voltage_v=voc(1.0), **full_common)
        cold_ok = cold_endurance_ok = True
        if mission.cold_day_temperature_c is not None:
            cold_ok, cold_endurance_ok = _cold_day(dict(common, motor=motor, pack_resistance_ohm=pack_r), mission,
                                                   thrust, voc, mass, float(pk.capacity_ah[p]) * k, thermal_limits,
                                                   float(pr.diameter_m[q]))
        tw = n_r * float(low.thrust_n[0]) / (mass * G0)
        i_full = float(full.motor_current_a[0])
        capacity = float(pk.capacity_ah[p]) * k
        reachable = int(op.status[0]) in (Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR)
        beyond_data = Status.DATA_ERROR in (int(op.status[0]), int(low.status[0]), int(full.status[0]))
        duty = float(op.duty[0])
        pack_current = float(op.pack_current_a[0])
        screening_endurance = mission.usable_fraction * capacity * 60.0 / pack_current if reachable else math.nan
        checks = [
            ("over_mass", mission.max_all_up_mass_kg is not None and mass > mission.max_all_up_mass_kg),
            ("cruise_unreachable", not reachable),
            ("prop_data_out_of_range", beyond_data),
            ("duty_out_of_band", not mission.duty_min <= duty <= mission.duty_max),
            ("bus_collapse", not (float(low.bus_voltage_v[0]) >= 0.5 * voc(1.0 - mission.usable_fraction)
                                  and float(full.bus_voltage_v[0]) >= 0.5 * voc(1.0))),
            ("below_thrust_to_weight", not tw >= mission.min_thrust_to_weight),
            ("motor_out_thrust_short", mission.min_thrust_to_weight_motor_out is not None and not (
                MOTOR_OUT_SHARE[int(mission.rotor_count)] * tw >= mission.min_thrust_to_weight_motor_out)),
            ("motor_over_current", not i_full <= float(mo.max_current_a[m])),
            ("winding_over_temperature", winding is not None and not max(winding) <= thermal_limits[2]),
            ("esc_over_current", not float(es.continuous_current_a[e]) >= mission.esc_current_margin * i_full),
            ("pack_over_current", not n_r * i_full <= mission.pack_current_fraction * float(
                pk.max_continuous_c[p]) * capacity),
            ("endurance_short", not screening_endurance >= mission.min_endurance_min),
            ("cold_day_thrust_short", not cold_ok),
            ("cold_day_endurance_short", not cold_endurance_ok),
        ]
        energy = math.nan
        if mission.segments:
            flown = _fly_profile(mission, mass, voc, common, capacity, cells, float(pr.diameter_m[q]))
            checks.append(("profile_reserve_short", not bool(flown.completed)))
            if bool(flown.completed):
                energy = float(np.sum(flown.energy_wh[: len(mission.segments)]))
        reason = next((name for name, bad in checks if bad), None)
        if reason is not None:
            counts[reason] = counts.get(reason, 0) + 1
            continue
        cost = float(sizing.system_cost(k, float(pk.cost[p]), n_r, float(es.cost[e]), float(mo.cost[m]),
                                        float(pr.cost[q])))
        feasible.append(Record((p, k, e, m, q), (pk.ids[p], es.ids[e], mo.ids[m], pr.ids[q]), metrics={
            "electrical_power_w": float(op.craft_electrical_power_w[0]), "endurance_min": screening_endurance,
            "specific_thrust_g_per_w": float(op.specific_thrust_g_per_w[0]), "thrust_to_weight": tw,
            "mass_kg": mass, "cost": cost, "duty": duty, "rpm": float(op.rpm[0]),
            "bus_current_a": pack_current, "drive_efficiency": float(op.drive_efficiency[0]),
            "thrust_n": float(op.thrust_n[0]), "full_motor_current_a": i_full,
            "full_thrust_n": float(low.thrust_n[0]), "extra_loss_w": float(op.extra_loss_w[0]),
            "cruise_thrust_n": thrust, "diameter_m": float(pr.diameter_m[q]), "profile_energy_wh": energy,
            "cruise_winding_resistance_ohm": float(common["motor"].resistance_ohm)}, tie=tuple(  # type: ignore[arg-type]
                0.0 if lib.assumed is None else float(lib.assumed[i])
                for lib, i in ((pk, p), (es, e), (mo, m), (pr, q)))))
    return counts, feasible


def _segment_point(mission: MissionSpec, segment: Segment, mass: float,
                   diameter_m: float) -> tuple[float, forward_flight.FlightState | None]:
    """Thrust per rotor and multirotor flight state of a profile segment, by hand: hover W/N; climb, descent and
    forward flight from the flight-state physics directly (as the cruise point of such a mission); fixed-wing
    climbing cruise W (cos γ / (L/D) + sin γ)/N, sin γ = ROC/V (Anderson 1999), never below 0 (a power-off glide)."""
    weight = mass * G0
    if segment.kind == "cruise":
        sin_g = segment.climb_rate_m_s / mission.cruise_airspeed_m_s
        return max(weight * (math.sqrt(1.0 - sin_g**2) / mission.lift_to_drag + sin_g), 0.0) / mission.rotor_count, None
    rate = {"hover": 0.0, "climb": 1.0, "descent": -1.0, "forward": 0.0}[segment.kind] * segment.climb_rate_m_s
    speed = segment.airspeed_m_s if segment.kind == "forward" else 0.0
    if speed == 0.0 and rate == 0.0 and not mission.coaxial:
        return weight / mission.rotor_count, None
    state = forward_flight.flight_state(np.asarray(weight), float(mission.rotor_count),
                                        math.pi * diameter_m**2 / 4.0, mission.density_kg_m3, speed, rate,
                                        mission.drag_area_m2, coaxial=mission.coaxial)
    return float(state.thrust_n), state


def _fly_profile(mission: MissionSpec, mass: float, voc: Callable[[float], float], common: dict[str, object],
                 capacity_ah: float, cells: float, diameter_m: float) -> profile.ProfileResult:
    """The mission's segments and reserve flown with the physics engine's bracketed solver at every point."""
    segments = list(mission.segments)
    if mission.reserve_min > 0.0:
        segments.append(Segment("cruise" if mission.kind == "cruise" else "hover", 60.0 * mission.reserve_min))
    points = [_segment_point(mission, s, mass, diameter_m) for s in segments]

    def state_at(i: int, soc: np.ndarray) -> profile.LegState:
        thrust, flight = points[i]
        v_oc = voc(float(soc))
        if thrust == 0.0:
            return profile.LegState(np.zeros(()), np.full((), v_oc), np.ones((), dtype=bool))
        op = drive.for_thrust(thrust, open_circuit_voltage_v=v_oc, flight=flight, **common)  # type: ignore[arg-type]
        ok = int(op.status[0]) in (Status.OK, Status.OVER_CURRENT, Status.DATA_ERROR)
        return profile.LegState(np.asarray(float(op.pack_current_a[0])), np.asarray(float(op.bus_voltage_v[0])),
                                np.asarray(ok))

    pack = PackParams(cells, capacity_ah, 0.0, usable_fraction=mission.usable_fraction,
                      cutoff_voltage_per_cell_v=mission.cutoff_v_per_cell)
    return profile.fly([s.duration_s for s in segments], state_at, pack=pack, shape=())


def refine(library: PartsLibrary, mission: MissionSpec, records: list[Record]) -> None:
    """Constant-thrust discharge of every record (adds 'refined_endurance_min')."""
    if not records:
        return
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    p, k, e, m, q = (np.array([r.key[i] for r in records]) for i in range(5))
    kf = k.astype(float)
    table = pr.forward if mission.kind == "cruise" else pr.static
    assert table is not None
    resistance = np.array([r.metrics["cruise_winding_resistance_ohm"] for r in records])
    cell_r = pk.cell_resistance_ohm[p] * (_pack_factor(mission.air_temperature_c) if mission.temperature_effects
                                          else 1.0)
    result = endurance.constant_thrust(
        np.array([r.metrics["cruise_thrust_n"] for r in records]),
        pack=PackParams(pk.cells_series[p], pk.capacity_ah[p] * kf, cell_r,
                        cells_parallel=pk.cells_parallel[p] * kf, full_voltage_per_cell_v=pk.full_voltage_per_cell_v[p],
                        usable_fraction=mission.usable_fraction, cutoff_voltage_per_cell_v=mission.cutoff_v_per_cell),
        motor=MotorParams(mo.kv_rpm_per_v[m], resistance, mo.no_load_current_a[m],
                          inductance_h=np.where(np.isnan(mo.inductance_h[m]), 30e-6, mo.inductance_h[m]),
                          max_current_a=mo.max_current_a[m]),
        esc=es.params(e), propeller=table.take(q), rotor_count=float(mission.rotor_count),
        density_kg_m3=mission.density_kg_m3, airspeed_m_s=mission.airspeed_m_s,
        flight=_flight(mission, np.array([r.metrics["mass_kg"] for r in records]),
                       np.array([r.metrics["diameter_m"] for r in records])))
    for r, t in zip(records, np.asarray(result.time_s) / 60.0, strict=True):
        r.metrics["refined_endurance_min"] = float(t)


_SENSE = {"cruise_power": ("electrical_power_w", 1), "endurance": ("endurance_min", -1),
          "specific_thrust": ("specific_thrust_g_per_w", -1), "thrust_to_weight": ("thrust_to_weight", -1),
          "mass": ("mass_kg", 1), "cost": ("cost", 1), "profile_energy": ("profile_energy_wh", 1)}


def sort_key(record: Record, objective: str, endurance_field: str = "endurance_min") -> tuple[object, ...]:
    """Objective first, then power, endurance, g/W, thrust-to-weight, mass, cost, then parts (fewer assumed
    parameters first, then id)."""
    order = [objective] + [name for name in _SENSE if name != objective]
    values = []
    for name in order:
        metric, sense = _SENSE[name]
        value = record.metrics[endurance_field if metric == "endurance_min" else metric]
        values.append(math.inf if math.isnan(value) else sense * value)
    p, k, e, m, q = record.key
    t = record.tie
    return (*values, t[0], record.ids[0], k, t[1], record.ids[1], t[2], record.ids[2], t[3], record.ids[3])


def pareto(records: list[Record]) -> set[tuple[int, int, int, int, int]]:
    """Keys of the records no other record dominates (endurance max, T/W max, mass min, cost min)."""
    def vec(r: Record) -> tuple[float, ...]:
        return (-r.metrics["endurance_min"], -r.metrics["thrust_to_weight"], r.metrics["mass_kg"], r.metrics["cost"])

    out = set()
    for a in records:
        va = vec(a)
        dominated = False
        for b in records:
            vb = vec(b)
            if all(x <= y for x, y in zip(vb, va, strict=True)) and any(x < y for x, y in zip(vb, va, strict=True)):
                dominated = True
                break
        if not dominated:
            out.add(a.key)
    return out
