"""One power system evaluated for a mission with the full physics engine (shortlists, compare, refinement).

Definitions follow the rankings issue: the cruise point is solved at the mission's ``cruise_state_of_charge``;
thrust-to-weight at full throttle at the end of usable capacity (state of charge 1 − usable_fraction); peak
motor and pack currents at full throttle with a full pack; endurance by a constant-thrust discharge from a full
pack. Limits are the mission's (defaults are common practice, no source).
"""

from __future__ import annotations

import hashlib
import json
import pickle
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput, NotFound
from server.models import Battery, Calibration, Esc, Mission, Motor, Propeller
from server.physics import ENGINE_VERSION, drive, endurance, fast, priors, sizing
from server.physics._types import STANDARD_GRAVITY_M_S2, FloatArray, Status
from server.physics.battery import PackParams
from server.physics.forward_flight import FlightState
from server.physics.motor import MotorParams
from server.physics.operating_point import LOSS_TERMS, OperatingPoint, loss_value
from server.selection.flight_report import flight_report, hover_of, hover_state
from server.selection.library import MissionSpec
from server.services import candidate_temperature, ranking_bands
from server.services import parts as parts_service
from server.services import power_system as ps
from server.services.ranking_inputs import mission_spec_of

G0 = STANDARD_GRAVITY_M_S2


@dataclass(frozen=True)
class CandidateIds:
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int = 1


def _f(value: Any) -> float | None:
    number = float(np.ravel(value)[0])
    return number if np.isfinite(number) else None


@dataclass
class Candidate:
    """Loaded parts plus physics parameters of one candidate for one mission."""

    mission: Mission
    ids: CandidateIds
    battery: Battery
    esc: Esc
    motor: Motor
    propeller: Propeller
    kwargs: dict[str, Any]
    pack: PackParams
    thrust_required_n: float
    all_up_mass_g: float
    cost: float | None
    sources: dict[str, dict[str, str]]
    pack_nominal_voltage_v: float
    spec: MissionSpec
    thermal_values: tuple[float, float, float]
    """The motor's R_th [K/W], tau [s] and highest winding temperature [°C] (stated, calibrated or priors)."""
    flight: FlightState | None = None
    """Multirotor flight state of the cruise point (forward flight, climb, coaxial); None: static hover/cruise."""
    full_motor: MotorParams | None = None
    """The motor of the full-throttle points when it differs from the cruise point's (a hot winding)."""

    def point_at_soc(self, soc: float | FloatArray, **kw: Any) -> dict[str, Any]:
        ocv = self.pack.open_circuit_voltage_v(soc)
        return {
            "open_circuit_voltage_v": float(ocv) if np.ndim(soc) == 0 else ocv,
            "pack_resistance_ohm": float(self.pack.resistance_ohm),
            **self.kwargs,
            **kw,
        }


def load(session: Session, *, team_id: int, mission: Mission, ids: CandidateIds) -> Candidate:
    """Resolve the four parts (calibrations win) and the mission's required thrust per rotor."""
    get = parts_service.get_part
    try:
        battery = get(session, team_id=team_id, kind="batteries", part_id=ids.battery_id)
        esc = get(session, team_id=team_id, kind="escs", part_id=ids.esc_id)
        motor = get(session, team_id=team_id, kind="motors", part_id=ids.motor_id)
        prop = get(session, team_id=team_id, kind="propellers", part_id=ids.propeller_id)
    except NotFound as exc:
        raise InvalidInput("Unknown part", [FieldError("part", str(exc))]) from None
    k = ids.packs_in_parallel
    if not 1 <= k <= 4:
        raise InvalidInput("Bad pack configuration", [FieldError("packs_in_parallel", "must be 1–4")])
    system = ps.PowerSystem.from_parts(session, team_id, battery, esc, motor, prop)
    spec = mission_spec_of(mission)
    rotors = spec.rotor_count
    mass_kg = float(sizing.all_up_mass_kg(spec.frame_mass_kg + spec.payload_kg, k, battery.mass_g / 1000, rotors,
                                          esc.mass_g / 1000, motor.mass_g / 1000, prop.mass_g / 1000))
    table = system.table_for(spec.airspeed_m_s, "propeller.forward_table")
    prices = [np.nan if c is None else c for c in (battery.unit_cost, esc.unit_cost, motor.unit_cost, prop.unit_cost)]
    cost = _f(sizing.system_cost(k, prices[0], rotors, prices[1], prices[2], prices[3]))
    pack = system.pack(packs_in_parallel=k, usable_fraction=mission.usable_fraction,
                       cutoff_v_per_cell=mission.cutoff_v_per_cell)
    kwargs = {
        "motor": system.motor_params,
        "esc": system.esc_params,
        "propeller": table,
        "rotor_count": rotors,
        "density_kg_m3": spec.density_kg_m3,
        "airspeed_m_s": spec.airspeed_m_s,
    }
    v = system.motor.values
    r_th, tau, t_max = priors.thermal_defaults(motor.mass_g / 1000, *(np.nan if v.get(name) is None else v[name]
                                                                      for name in priors.THERMAL_PRIORS))
    return Candidate(mission, ids, battery, esc, motor, prop, kwargs, pack, float(spec.thrust_per_rotor_n(mass_kg)),
                     1000.0 * mass_kg, cost, system.sources(), system.nominal_voltage_v, spec,
                     (float(r_th), float(tau), float(t_max)), spec.flight_state(mass_kg, table.diameter_m))


def _temperatures(c: Candidate) -> dict[str, Any]:
    """With the mission's temperature effects: the cruise motor and pack at temperature on ``c`` (used by every
    point, the discharge and the curves), the full-throttle motor hot after the burst; the heat block. With a cold
    day: its re-check. Empty without either (reference model v1)."""
    spec = c.spec
    out: dict[str, Any] = {}
    base_kwargs, base_pack = dict(c.kwargs), c.pack
    if spec.cold_day_temperature_c is not None:
        out["cold_day"] = candidate_temperature.cold_day(base_kwargs, base_pack, spec, c.thermal_values,
                                                         c.all_up_mass_g / 1000,
                                                         float(np.ravel(c.kwargs["propeller"].diameter_m)[0]))
    if spec.temperature_effects:
        cruise_motor, full_motor, pack, heat = candidate_temperature.at_temperature(
            base_kwargs, base_pack, spec, c.thermal_values, c.thrust_required_n, spec.air_temperature_c,
            spec.cruise_state_of_charge, flight=c.flight)
        c.kwargs, c.pack, c.full_motor = {**c.kwargs, "motor": cruise_motor}, pack, full_motor
        out["heat"] = heat
    return out


def _losses(op: OperatingPoint) -> dict[str, float | None]:
    return {name: _f(loss_value(op, where)) for name, where, _ in LOSS_TERMS}


CACHE_SIZE = 512
"""Evaluations kept per process (a compare page of six entries needs six)."""
_cache: OrderedDict[tuple[Any, ...], bytes] = OrderedDict()
"""Evaluations pickled: a hit unpickles a fresh copy for the caller (several times faster than ``deepcopy``)."""
_cache_lock = threading.Lock()


def _content(row: Any) -> list[Any]:
    """A row's stored values (not its bookkeeping), JSON-ready."""
    return [[c.key, getattr(row, c.key)] for c in row.__table__.columns
            if c.key not in ("created_at", "updated_at", "version", "notes")]


def _digest(value: Any) -> str:
    """SHA-256 of ``value`` as sorted JSON (dates and other non-JSON values by ``str``)."""
    return hashlib.sha256(json.dumps(value, default=str, sort_keys=True).encode()).hexdigest()


@dataclass(frozen=True)
class Preloaded:
    """Rows a caller evaluating several candidates of one team loads once: parts by kind and id (archived too), and
    the team's active calibrations in id order (:func:`preload`). The content digests of these rows are taken once
    (``digests``), as the rows were read in this request."""

    parts: dict[str, dict[int, Any]]
    calibrations: list[Any]
    digests: dict[tuple[str, int], str] = field(default_factory=dict)


def preload(session: Session, *, team_id: int, candidates: list[CandidateIds]) -> Preloaded:
    """One query per part kind and one for the calibrations, for every candidate of a compare view."""
    wanted = {kind: [getattr(c, f"{attr}_id") for c in candidates] for kind, attr in PART_KINDS}
    calibrations = list(session.scalars(select(Calibration).where(
        Calibration.team_id == team_id, Calibration.active.is_(True)).order_by(Calibration.id)))
    return Preloaded(parts_service.by_ids(session, team_id=team_id, ids=wanted), calibrations)


PART_KINDS = (("batteries", "battery"), ("escs", "esc"), ("motors", "motor"), ("propellers", "propeller"))
"""Part kind (library and API plural) and the singular its id field is named after (``battery_id`` ...)."""


def _cache_key(session: Session, *, team_id: int, mission: Mission, ids: CandidateIds,
               preloaded: Preloaded | None = None) -> tuple[Any, ...]:
    """Everything an evaluation depends on, by content: the engine version, the mission and its airframe, the four
    parts and every active calibration of the team (a part's own, and the ESCs' pooled k_pwm prior). Any edit,
    calibration or switch changes the key, so a cached evaluation is never served after a change (ids and versions
    alone are not enough: a database may reuse an id). ``preloaded`` rows (read in this request) save the queries,
    and their digests are taken once for all the candidates of the request."""
    memo: dict[tuple[str, int], str] = {} if preloaded is None else preloaded.digests
    parts = []
    for kind, attr in PART_KINDS:
        part_id = getattr(ids, f"{attr}_id")
        if (kind, part_id) not in memo:
            row = None if preloaded is None else preloaded.parts.get(kind, {}).get(part_id)
            if row is None:
                try:
                    row = parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
                except NotFound as exc:
                    raise InvalidInput("Unknown part", [FieldError("part", str(exc))]) from None
            memo[kind, part_id] = _digest(_content(row))
        parts.append(memo[kind, part_id])
    if ("calibrations", 0) not in memo:
        rows = preloaded.calibrations if preloaded is not None else session.scalars(select(Calibration).where(
            Calibration.team_id == team_id, Calibration.active.is_(True)).order_by(Calibration.id))
        memo["calibrations", 0] = _digest([_content(c) for c in rows])
    content = [_digest(_content(mission)), _digest(_content(mission.airframe)), parts, memo["calibrations", 0]]
    return (ENGINE_VERSION, _digest(content), ids.packs_in_parallel)


def evaluate(
    session: Session, *, team_id: int, mission: Mission, ids: CandidateIds, with_curves: bool = False,
    preloaded: Preloaded | None = None,
) -> dict[str, Any]:
    """Every number the compare page shows for one candidate (craft totals unless named per rotor); ``curves`` only
    ``with_curves``.

    Cached per process by :func:`_cache_key` (the same inputs give the same numbers; a change gives a new key). The
    cache holds the evaluation with its curves whoever asked first, so the snapshot taken when an entry is added or
    re-evaluated leaves the compare page that follows nothing to compute."""
    key = _cache_key(session, team_id=team_id, mission=mission, ids=ids, preloaded=preloaded)
    with _cache_lock:
        cached = _cache.get(key)
        if cached is not None:
            _cache.move_to_end(key)
    if cached is not None:
        metrics: dict[str, Any] = pickle.loads(cached)
    else:
        metrics = _evaluate(session, team_id=team_id, mission=mission, ids=ids, with_curves=True)
        blob = pickle.dumps(metrics, protocol=pickle.HIGHEST_PROTOCOL)
        with _cache_lock:
            _cache[key] = blob
            while len(_cache) > CACHE_SIZE:
                _cache.popitem(last=False)
    if not with_curves:
        del metrics["curves"]
    return metrics


def _evaluate(
    session: Session, *, team_id: int, mission: Mission, ids: CandidateIds, with_curves: bool = False
) -> dict[str, Any]:
    c = load(session, team_id=team_id, mission=mission, ids=ids)
    temperatures = _temperatures(c)
    rotors = c.mission.airframe.rotor_count
    full_motor = {} if c.full_motor is None else {"motor": c.full_motor}
    # One solve for every point that holds the required thrust (the cruise point, the discharge's SOC nodes, the
    # curve's SOCs) and one for both full-throttle points: each element is solved on its own, so the numbers are
    # those of separate calls, with a third of the solver's per-call work.
    nodes = fast.constant_thrust_nodes(1.0, c.pack, ())
    curve_socs = np.linspace(1.0, 1.0 - mission.usable_fraction, CURVE_SOCS) if with_curves else np.empty(0)
    cruise, at_nodes, held = _held(c, [np.array([mission.cruise_state_of_charge]), nodes, curve_socs])
    low, peak = _points(drive.full_throttle(**c.point_at_soc(np.array([1 - mission.usable_fraction, 1.0]),
                                                             **full_motor)), 2)
    discharge = _discharge(c, nodes, at_nodes)
    weight_n = c.all_up_mass_g / 1000 * G0
    motor_current = _f(peak.motor_current_a)
    pack_current = _f(peak.pack_current_a)
    allowed_pack = mission.pack_current_fraction * c.battery.max_continuous_c * float(c.pack.capacity_ah)
    metrics: dict[str, Any] = {
        "battery_id": ids.battery_id,
        "esc_id": ids.esc_id,
        "motor_id": ids.motor_id,
        "propeller_id": ids.propeller_id,
        "packs_in_parallel": ids.packs_in_parallel,
        "cells_series": c.battery.cells_series,
        "pack_nominal_voltage_v": c.pack_nominal_voltage_v,
        "all_up_mass_g": c.all_up_mass_g,
        "thrust_required_n": c.thrust_required_n,
        "cruise": {
            "status": Status(int(np.ravel(cruise.status)[0])).name.lower(),
            "duty": _f(cruise.duty),
            "rpm": _f(cruise.rpm),
            "thrust_n": _f(cruise.thrust_n),
            "electrical_power_w": _f(cruise.electrical_power_w * rotors),
            "electrical_power_per_rotor_w": _f(cruise.electrical_power_w),
            "bus_current_a": _f(cruise.pack_current_a),
            "bus_voltage_v": _f(cruise.bus_voltage_v),
            "motor_current_a": _f(cruise.motor_current_a),
            "shaft_power_w": _f(cruise.shaft_power_w),
            "specific_thrust_g_per_w": _f(cruise.specific_thrust_g_per_w),
            "drive_efficiency": _f(cruise.drive_efficiency),
            "losses": _losses(cruise) | {"pack_w": _f(cruise.pack_loss_w)},
            # the same values under the names of the first API version (kept for scripts that read them)
            "losses_w": {name.removesuffix("_w"): value for name, value in _losses(cruise).items()},
            "pack_loss_w": _f(cruise.pack_loss_w),
        },
        "full_throttle": {
            "thrust_n": _f(low.thrust_n),
            "thrust_to_weight": _f(low.thrust_n * rotors / weight_n),
            "motor_current_a": motor_current,
            "bus_current_a": pack_current,
            "bus_voltage_v": _f(peak.bus_voltage_v),
            "electrical_power_w": _f(peak.electrical_power_w * rotors),
        },
        "endurance_min": _f(discharge.time_s / 60),
        "endurance_stop_reason": endurance.StopReason(int(np.ravel(discharge.stop_reason)[0])).name.lower(),
        "cost": c.cost,
        "currency": c.battery.currency,
        "margins": {
            "motor_current_ratio": None
            if not (motor_current and c.motor.max_current_a)
            else motor_current / c.motor.max_current_a,
            "esc_rating_ratio": None if not motor_current else c.esc.continuous_current_a / motor_current,
            "pack_current_ratio": None if not pack_current else pack_current / allowed_pack,
        },
        "ratings": {
            "motor_max_current_a": c.motor.max_current_a,
            "esc_continuous_current_a": c.esc.continuous_current_a,
            "pack_allowed_current_a": allowed_pack,
        },
        "sources": c.sources,
        **temperatures,
    }
    if c.flight is not None:
        metrics["flight"] = _flight(c, cruise)
    if with_curves:
        metrics["curves"] = curves(c, held=held)
    metrics |= ranking_bands.for_system(session, team_id=team_id, mission=mission, battery_id=ids.battery_id,
                                        esc_id=ids.esc_id, motor_id=ids.motor_id, propeller_id=ids.propeller_id,
                                        packs_in_parallel=ids.packs_in_parallel)
    return metrics


def _flight(c: Candidate, cruise: OperatingPoint) -> dict[str, Any]:
    """The flight state and the power against the same craft hovering, by the reference solver."""
    assert c.flight is not None
    spec = mission_spec_of(c.mission)
    hover = hover_of(spec)
    mass_kg = c.all_up_mass_g / 1000.0
    diameter = c.kwargs["propeller"].diameter_m
    point = c.point_at_soc(c.mission.cruise_state_of_charge)
    hovering = drive.for_thrust(float(hover.thrust_per_rotor_n(mass_kg)), **point,
                                flight=hover.flight_state(mass_kg, diameter))
    rotors = spec.rotor_count
    return flight_report(spec, c.flight, hover_state(spec, mass_kg, diameter).ideal_power_w, cruise.omega_rad_s,
                         diameter, cruise.electrical_power_w * rotors, hovering.electrical_power_w * rotors)


def _points(op: OperatingPoint, count: int) -> list[OperatingPoint]:
    """The ``count`` elements of a 1-D ``op`` as points of their own (shape (1,), as a scalar request gives)."""
    return [op.map(lambda a, i=i: a[i:i + 1]) for i in range(count)]


def _held(c: Candidate, socs: list[FloatArray]) -> tuple[OperatingPoint, OperatingPoint, OperatingPoint]:
    """The points holding the required thrust per rotor at the cruise SOC (``socs[0]``, one value, returned as the
    point of a scalar request) and at the SOCs of ``socs[1]`` and ``socs[2]``, solved in one call."""
    ocv = [np.array([float(c.pack.open_circuit_voltage_v(socs[0][0]))]),
           *(np.asarray(c.pack.open_circuit_voltage_v(s), dtype=np.float64) for s in socs[1:])]
    op = drive.for_thrust(np.full(sum(v.size for v in ocv), c.thrust_required_n),
                          **{**c.kwargs, "open_circuit_voltage_v": np.concatenate(ocv),
                             "pack_resistance_ohm": float(c.pack.resistance_ohm)}, flight=c.flight)
    ends = np.cumsum([v.size for v in ocv])
    (cruise,) = _points(op, 1)
    return (cruise, op.map(lambda a: a[ends[0]:ends[1]]), op.map(lambda a: a[ends[1]:ends[2]]))


def _discharge(c: Candidate, nodes: FloatArray, op: OperatingPoint) -> endurance.EnduranceResult:
    """The constant-thrust discharge of :func:`physics.endurance.constant_thrust` on its SOC ``nodes``
    (:func:`physics.fast.constant_thrust_nodes`), ``op`` the points holding the thrust there."""
    reachable = ~np.isin(op.status, [Status.INFEASIBLE_THRUST, Status.NO_SOLUTION, Status.POWER_LIMIT])
    invalid = op.status == Status.NON_FINITE
    return fast.march_constant_thrust(nodes, op.pack_current_a, op.bus_voltage_v, op.duty, reachable, invalid,
                                      pack=c.pack)


CURVE_SOCS = 41
"""SOCs of the discharge curve (pack voltage against time), full to the end of usable capacity."""


def curves(c: Candidate, steps: int = 40, held: OperatingPoint | None = None) -> dict[str, Any]:
    """Electrical power and specific thrust vs thrust per rotor (cruise SOC) and pack voltage vs time; ``held``: the
    points holding the required thrust at the :data:`CURVE_SOCS` SOCs, when already solved (:func:`_held`)."""
    mission = c.mission
    duties = np.linspace(0.15, 1.0, steps)
    sweep = drive.at_duty(duties, **c.point_at_soc(mission.cruise_state_of_charge))
    ok = np.isin(sweep.status, [Status.OK, Status.OVER_CURRENT]) & (sweep.thrust_n > 0)  # windmilling in cruise
    socs = np.linspace(1.0, 1.0 - mission.usable_fraction, CURVE_SOCS)
    if held is None:
        held = _held(c, [np.array([mission.cruise_state_of_charge]), np.empty(0), socs])[2]
    good = np.isin(held.status, [Status.OK, Status.OVER_CURRENT]) & np.isfinite(held.pack_current_a)
    # Coulomb counting between SOC nodes (trapezoid on 1/I), as in the endurance module.
    seconds_per_soc = 3600 * float(c.pack.capacity_ah) / held.pack_current_a
    step = np.abs(np.diff(socs)) * 0.5 * (seconds_per_soc[1:] + seconds_per_soc[:-1])
    time_s = np.concatenate([[0.0], np.cumsum(step)])
    last = int(np.argmin(good)) if not good.all() else len(socs)
    return {
        "thrust_n": sweep.thrust_n[ok].tolist(),
        "electrical_power_w": sweep.electrical_power_w[ok].tolist(),
        "specific_thrust_g_per_w": sweep.specific_thrust_g_per_w[ok].tolist(),
        "discharge_time_min": (time_s[:last] / 60).tolist(),
        "discharge_bus_voltage_v": held.bus_voltage_v[:last].tolist(),
    }
