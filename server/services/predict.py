"""Predict: operating points (and optionally endurance) of one power system, for the API, CLI and page."""

from __future__ import annotations

import math
from dataclasses import fields
from typing import Any

import numpy as np
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput
from server.physics import atmosphere, drive, endurance, fast, forward_flight, uncertainty
from server.physics._types import STANDARD_GRAVITY_M_S2, Status, as_float_array
from server.physics.battery import PackParams
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.operating_point import LOSS_TERMS, OperatingPoint, loss_value
from server.physics.propeller import PropellerTable, disk_area_m2, tip_mach_number
from server.physics.system_batch import SystemBatch, operating_points
from server.schemas.predict import PredictRequest
from server.selection.flight_report import flight_report
from server.services import bands, winding
from server.services import power_system as ps

TIP_MACH_LIMIT = 0.7  # common practice, no source (docs/model-reference.md#propeller-typical-values)
POINT_FIELDS = ["rpm", "thrust_n", "torque_nm", "shaft_power_w", "duty", "motor_current_a", "motor_voltage_v",
                "bus_voltage_v", "bus_current_a", "electrical_power_w", "drive_efficiency", "specific_thrust_g_per_w"]


def _f(value: Any) -> float | None:
    number = float(value)
    return number if math.isfinite(number) else None


class System:
    """The resolved power system of a request: physics parameters plus where each value came from."""

    def __init__(self, session: Session | None, team_id: int | None, request: PredictRequest) -> None:
        self.request = request
        self.system = ps.PowerSystem(
            battery=ps.resolve(session, team_id, "batteries", request.battery, "battery"),
            esc=ps.resolve(session, team_id, "escs", request.esc, "esc"),
            motor=ps.resolve(session, team_id, "motors", request.motor, "motor"),
            propeller=ps.resolve(session, team_id, "propellers", request.propeller, "propeller"),
        )
        self.esc, self.motor, self.prop, self.battery = (self.system.esc, self.system.motor, self.system.propeller,
                                                         self.system.battery)
        self.motor_params = self.system.motor_params
        self.esc_params = self.system.esc_params
        self.static_table, self.forward_table = self.system.tables()
        conditions = request.conditions
        outside_k = None if conditions.air_temperature_c is None else conditions.air_temperature_c + 273.15
        self.density = float(atmosphere.air_density_kg_m3(
            conditions.altitude_m, temperature_offset_k=conditions.temperature_offset_c or 0.0,
            outside_air_temperature_k=outside_k,
        ))
        self.temperature_k = float(atmosphere.air_temperature_k(
            conditions.altitude_m, temperature_offset_k=conditions.temperature_offset_c or 0.0,
            outside_air_temperature_k=outside_k,
        ))
        self.airspeed = conditions.airspeed_m_s
        self.table: PropellerTable = self.system.table_for(self.airspeed, "propeller.forward_table")
        b = request.battery
        if b.supply_voltage_v is not None:
            self.pack: PackParams | None = None
            self.open_circuit_v = b.supply_voltage_v
            self.pack_resistance = b.wiring_resistance_ohm
        else:
            self.pack = self.system.pack(packs_in_parallel=b.packs_in_parallel,
                                         wiring_resistance_ohm=b.wiring_resistance_ohm)
            self.open_circuit_v = float(self.pack.open_circuit_voltage_v(b.state_of_charge))
            self.pack_resistance = float(self.pack.resistance_ohm)

    def solve_kwargs(self) -> dict[str, Any]:
        return {
            "motor": self.motor_params, "esc": self.esc_params, "propeller": self.table,
            "open_circuit_voltage_v": self.open_circuit_v, "pack_resistance_ohm": self.pack_resistance,
            "rotor_count": self.request.rotor_count, "density_kg_m3": self.density, "airspeed_m_s": self.airspeed,
        }

    def flight(self, thrust_n: Any, coaxial_only: bool = False) -> forward_flight.FlightState | None:
        """The multirotor flight state of rotors making ``thrust_n`` each (None without a multirotor flight): the
        craft's weight is what that thrust carries at the conditions' airspeed, climb rate and drag area.
        ``coaxial_only``: the same craft hovering (the comparison "vs hover")."""
        c = self.request.conditions
        if not c.multirotor_flight:
            return None
        n = float(self.request.rotor_count)
        speed, climb = (0.0, 0.0) if coaxial_only else (c.forward_airspeed_m_s, c.climb_rate_m_s)
        weight = forward_flight.weight_for_rotor_thrust_n(thrust_n, n, self.density, c.forward_airspeed_m_s,
                                                          c.climb_rate_m_s, c.drag_area_m2)
        return forward_flight.flight_state(weight, n, disk_area_m2(self.table.diameter_m), self.density, speed, climb,
                                           c.drag_area_m2, c.coaxial)

    def parameters(self) -> dict[str, dict[str, dict[str, Any]]]:
        return {"battery": self.battery.report(), "esc": self.esc.report(), "motor": self.motor.report(),
                "propeller": self.prop.report()}


def solve_points(system: System, kinds: list[str], values: np.ndarray) -> OperatingPoint:
    """All requested points in one vectorised call per kind; results in request order.

    Thrust points and full throttle take their speed and bus voltage from the screening solver and everything else
    from the reference's own assembly (:func:`server.physics.system_batch.operating_points`: the reference's numbers
    without its root-finding overhead); partial duties and speeds are the reference solver's."""
    n = len(kinds)
    kinds_arr = np.array(kinds)
    merged: OperatingPoint | None = None
    for kind in ("throttle", "thrust_n", "rpm"):
        mask = kinds_arr == kind
        if not mask.any():
            continue
        if kind == "rpm":
            op = drive.at_rpm(values[mask], **system.solve_kwargs())
        else:
            extra: dict[str, Any] = {"flight": system.flight(values[mask])} if kind == "thrust_n" else {}
            op = operating_points(kind, values[mask], **system.solve_kwargs(), **extra)
        if merged is None:
            merged = op.map(lambda a: np.zeros(n, dtype=np.asarray(a).dtype) if np.asarray(a).dtype.kind in "ib"
                            else np.full(n, np.nan))

        def scatter(full: np.ndarray, part: np.ndarray, mask: np.ndarray = mask) -> np.ndarray:
            out = np.array(full)
            out[mask] = np.broadcast_to(np.asarray(part, dtype=out.dtype), (int(mask.sum()),))
            return out

        merged = merged.map(scatter, op)
    assert merged is not None  # the request has at least one point (schema)
    return merged


def _flight_points(system: System, kinds: list[str], values: np.ndarray, op: OperatingPoint,
                   points: list[dict[str, Any]]) -> None:
    """Each thrust point's multirotor flight state and its power against the same craft hovering; throttle and rpm
    points stay static (they say so)."""
    c = system.request.conditions
    if not c.multirotor_flight:
        return
    rotors = float(system.request.rotor_count)
    which = np.flatnonzero(np.array(kinds) == "thrust_n")
    state = system.flight(values[which])
    assert state is not None
    hover_thrust = forward_flight.weight_for_rotor_thrust_n(
        values[which], rotors, system.density, c.forward_airspeed_m_s, c.climb_rate_m_s, c.drag_area_m2) / rotors
    hover_state = system.flight(values[which], coaxial_only=True)
    hovering = drive.for_thrust(hover_thrust, **system.solve_kwargs(), flight=hover_state if c.coaxial else None)
    described = {"kind": "forward_flight" if c.forward_airspeed_m_s > 0 else "hover",
                 "airspeed_m_s": c.forward_airspeed_m_s, "climb_rate_m_s": c.climb_rate_m_s,
                 "drag_area_m2": c.drag_area_m2, "coaxial": c.coaxial}
    for j, i in enumerate(which):
        one = forward_flight.FlightState(**{name: np.ravel(np.broadcast_to(value, which.shape))[j:j + 1]
                                            for name, value in vars(state).items()})
        assert hover_state is not None
        points[i]["flight"] = flight_report(
            described, one, np.ravel(np.broadcast_to(hover_state.ideal_power_w, which.shape))[j],
            op.omega_rad_s[i], system.table.diameter_m, op.electrical_power_w[i] * rotors,
            hovering.electrical_power_w[j] * rotors)
    for i in np.flatnonzero(np.array(kinds) != "thrust_n"):
        points[i]["warnings"].append("throttle and rpm points are the static rotor's; the multirotor flight state "
                                     "applies to thrust points")


def _warnings(system: System, op: OperatingPoint, i: int) -> list[str]:
    notes: list[str] = []
    status = Status(int(op.status[i]))
    current = op.motor_current_a[i]
    motor_max = system.motor.values.get("max_current_a")
    esc_max = system.esc.values.get("continuous_current_a")
    if motor_max and current > motor_max:
        notes.append(f"motor current {current:.1f} A is above the motor's rating of {motor_max:g} A")
    if esc_max and current > esc_max:
        notes.append(f"motor current {current:.1f} A is above the ESC's continuous rating of {esc_max:g} A")
    if system.pack is not None:
        c_rating = system.battery.values.get("max_continuous_c")
        if c_rating:
            allowed = c_rating * float(system.pack.capacity_ah)
            if op.pack_current_a[i] > allowed:
                notes.append(f"pack current {op.pack_current_a[i]:.1f} A is above its continuous rating "
                             f"{c_rating:g} C = {allowed:.1f} A")
    if np.isfinite(op.omega_rad_s[i]):
        mach = float(tip_mach_number(op.omega_rad_s[i], system.table.diameter_m,
                                     atmosphere.speed_of_sound_m_s(system.temperature_k)).ravel()[0])
        if mach > TIP_MACH_LIMIT:
            notes.append(f"tip Mach {mach:.2f} is above {TIP_MACH_LIMIT} (noise, loss of efficiency)")
    if bool(op.outside_table[i]):
        notes.append(_outside_note(system, op, i))
    if np.isfinite(op.bus_voltage_v[i]) and op.bus_voltage_v[i] < 0.5 * system.open_circuit_v:
        notes.append("bus voltage below half the open-circuit voltage: the pack cannot deliver more power")
    if status == Status.INFEASIBLE_THRUST:
        notes.append("not reachable: needs a PWM duty above 1 with this supply")
    elif status == Status.DATA_ERROR:
        notes.append(f"propeller data outside its range: this point would be {op.momentum_limit_ratio[i]:.2f} × what "
                     "momentum theory allows (figure of merit or the Froude efficiency); check the coefficients or "
                     "stay inside the measured range")
    elif status not in (Status.OK, Status.OVER_CURRENT):
        notes.append(f"no solution ({status.name.lower()})")
    return notes


def _outside_note(system: System, op: OperatingPoint, i: int) -> str:
    """Where a point left its propeller table: the measured range in the table's own abscissa."""
    axis = system.table.axis_values[~np.isnan(system.table.axis_values)]
    if system.table.axis == "rpm":
        return (f"{op.rpm[i]:.0f} rpm is outside the measured range {axis.min():g}–{axis.max():g} rpm; "
                "coefficients held at the nearest measured value")
    diameter = float(np.ravel(system.table.diameter_m)[0])
    j = system.airspeed / (op.rpm[i] / 60.0 * diameter)
    return (f"advance ratio J = {j:.3f} is outside the measured range {axis.min():g}–{axis.max():g}; "
            "coefficients held at the nearest measured value")


def _point(system: System, op: OperatingPoint, i: int, request: dict[str, float]) -> dict[str, Any]:
    rotors = system.request.rotor_count
    craft: dict[str, Any] = {
        "thrust_n": _f(op.thrust_n[i] * rotors), "bus_current_a": _f(op.pack_current_a[i]),
        "electrical_power_w": _f(op.electrical_power_w[i] * rotors), "pack_loss_w": _f(op.pack_loss_w[i]),
        "thrust_to_weight": None,
    }
    if system.request.all_up_mass_g:
        weight_n = system.request.all_up_mass_g / 1000 * STANDARD_GRAVITY_M_S2
        craft["thrust_to_weight"] = _f(op.thrust_n[i] * rotors / weight_n)
    return {
        "request": request,
        "status": Status(int(op.status[i])).name.lower(),
        **{name: _f(getattr(op, name)[i]) for name in POINT_FIELDS},
        "losses": {name: _f(loss_value(op, where)[i]) for name, where, _ in LOSS_TERMS},
        # the same values under the names of the first API version (kept for scripts that read them)
        "losses_w": {name.removesuffix("_w"): _f(loss_value(op, where)[i]) for name, where, _ in LOSS_TERMS},
        "craft": craft,
        "warnings": _warnings(system, op, i),
    }


def _endurance(system: System) -> dict[str, Any] | None:
    spec = system.request.endurance
    if spec is None:
        return None
    if system.pack is None:
        raise InvalidInput("No endurance on a bench supply", [
            FieldError("endurance", "a stiff bench supply has no capacity; give a pack to simulate a discharge")])
    pack = PackParams(**{**vars(system.pack), "usable_fraction": spec.usable_fraction,
                         "cutoff_voltage_per_cell_v": spec.cutoff_v_per_cell,
                         "peukert_exponent": spec.peukert_exponent})
    start_soc = system.request.battery.state_of_charge
    if spec.power_w is not None:
        result: Any = endurance.constant_power(spec.power_w, pack=pack, initial_state_of_charge=start_soc)
        start = {"bus_voltage_v": _f(np.ravel(result.start_voltage_v)[0]),
                 "bus_current_a": _f(np.ravel(result.start_current_a)[0])}
        end = {"bus_voltage_v": _f(np.ravel(result.end_voltage_v)[0]),
               "bus_current_a": _f(np.ravel(result.end_current_a)[0])}
    else:
        assert spec.thrust_n is not None  # EnduranceIn: exactly one of thrust_n and power_w is given
        result = fast.constant_thrust(spec.thrust_n, pack=pack, initial_state_of_charge=start_soc,
                                      **_flight_kwargs(system, spec.thrust_n))
        start, end = _state(result.start), _state(result.end)
    seconds = _f(np.ravel(result.time_s)[0])
    return {
        "minutes": None if seconds is None else seconds / 60,
        "seconds": seconds,
        "stop_reason": endurance.StopReason(int(np.ravel(result.stop_reason)[0])).name.lower(),
        "final_state_of_charge": _f(np.ravel(result.final_state_of_charge)[0]),
        "start": start,
        "end": end,
    }


def _flight_kwargs(system: System, thrust_n: float) -> dict[str, Any]:
    """The arguments of :func:`server.physics.fast.constant_thrust` besides the thrust, pack and initial SOC."""
    return {"motor": system.motor_params, "esc": system.esc_params, "propeller": system.table,
            "rotor_count": float(system.request.rotor_count), "density_kg_m3": system.density,
            "airspeed_m_s": float(system.airspeed), "flight": system.flight(thrust_n)}


def _state(point: fast.DischargePoint | None) -> dict[str, float | None]:
    assert point is not None  # fast.constant_thrust always reports its start and end
    return {"duty": _f(np.ravel(point.duty)[0]), "bus_voltage_v": _f(np.ravel(point.bus_voltage_v)[0]),
            "bus_current_a": _f(np.ravel(point.pack_current_a)[0]),
            "motor_current_a": _f(np.ravel(point.motor_current_a)[0])}


def _drawn_kwargs(system: System, d: bands.Draws) -> dict[str, Any]:
    """The solver arguments of ``system`` with every uncertain parameter replaced by its draws (axis 0)."""
    kwargs = system.solve_kwargs() | {"motor": d.motor, "esc": d.esc,
                                      "propeller": d.forward if system.airspeed > 0 else d.static}
    if system.pack is not None:
        pack = system.pack
        kwargs["pack_resistance_ohm"] = (pack.cells_series * d.cell_resistance_ohm / pack.cells_parallel
                                         + pack.wiring_resistance_ohm)
    return kwargs


def _flat_draws(system: System, d: bands.Draws) -> dict[str, Any]:
    """The motor, ESC and table of the draws on one flat sample axis (what :mod:`server.physics.system_batch` and
    :func:`server.physics.fast.constant_thrust` take)."""
    table = d.forward if system.airspeed > 0 else d.static
    assert table is not None  # System has resolved the table of this airspeed
    k = table.axis_values.shape[-1]
    return {"motor": MotorParams(*(np.ravel(getattr(d.motor, f.name)) for f in fields(MotorParams))),
            "esc": EscParams(*(np.ravel(getattr(d.esc, f.name)) for f in fields(EscParams))),
            "propeller": PropellerTable(table.diameter_m, np.reshape(table.axis_values, (-1, k)),
                                        np.reshape(table.thrust_coefficient, (-1, k)),
                                        np.reshape(table.power_coefficient, (-1, k)), table.axis)}


def point_bands(system: System, kinds: list[str], values: np.ndarray, d: bands.Draws) -> list[dict[str, Any]]:
    """The 80 % band of electrical power, thrust and motor current (per rotor) at every requested point.

    Thrust points and full throttle go through the screening solver of every draw at once
    (:class:`server.physics.system_batch.SystemBatch`, equal to the reference to rounding); other duties and speeds
    through the reference solver."""
    kinds_arr = np.array(kinds)
    kwargs = _drawn_kwargs(system, d)
    common = {k: v for k, v in _flight_kwargs(system, 0.0).items() if k != "flight"}
    screen = SystemBatch(**common | _flat_draws(system, d), pack_resistance_ohm=np.ravel(kwargs["pack_resistance_ohm"]),
                         batch_shapes=((d.samples,),))
    discrepancy = d.discrepancy.reshape(-1, 1)
    full = (kinds_arr == "throttle") & (values == 1.0)
    out: list[dict[str, Any]] = [{} for _ in kinds]
    for kind, fn in (("full", None), ("throttle", drive.at_duty), ("thrust_n", None), ("rpm", drive.at_rpm)):
        mask = np.flatnonzero(full if kind == "full" else (kinds_arr == kind) & ~full)
        if not mask.size:
            continue
        if fn is None:
            pts = (screen.full_throttle(np.full((1, mask.size), system.open_circuit_v)) if kind == "full" else
                   screen.for_thrust(values[mask][None, :], system.open_circuit_v,
                                     flight=system.flight(values[mask][None, :])))
            solved = pts.reachable & ~pts.data_error
            arrays = (pts.electrical_power_w, pts.thrust_n, pts.motor_current_a)
        else:
            op = fn(values[mask][None, :], **kwargs)
            solved = np.isin(op.status, [Status.OK, Status.OVER_CURRENT])
            arrays = (op.electrical_power_w, op.thrust_n, op.motor_current_a)
        for name, array in zip(("electrical_power_w", "thrust_n", "motor_current_a"), arrays, strict=True):
            if name == "electrical_power_w":
                array = array * discrepancy
            lo, hi = uncertainty.band(np.where(solved, array, np.nan), axis=0)
            for j, i in enumerate(mask):
                out[i][name] = [_f(lo[j]), _f(hi[j])]
    return [{"level": uncertainty.BAND_LEVEL, **b} for b in out]


BAND_SOC_STEP = 0.04
"""SOC step of the discharge of each draw in the endurance band (the central value keeps the reference 0.01): the
trapezoid march's error at 0.04 is far below the band's width (tests/api/test_predict.py holds it)."""


def endurance_band(system: System, d: bands.Draws) -> list[float | None] | None:
    """The 80 % band of the endurance [min] over the same draws (constant thrust or constant power)."""
    spec = system.request.endurance
    if spec is None or system.pack is None:
        return None
    p = system.pack
    samples = d.samples
    k = float(system.request.battery.packs_in_parallel)
    pack = PackParams(cells_series=np.full(samples, float(p.cells_series)), capacity_ah=d.capacity_ah.ravel() * k,
                      cell_resistance_ohm=d.cell_resistance_ohm.ravel(),
                      cells_parallel=np.full(samples, float(p.cells_parallel)),
                      wiring_resistance_ohm=p.wiring_resistance_ohm, full_voltage_per_cell_v=p.full_voltage_per_cell_v,
                      usable_fraction=as_float_array(spec.usable_fraction),
                      cutoff_voltage_per_cell_v=as_float_array(spec.cutoff_v_per_cell),
                      peukert_exponent=as_float_array(spec.peukert_exponent))
    start_soc = system.request.battery.state_of_charge
    if spec.power_w is not None:
        minutes = endurance.constant_power(spec.power_w, pack=pack, initial_state_of_charge=start_soc).time_s / 60
    else:
        assert spec.thrust_n is not None
        result = fast.constant_thrust(spec.thrust_n, pack=pack, initial_state_of_charge=start_soc,
                                      soc_step=BAND_SOC_STEP, current_factor=d.discrepancy.ravel(),
                                      **_flight_kwargs(system, spec.thrust_n) | _flat_draws(system, d))
        minutes = result.time_s / 60
    lo, hi = uncertainty.band(minutes, axis=0)
    return [_f(lo), _f(hi)]


def predict(session: Session | None, team_id: int | None, request: PredictRequest) -> dict[str, Any]:
    """Operating points (request order) and optional endurance for one power system, with their 80 % bands."""
    system = System(session, team_id, request)
    kinds = [p.kind for p in request.points]
    values = np.array([getattr(p, p.kind) for p in request.points], dtype=float)
    op = solve_points(system, kinds, values)
    points = [_point(system, op, i, {kinds[i]: float(values[i])}) for i in range(len(kinds))]
    _flight_points(system, kinds, values, op, points)
    d = bands.draws(system.system)
    for point, b in zip(points, point_bands(system, kinds, values, d), strict=True):
        point["bands"] = b
    warnings = sorted({w for p in points for w in p["warnings"]})
    result = _endurance(system)
    if result is not None:
        result["minutes_band"] = endurance_band(system, d)
    heat = None
    if request.heat is not None:
        heat = winding.heat(system, op, kinds, request.heat.burst_s, request.heat.motor_mass_g, session, team_id)
        warnings = sorted(set(warnings) | set(winding.warnings(heat)))
    return {
        "air_density_kg_m3": system.density,
        "points": points,
        "endurance": result,
        "parameters": system.parameters(),
        "assumed": {kind: r.assumed for kind, r in (("battery", system.battery), ("esc", system.esc),
                                                    ("motor", system.motor), ("propeller", system.prop))},
        "warnings": warnings,
        **({} if heat is None else {"heat": heat}),
    }


def curve(system: System, steps: int = 40) -> dict[str, list[float | None]]:
    """Electrical power and specific thrust versus thrust per rotor over a duty sweep (for charts)."""
    duties = np.linspace(0.15, 1.0, steps)
    op = drive.at_duty(duties, **system.solve_kwargs())
    ok = np.isin(op.status, [Status.OK, Status.OVER_CURRENT]) & (op.thrust_n > 0)  # windmilling in cruise
    return {
        "duty": [float(d) for d in duties[ok]],
        "thrust_n": [float(t) for t in op.thrust_n[ok]],
        "electrical_power_w": [float(p) for p in op.electrical_power_w[ok]],
        "specific_thrust_g_per_w": [float(g) for g in op.specific_thrust_g_per_w[ok]],
        "drive_efficiency": [float(e) for e in op.drive_efficiency[ok]],
    }


def chart_data(system: System, result: dict[str, Any]) -> dict[str, Any]:
    """What the predict page's charts draw: the duty sweep, the requested points and each point's losses."""
    return {
        "curve": curve(system),
        "points": [{"thrust_n": p["thrust_n"], "electrical_power_w": p["electrical_power_w"],
                    "electrical_power_w_band": (p.get("bands") or {}).get("electrical_power_w"),
                    "specific_thrust_g_per_w": p["specific_thrust_g_per_w"], "label": next(iter(p["request"].items()))}
                   for p in result["points"] if p["thrust_n"] is not None],
        "losses": [{"label": f"{k} {v:g}", **p["losses"]} for p in result["points"] for k, v in p["request"].items()],
        "loss_terms": [{"name": name, "label": label} for name, _, label in LOSS_TERMS],
        "winding": _winding_chart(result.get("heat")),
    }


def _winding_chart(heat: dict[str, Any] | None) -> dict[str, Any] | None:
    """The burst's winding temperature against time, with the motor's maximum (None without a burst)."""
    if not heat or not heat.get("burst"):
        return None
    curve = heat["burst"]["curve"]
    return {"t_s": curve["t_s"], "temperature_c": curve["temperature_c"], "limit_c": heat["max_winding_temperature_c"],
            "air_c": heat["air_temperature_c"]}
