"""Bench runs: import (validate, flag, store, then calibrate), list, read back with derived quantities and the model."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from sqlalchemy import insert, or_, select
from sqlalchemy.orm import Session

from server.bench_runs.csv_format import BenchCsvError, BenchSamples, parse_bench_csv
from server.bench_runs.derived import derive_samples, run_air_density_kg_m3
from server.bench_runs.flags import REASON_TEXT, flag_samples
from server.errors import FieldError, InvalidInput, NotFound
from server.models import BenchRun, BenchSample
from server.physics import drive
from server.physics._types import Status
from server.physics.esc import EscParams
from server.schemas.bench_runs import BenchRunMeta
from server.services import calibration_report, calibrations, refits
from server.services import parts as parts_service
from server.services import power_system as ps

INCH_M = 0.0254


def parse(raw: bytes, thrust_sign: int = 1) -> BenchSamples:
    try:
        return parse_bench_csv(raw, thrust_sign=thrust_sign)
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
    samples = parse(raw, meta.thrust_sign)
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


def store_run(session: Session, *, team_id: int, user_id: int | None, meta: BenchRunMeta, raw: bytes,
              filename: str = "") -> tuple[BenchRun, dict[str, int]]:
    """Validate (all or nothing), flag and store a run with its samples; returns it and its flag counts.

    The samples go in as one bulk insert; calibration is not done here (see :mod:`server.services.refits`).
    """
    _check_parts(session, team_id, meta)
    samples = parse(raw, meta.thrust_sign)
    flags = flag_samples(samples.throttle, samples.bus_voltage_v, samples.bus_current_a, samples.rpm,
                         samples.thrust_n)
    run = BenchRun(team_id=team_id, created_by_id=user_id, filename=filename[:255],
                   air_density_kg_m3=_density(meta), sample_count=len(samples.throttle), flagged_count=flags.count,
                   **meta.model_dump())
    if not run.name:
        run.name = filename or "bench run"
    session.add(run)
    session.flush()
    torque, temperature = samples.torque_nm, samples.temperature_c
    columns = {"throttle": samples.throttle.tolist(), "bus_voltage_v": samples.bus_voltage_v.tolist(),
               "bus_current_a": samples.bus_current_a.tolist(), "rpm": samples.rpm.tolist(),
               "thrust_n": samples.thrust_n.tolist(),
               "torque_nm": [None] * len(samples) if torque is None else torque.tolist(),
               "temperature_c": [None] * len(samples) if temperature is None else temperature.tolist()}
    counts: dict[str, int] = {}
    rows = []
    for i in range(len(samples)):
        flag = ",".join(str(r) for r in flags.reasons[i]) or None
        for reason in flags.reasons[i]:
            counts[str(reason)] = counts.get(str(reason), 0) + 1
        rows.append({"run_id": run.id, "position": i, "flag": flag, **{k: v[i] for k, v in columns.items()}})
    session.execute(insert(BenchSample), rows)
    return run, counts


def import_run(session: Session, *, team_id: int, user_id: int | None, meta: BenchRunMeta, raw: bytes,
               filename: str = "") -> tuple[BenchRun, dict[str, Any]]:
    """Store a run and calibrate its ESC's pool in the same transaction (the CLI and the demo loader; the web
    stores, commits and queues a refit job instead). A calibration that cannot be fitted is reported, not fatal."""
    run, _ = store_run(session, team_id=team_id, user_id=user_id, meta=meta, raw=raw, filename=filename)
    return run, calibrations.calibrate_esc(session, team_id=team_id, esc_id=run.esc_id)


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
        "air_temperature_c", "air_pressure_pa", "throttle_offset", "throttle_scale", "thrust_sign", "air_density_kg_m3",
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
    latest = {kind: calibrations.latest(session, team_id=team_id, kind=kind, part_id=pid)
                    for kind, pid in (("escs", run.esc_id), ("motors", run.motor_id),
                                      ("propellers", run.propeller_id))}
    refit = refits.latest_for(session, team_id=team_id, esc_id=run.esc_id)
    return {"run": run_summary(run), "samples": rows,
            "calibrations": {k: calibrations.calibration_dict(c) if c else None for k, c in latest.items()},
            "refit": refits.status(session, refit) if refit else None,
            "calibration_changes": calibration_report.pool_changes(session, team_id=team_id, esc_id=run.esc_id)}


def _reason(code: str) -> Any:
    from server.bench_runs.flags import FlagReason

    return FlagReason(code)


def model_at_samples(session: Session, *, team_id: int, run: BenchRun) -> list[dict[str, Any]]:
    """Electrical power and current the (calibrated) model predicts at each sample's thrust and bus voltage."""
    n = len(run.samples)
    empty: list[dict[str, float | None]] = [
        {"model_electrical_power_w": None, "model_bus_current_a": None, "residual_power": None}] * n
    get = parts_service.get_part
    try:
        esc_part = get(session, team_id=team_id, kind="escs", part_id=run.esc_id)
        motor_part = get(session, team_id=team_id, kind="motors", part_id=run.motor_id)
        prop_part = get(session, team_id=team_id, kind="propellers", part_id=run.propeller_id)
        esc: EscParams = ps.esc_params(ps.resolve_part(session, team_id, "escs", esc_part))
        motor = ps.motor_params(ps.resolve_part(session, team_id, "motors", motor_part))
        static, _ = ps.propeller_tables(ps.resolve_part(session, team_id, "propellers", prop_part))
    except InvalidInput:
        return empty
    thrust = np.array([s.thrust_n for s in run.samples])
    voltage = np.array([s.bus_voltage_v for s in run.samples])
    measured = voltage * np.array([s.bus_current_a for s in run.samples])
    # only positive thrust has an operating point (an idle sample may read slightly negative: a load-cell offset)
    op = drive.for_thrust(np.where(thrust > 0, thrust, np.nan), motor=motor, esc=esc, propeller=static,
                          open_circuit_voltage_v=voltage, density_kg_m3=run.air_density_kg_m3)
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
