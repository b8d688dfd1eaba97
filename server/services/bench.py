"""Bench runs: import (validate, flag, store), calibrate pooled by ESC, read back with derived quantities."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from sqlalchemy import or_, select, update
from sqlalchemy.orm import Session

from server.bench.csv_format import BenchCsvError, BenchSamples, parse_bench_csv
from server.bench.derived import derive_samples, run_air_density_kg_m3
from server.bench.flags import REASON_TEXT, flag_samples
from server.errors import FieldError, InvalidInput, NotFound
from server.models import BenchRun, BenchSample, Calibration, Esc, Motor, Propeller
from server.physics import ENGINE_VERSION, drive
from server.physics._types import Status
from server.physics.calibrate import JointFit, MotorPrior, RunData, fit_joint
from server.physics.esc import EscParams
from server.schemas.bench import BenchRunMeta
from server.services import parts as parts_service
from server.services import power_system as ps

INCH_M = 0.0254
MIN_SAMPLES_TO_FIT = 4


def parse(raw: bytes) -> BenchSamples:
    try:
        return parse_bench_csv(raw)
    except BenchCsvError as exc:
        raise exc.as_invalid_input() from None


def _check_parts(session: Session, team_id: int, meta: BenchRunMeta) -> None:
    errors: list[FieldError] = []
    for kind, field, part_id in (("motors", "motor_id", meta.motor_id), ("propellers", "propeller_id",
                                 meta.propeller_id), ("escs", "esc_id", meta.esc_id), ("batteries", "pack_id",
                                 meta.pack_id)):
        if part_id is None:
            continue
        try:
            parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
        except NotFound as exc:
            errors.append(FieldError(field, exc.detail))
    if errors:
        raise InvalidInput("Unknown parts", errors)


def preview(session: Session, *, team_id: int, meta: BenchRunMeta, raw: bytes) -> dict[str, Any]:
    """What an upload would store (samples, flags, derived values) without storing anything."""
    _check_parts(session, team_id, meta)
    samples = parse(raw)
    flags = flag_samples(samples.throttle, samples.bus_voltage_v, samples.bus_current_a, samples.rpm,
                         samples.thrust_n)
    return {"samples": _sample_dicts(session, team_id, meta.propeller_id, _density(meta), samples, flags.reasons),
            "flagged": flags.count}


def _density(meta: BenchRunMeta | BenchRun) -> float:
    return run_air_density_kg_m3(altitude_m=meta.altitude_m, pressure_pa=meta.air_pressure_pa,
                                 air_temperature_c=meta.air_temperature_c)


def _sample_dicts(session: Session, team_id: int, propeller_id: int, density: float, s: Any,
                  reasons: Any) -> list[dict[str, Any]]:
    prop = parts_service.get_part(session, team_id=team_id, kind="propellers", part_id=propeller_id)
    torque = getattr(s, "torque_nm", None)
    derived = derive_samples(bus_voltage_v=s.bus_voltage_v, bus_current_a=s.bus_current_a, rpm=s.rpm,
                             thrust_n=s.thrust_n, diameter_m=prop.diameter_in * INCH_M, density_kg_m3=density,
                             torque_nm=torque)

    def num(a: Any, i: int) -> float | None:
        if a is None:
            return None
        v = float(np.asarray(a)[i])
        return v if math.isfinite(v) else None

    out = []
    for i in range(len(s.throttle)):
        out.append({
            "throttle": num(s.throttle, i), "bus_voltage_v": num(s.bus_voltage_v, i),
            "bus_current_a": num(s.bus_current_a, i), "rpm": num(s.rpm, i), "thrust_n": num(s.thrust_n, i),
            "torque_nm": num(torque, i), "temperature_c": num(getattr(s, "temperature_c", None), i),
            "flag": ",".join(str(r) for r in reasons[i]) or None,
            "flag_text": "; ".join(REASON_TEXT[r] for r in reasons[i]) or None,
            "air_density_kg_m3": num(derived.density_kg_m3, i),
            "electrical_power_w": num(derived.electrical_power_w, i),
            "thrust_coefficient": num(derived.thrust_coefficient, i),
            "power_coefficient": num(derived.power_coefficient, i),
            "shaft_power_w": num(derived.shaft_power_w, i), "drive_efficiency": num(derived.drive_efficiency, i),
            "specific_thrust_g_per_w": num(derived.specific_thrust_g_per_w, i),
        })
    return out


def import_run(session: Session, *, team_id: int, user_id: int | None, meta: BenchRunMeta, raw: bytes,
               filename: str = "") -> tuple[BenchRun, dict[str, Any]]:
    """Store a validated run with its flagged samples and calibrate the parts it shares runs with.

    The run and its samples are one transaction with the calibration; a calibration that cannot be fitted
    (too few usable samples) is reported, not fatal.
    """
    _check_parts(session, team_id, meta)
    samples = parse(raw)
    flags = flag_samples(samples.throttle, samples.bus_voltage_v, samples.bus_current_a, samples.rpm,
                         samples.thrust_n)
    run = BenchRun(team_id=team_id, created_by_id=user_id, filename=filename[:255],
                   air_density_kg_m3=_density(meta), sample_count=len(samples.throttle), flagged_count=flags.count,
                   **meta.model_dump())
    if not run.name:
        run.name = filename or "bench run"
    session.add(run)
    session.flush()
    torque = samples.torque_nm
    temperature = samples.temperature_c
    session.add_all(BenchSample(
        run_id=run.id, position=i, throttle=float(samples.throttle[i]), bus_voltage_v=float(samples.bus_voltage_v[i]),
        bus_current_a=float(samples.bus_current_a[i]), rpm=float(samples.rpm[i]), thrust_n=float(samples.thrust_n[i]),
        torque_nm=None if torque is None else float(torque[i]),
        temperature_c=None if temperature is None else float(temperature[i]),
        flag=",".join(str(r) for r in flags.reasons[i]) or None,
    ) for i in range(len(samples.throttle)))
    session.flush()
    return run, calibrate_esc(session, team_id=team_id, esc_id=run.esc_id)


def _run_data(run: BenchRun, diameter_in: float) -> RunData | None:
    usable = [s for s in run.samples if s.flag is None]
    if len(usable) < MIN_SAMPLES_TO_FIT:
        return None
    prop = run.propeller_id
    torque = [s.torque_nm for s in usable]
    has_torque = all(t is not None for t in torque)
    return RunData(
        motor_id=str(run.motor_id), propeller_id=str(prop), diameter_m=diameter_in * INCH_M,
        density_kg_m3=run.air_density_kg_m3, bus_voltage_v=np.array([s.bus_voltage_v for s in usable]),
        bus_current_a=np.array([s.bus_current_a for s in usable]), rpm=np.array([s.rpm for s in usable]),
        thrust_n=np.array([s.thrust_n for s in usable]), throttle=np.array([s.throttle for s in usable]),
        torque_nm=np.array(torque, dtype=float) if has_torque else None,
        duty_offset=run.throttle_offset, duty_slope=run.throttle_scale,
    )


def _param(p: Any) -> dict[str, Any]:
    return {"value": _clean(p.value), "stderr": _clean(p.standard_error), "status": p.status, "unit": p.unit,
            "source": p.source}


def _clean(v: float) -> float | None:
    return float(v) if math.isfinite(v) else None


def _store(session: Session, *, team_id: int, kind: str, part_id: int, parameters: dict[str, Any],
           fit: Any, run_ids: list[int], notes: str) -> Calibration:
    session.execute(update(Calibration).where(Calibration.team_id == team_id, Calibration.part_kind == kind,
                                              Calibration.part_id == part_id).values(active=False))
    notes = "; ".join(dict.fromkeys(n.strip() for n in notes.split(";") if n.strip()))  # each note once
    row = Calibration(team_id=team_id, part_kind=kind, part_id=part_id, parameters=parameters,
                      residual_rms=_clean(fit.residual_rms), residual_unit="relative", sample_count=fit.samples_used,
                      run_ids=run_ids, notes=notes, engine_version=ENGINE_VERSION, active=True)
    session.add(row)
    return row


def calibrate_esc(session: Session, *, team_id: int, esc_id: int) -> dict[str, Any]:
    """Pooled fit over every run of the team that used this ESC (any motor, propeller and voltage)."""
    runs = list(session.scalars(select(BenchRun).where(BenchRun.team_id == team_id, BenchRun.esc_id == esc_id)
                                .order_by(BenchRun.id)))
    esc = session.get(Esc, esc_id)
    assert esc is not None
    data = []
    for run in runs:
        prop = session.get(Propeller, run.propeller_id)
        assert prop is not None
        rd = _run_data(run, prop.diameter_in)
        if rd is not None:
            data.append((run, rd))
    if not data:
        return {"calibrations": [], "error": f"no run of this ESC has {MIN_SAMPLES_TO_FIT} usable samples yet"}
    esc_values, _ = ps.from_part(session, team_id, "escs", esc, ps.ESC_FIELDS, use_calibration=False)
    base = ps.esc_params(ps.Resolved("escs", {**ps.ESC_DEFAULTS, **{k: v for k, v in esc_values.items()
                                                                     if v is not None}}))
    priors = {}
    for motor_id in {r.motor_id for r, _ in data}:
        motor = session.get(Motor, motor_id)
        assert motor is not None
        priors[str(motor_id)] = MotorPrior(motor.kv_rpm_per_v, motor.winding_resistance_ohm,
                                           motor.no_load_current_a)
    try:
        fit = fit_joint([rd for _, rd in data], esc=base, motor_priors=priors)
    except (ValueError, np.linalg.LinAlgError) as exc:
        return {"calibrations": [], "error": f"the fit did not converge: {exc}"}
    run_ids = [r.id for r, _ in data]
    notes = "; ".join(fit.notes)
    stored = [_store_esc(session, team_id, esc_id, fit, run_ids, notes)]
    for motor_key, mfit in fit.motors.items():
        stored.append(_store_motor(session, team_id, int(motor_key), fit, mfit, run_ids, notes))
    for prop_id, pfit in fit.propellers.items():
        stored.append(_store_propeller(session, team_id, int(prop_id), pfit, run_ids, notes))
    session.flush()
    return {"calibrations": [calibration_dict(c) for c in stored], "error": None}


def _store_esc(session: Session, team_id: int, esc_id: int, fit: JointFit, run_ids: list[int],
               notes: str) -> Calibration:
    assert fit.esc is not None
    p = fit.esc.parameters
    params = {"k_pwm": _param(p["pwm_loss_coefficient"]), "r_on_path_ohm": _param(p["on_path_resistance_ohm"])}
    return _store(session, team_id=team_id, kind="escs", part_id=esc_id, parameters=params, fit=fit,
                  run_ids=run_ids, notes="; ".join([notes, *fit.esc.notes]).strip("; "))


def _store_motor(session: Session, team_id: int, motor_id: int, fit: JointFit, mfit: Any, run_ids: list[int],
                 notes: str) -> Calibration:
    assert fit.esc is not None
    on_path = fit.esc.value("on_path_resistance_ohm")
    p = mfit.parameters
    winding = dict(_param(p["resistance_ohm"]))
    if winding["value"] is not None:
        winding["value"] = winding["value"] - on_path  # the fit's R includes the ESC's conduction path
    params = {"kv_rpm_per_v": _param(p["kv_rpm_per_v"]), "winding_resistance_ohm": winding,
              "no_load_current_a": _param(p["no_load_current_a"])}
    for value in params.values():
        if value["source"] == "start":  # a starting guess is not a measurement
            value["status"] = "fixed"
    return _store(session, team_id=team_id, kind="motors", part_id=motor_id, parameters=params, fit=mfit,
                  run_ids=run_ids, notes="; ".join([notes, *mfit.notes]).strip("; "))


def _store_propeller(session: Session, team_id: int, prop_id: int, pfit: Any, run_ids: list[int],
                     notes: str) -> Calibration:
    rows = [{"rpm": float(r), "ct": float(ct), "cp": float(cp)}
            for r, ct, cp in zip(pfit.rpm, pfit.thrust_coefficient, pfit.power_coefficient, strict=True)]
    identified = all(p.status == "identified" for p in pfit.parameters.values()) and all(
        math.isfinite(r["cp"]) and r["cp"] > 0 and r["ct"] > 0 for r in rows)
    params = {"static_table": {
        "value": rows if identified else [r for r in rows if math.isfinite(r["cp"])],
        "stderr": {name: _clean(p.standard_error) for name, p in pfit.parameters.items()},
        "status": "identified" if identified else "fixed", "unit": "", "source": "fit",
    }}
    return _store(session, team_id=team_id, kind="propellers", part_id=prop_id, parameters=params, fit=pfit,
                  run_ids=run_ids, notes="; ".join([notes, *pfit.notes]).strip("; "))


def calibrate_part(session: Session, *, team_id: int, kind: str, part_id: int) -> dict[str, Any]:
    """Re-fit every ESC pool this part's runs belong to; returns the part's new calibration."""
    parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
    column = {"escs": BenchRun.esc_id, "motors": BenchRun.motor_id, "propellers": BenchRun.propeller_id}.get(kind)
    if column is None:
        raise InvalidInput("Not calibrated", [FieldError("kind", "only ESCs, motors and propellers are calibrated")])
    escs = sorted(set(session.scalars(select(BenchRun.esc_id).where(BenchRun.team_id == team_id,
                                                                    column == part_id))))
    if not escs:
        raise InvalidInput("No bench runs", [FieldError("part_id", "no bench run uses this part yet")])
    errors = [r["error"] for r in (calibrate_esc(session, team_id=team_id, esc_id=e) for e in escs) if r["error"]]
    current = latest(session, team_id=team_id, kind=kind, part_id=part_id)
    return {"calibration": calibration_dict(current) if current else None, "errors": errors}


def latest(session: Session, *, team_id: int, kind: str, part_id: int) -> Calibration | None:
    return session.scalar(select(Calibration).where(Calibration.team_id == team_id, Calibration.part_kind == kind,
                                                    Calibration.part_id == part_id)
                          .order_by(Calibration.id.desc()))


def list_calibrations(session: Session, *, team_id: int, kind: str, part_id: int) -> list[Calibration]:
    return list(session.scalars(select(Calibration).where(Calibration.team_id == team_id,
                                                          Calibration.part_kind == kind,
                                                          Calibration.part_id == part_id)
                                .order_by(Calibration.id.desc())))


def set_active(session: Session, *, team_id: int, calibration_id: int, active: bool) -> Calibration:
    """The "use this calibration" switch: one active calibration per part at most."""
    row = session.scalar(select(Calibration).where(Calibration.id == calibration_id, Calibration.team_id == team_id))
    if row is None:
        raise NotFound(f"No calibration with id {calibration_id}")
    if active:
        session.execute(update(Calibration).where(Calibration.team_id == team_id,
                                                  Calibration.part_kind == row.part_kind,
                                                  Calibration.part_id == row.part_id).values(active=False))
    row.active = active
    session.flush()
    return row


def calibration_dict(row: Calibration) -> dict[str, Any]:
    return {"id": row.id, "part_kind": row.part_kind, "part_id": row.part_id, "parameters": row.parameters,
            "residual_rms": row.residual_rms, "residual_unit": row.residual_unit, "sample_count": row.sample_count,
            "run_ids": row.run_ids, "notes": row.notes, "engine_version": row.engine_version, "active": row.active,
            "created_at": row.created_at}


def get_run(session: Session, *, team_id: int, run_id: int) -> BenchRun:
    row = session.scalar(select(BenchRun).where(BenchRun.id == run_id, BenchRun.team_id == team_id))
    if row is None:
        raise NotFound(f"No bench run with id {run_id}")
    return row


def list_runs(session: Session, *, team_id: int, part_kind: str | None = None,
              part_id: int | None = None) -> list[BenchRun]:
    stmt = select(BenchRun).where(BenchRun.team_id == team_id)
    if part_id is not None:
        column = {"motors": BenchRun.motor_id, "propellers": BenchRun.propeller_id, "escs": BenchRun.esc_id,
                  "batteries": BenchRun.pack_id}.get(part_kind or "")
        stmt = stmt.where(column == part_id) if column is not None else stmt.where(or_(
            BenchRun.motor_id == part_id, BenchRun.propeller_id == part_id, BenchRun.esc_id == part_id))
    return list(session.scalars(stmt.order_by(BenchRun.id.desc())))


def delete_run(session: Session, *, team_id: int, run_id: int) -> None:
    session.delete(get_run(session, team_id=team_id, run_id=run_id))
    session.flush()


def run_summary(row: BenchRun) -> dict[str, Any]:
    return {c: getattr(row, c) for c in (
        "id", "name", "motor_id", "propeller_id", "esc_id", "pack_id", "supply_voltage_v", "altitude_m",
        "air_temperature_c", "air_pressure_pa", "throttle_offset", "throttle_scale", "air_density_kg_m3",
        "filename", "notes", "sample_count", "flagged_count", "created_at")}


def run_detail(session: Session, *, team_id: int, run_id: int) -> dict[str, Any]:
    """The run, every sample with its derived quantities and flag, the model at each sample, calibrations."""
    run = get_run(session, team_id=team_id, run_id=run_id)
    samples = run.samples

    class _S:
        throttle = np.array([s.throttle for s in samples])
        bus_voltage_v = np.array([s.bus_voltage_v for s in samples])
        bus_current_a = np.array([s.bus_current_a for s in samples])
        rpm = np.array([s.rpm for s in samples])
        thrust_n = np.array([s.thrust_n for s in samples])
        torque_nm = (None if any(s.torque_nm is None for s in samples)
                     else np.array([s.torque_nm for s in samples], dtype=float))
        temperature_c = (None if any(s.temperature_c is None for s in samples)
                         else np.array([s.temperature_c for s in samples], dtype=float))

    reasons = [tuple(s.flag.split(",")) if s.flag else () for s in samples]
    rows = _sample_dicts(session, team_id, run.propeller_id, run.air_density_kg_m3, _S, [
        tuple(_reason(r) for r in rs) for rs in reasons])
    model = model_at_samples(session, team_id=team_id, run=run)
    for row, predicted in zip(rows, model, strict=True):
        row.update(predicted)
    calibrations = {kind: latest(session, team_id=team_id, kind=kind, part_id=pid)
                    for kind, pid in (("escs", run.esc_id), ("motors", run.motor_id),
                                      ("propellers", run.propeller_id))}
    return {"run": run_summary(run), "samples": rows,
            "calibrations": {k: calibration_dict(c) if c else None for k, c in calibrations.items()}}


def _reason(code: str) -> Any:
    from server.bench.flags import FlagReason

    return FlagReason(code)


def model_at_samples(session: Session, *, team_id: int, run: BenchRun) -> list[dict[str, Any]]:
    """Electrical power and current the (calibrated) model predicts at each sample's thrust and bus voltage."""
    n = len(run.samples)
    empty: list[dict[str, float | None]] = [
        {"model_electrical_power_w": None, "model_bus_current_a": None, "residual_power": None}] * n
    try:
        resolved = {}
        for kind, pid, fields, defaults in (("escs", run.esc_id, ps.ESC_FIELDS, ps.ESC_DEFAULTS),
                                            ("motors", run.motor_id, ps.MOTOR_FIELDS, ps.MOTOR_DEFAULTS),
                                            ("propellers", run.propeller_id, ps.PROP_FIELDS, {})):
            part = parts_service.get_part(session, team_id=team_id, kind=kind, part_id=pid)
            values, sources = ps.from_part(session, team_id, kind, part, fields)
            for name, value in defaults.items():
                values.setdefault(name, value)
                if values[name] is None:
                    values[name] = value
            resolved[kind] = ps.Resolved(kind, values, sources)
        motor = ps.motor_params(resolved["motors"])
        esc: EscParams = ps.esc_params(resolved["escs"])
        static, _ = ps.propeller_tables(resolved["propellers"])
    except InvalidInput:
        return empty
    thrust = np.array([s.thrust_n for s in run.samples])
    voltage = np.array([s.bus_voltage_v for s in run.samples])
    measured = voltage * np.array([s.bus_current_a for s in run.samples])
    op = drive.for_thrust(thrust, motor=motor, esc=esc, propeller=static, open_circuit_voltage_v=voltage,
                          density_kg_m3=run.air_density_kg_m3)
    ok = np.isin(op.status, [Status.OK, Status.OVER_CURRENT]) & (thrust > 0)
    out: list[dict[str, float | None]] = []
    for i in range(n):
        if not ok.flat[i]:
            out.append(empty[0])
            continue
        power = float(op.electrical_power_w.flat[i])
        out.append({"model_electrical_power_w": power, "model_bus_current_a": float(op.bus_current_a.flat[i]),
                    "residual_power": (power - measured[i]) / measured[i] if measured[i] > 0 else None})
    return out
