"""Calibrations: pooled fits over a team's bench runs (per ESC), stored per part with standard errors, and the
"use this calibration" switch."""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from typing import Any

import numpy as np
from sqlalchemy import select, update
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput, NotFound
from server.models import BenchRun, Calibration, Esc, Motor, Propeller
from server.physics import ENGINE_VERSION, thermal
from server.physics._types import RAD_S_PER_RPM
from server.physics.calibrate import POOL_SAMPLE_LIMIT, JointFit, MotorPrior, RunData, fit_joint, thinned
from server.services import parts as parts_service
from server.services import power_system as ps
from server.services.calibration_report import parameter_changes, pool_latest

INCH_M = 0.0254
MIN_SAMPLES_TO_FIT = 4


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


def _covariance(report: Any, names: dict[str, str] | None = None) -> dict[str, Any] | None:
    """A fit's covariance as stored: {"names": [stored parameter names], "matrix": [[...]]} (finite only)."""
    if report.covariance is None:
        return None
    fit_names, matrix = report.covariance
    matrix = np.asarray(matrix, dtype=np.float64)
    if not fit_names or not np.all(np.isfinite(matrix)):
        return None
    return {"names": [(names or {}).get(n, n) for n in fit_names], "matrix": matrix.tolist()}


def _store(session: Session, *, team_id: int, kind: str, part_id: int, parameters: dict[str, Any],
           fit: Any, run_ids: list[int], notes: str, covariance: dict[str, Any] | None = None) -> Calibration:
    session.execute(update(Calibration).where(Calibration.team_id == team_id, Calibration.part_kind == kind,
                                              Calibration.part_id == part_id).values(active=False))
    notes = "; ".join(dict.fromkeys(n.strip() for n in notes.split(";") if n.strip()))  # each note once
    row = Calibration(team_id=team_id, part_kind=kind, part_id=part_id, parameters=parameters,
                      residual_rms=_clean(fit.residual_rms), residual_unit="relative", sample_count=fit.samples_used,
                      run_ids=run_ids, notes=notes, engine_version=ENGINE_VERSION, active=True,
                      covariance=covariance)
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
    # The fit starts from the ESC's own entered values (not its previous calibration), defaults for the rest.
    base = ps.esc_params(ps.resolve_part(session, team_id, "escs", esc, use_calibration=False))
    priors = {}
    for motor_id in {r.motor_id for r, _ in data}:
        motor = session.get(Motor, motor_id)
        assert motor is not None
        priors[str(motor_id)] = MotorPrior(motor.kv_rpm_per_v, motor.winding_resistance_ohm,
                                           motor.no_load_current_a)
    pool, stride = thinned([rd for _, rd in data], POOL_SAMPLE_LIMIT)
    try:
        fit = fit_joint(pool, esc=base, motor_priors=priors)
    except (ValueError, np.linalg.LinAlgError) as exc:
        return {"calibrations": [], "error": f"the fit did not converge: {exc}"}
    run_ids = [r.id for r, _ in data]
    before = {(c.part_kind, c.part_id): c for c in pool_latest(session, team_id, esc_id)}
    stored = [_store_esc(session, team_id, esc, fit, run_ids)]
    for motor_key, mfit in fit.motors.items():
        heat = _thermal_resistance(mfit, fit.esc.value("on_path_resistance_ohm") if fit.esc else 0.0,
                                   [run for run, _ in data if run.motor_id == int(motor_key)])
        stored.append(_store_motor(session, team_id, int(motor_key), fit, mfit, run_ids, heat))
    for prop_id, pfit in fit.propellers.items():
        stored.append(_store_propeller(session, team_id, int(prop_id), pfit, run_ids))
    if stride > 1:  # the pool was thinned to bound the refit's cost: say so under every part it calibrated
        total = sum(int(rd.rpm.size) for _, rd in data)
        for calibration in stored:
            note = (f"fitted on every {stride}th sample of each run (and every full-throttle sample): the pool's "
                    f"{total} samples exceed the {POOL_SAMPLE_LIMIT} a refit uses")
            calibration.notes = f"{calibration.notes}; {note}" if calibration.notes else note
    session.flush()
    changes = [change for c in stored if (c.part_kind, c.part_id) in before
               for change in parameter_changes(before[(c.part_kind, c.part_id)], c)]
    return {"calibrations": [calibration_dict(c) for c in stored], "error": None, "changes": changes}


# The fit's parameter names in words, for the notes people read under each part.
FIT_WORDS = {"kv_rpm_per_v": "Kv", "resistance_ohm": "winding resistance R", "no_load_current_a": "no-load current I0",
             "pwm_loss_coefficient": "k_pwm", "on_path_resistance_ohm": "conduction resistance R_on",
             "(datasheet)": "(the part's entered value)", "(default)": "(the engine default)",
             "(start)": "(a starting guess)"}


def plain_notes(notes: Sequence[str], **replace: str) -> str:
    """The fit's notes about one part, without the owner prefix ("4:", "esc:") and with names in words."""
    out = []
    for note in notes:
        text = re.sub(r"^(esc|\d+):", "", note.strip())
        for raw, words in sorted((FIT_WORDS | replace).items(), key=lambda kv: -len(kv[0])):  # longest name first
            text = text.replace(raw, words)
        out.append(text[:1].upper() + text[1:])
    return "; ".join(dict.fromkeys(n for n in out if n))


def _store_esc(session: Session, team_id: int, esc: Esc, fit: JointFit, run_ids: list[int]) -> Calibration:
    assert fit.esc is not None
    p = fit.esc.parameters
    params = {"k_pwm": _param(p["pwm_loss_coefficient"]), "r_on_path_ohm": _param(p["on_path_resistance_ohm"])}
    entered = {name: getattr(esc, name) is not None for name in params}
    for name, value in params.items():  # a value kept from the ESC's own entry is the part's, not a default
        if value["status"] == "fixed" and entered[name]:
            value["source"] = "part"
    words = {"kept at its default": "kept at the ESC's entered value"} if entered["r_on_path_ohm"] else {}
    return _store(session, team_id=team_id, kind="escs", part_id=esc.id, parameters=params, fit=fit,
                  run_ids=run_ids, notes=plain_notes(fit.esc.notes, **words),
                  covariance=_covariance(fit.esc, {"pwm_loss_coefficient": "k_pwm",
                                                   "on_path_resistance_ohm": "r_on_path_ohm"}))


MIN_TEMPERATURE_SAMPLES = 3
"""Bench samples with a winding temperature (and a run air temperature) needed to fit R_th."""


def _thermal_resistance(mfit: Any, on_path_ohm: float, runs: list[BenchRun]) -> dict[str, Any] | None:
    """R_th ± standard error from the motor's bench samples that carry ``temperature_c`` (settled steps assumed),
    with the loss from the motor's fitted Kv, winding R (the fit's R less the ESC's conduction path, taken as the
    20 °C value) and I0 (docs/model-reference.md#heat); None without such samples."""
    rise, loss = [], []
    kv, resistance, no_load = (mfit.value(n) for n in ("kv_rpm_per_v", "resistance_ohm", "no_load_current_a"))
    resistance -= on_path_ohm
    for run in runs:
        if run.air_temperature_c is None:
            continue
        samples = [s for s in run.samples if s.flag is None and s.temperature_c is not None]
        if not samples:
            continue
        duty = np.clip(run.throttle_offset + run.throttle_scale * np.array([s.throttle for s in samples]), 0.0, 1.0)
        keep = duty >= thermal.BENCH_MIN_DUTY
        temperature = np.array([s.temperature_c for s in samples])[keep]
        loss.append(thermal.bench_winding_loss_w(
            np.array([s.bus_current_a for s in samples])[keep], duty[keep],
            np.array([s.rpm for s in samples])[keep] * RAD_S_PER_RPM, kv, resistance, no_load, temperature))
        rise.append(temperature - run.air_temperature_c)
    if not rise or sum(len(r) for r in rise) < MIN_TEMPERATURE_SAMPLES:
        return None
    value, stderr = thermal.fit_thermal_resistance(np.concatenate(rise), np.concatenate(loss))
    if not (math.isfinite(value) and value > 0):
        return None
    return {"value": value, "stderr": _clean(stderr), "status": "identified", "unit": "K/W", "source": "fit"}


def _store_motor(session: Session, team_id: int, motor_id: int, fit: JointFit, mfit: Any,
                 run_ids: list[int], heat: dict[str, Any] | None = None) -> Calibration:
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
    notes = plain_notes(mfit.notes)
    if heat is not None:
        params["thermal_resistance_k_per_w"] = heat
        notes += "; thermal resistance fitted to the winding temperatures of the bench runs"
    return _store(session, team_id=team_id, kind="motors", part_id=motor_id, parameters=params, fit=mfit,
                  run_ids=run_ids, notes=notes,
                  covariance=_covariance(mfit, {"resistance_ohm": "winding_resistance_ohm"}))


def _store_propeller(session: Session, team_id: int, prop_id: int, pfit: Any, run_ids: list[int]) -> Calibration:
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
                  run_ids=run_ids, notes=plain_notes(pfit.notes),
                  covariance=_covariance(pfit) if identified else None)


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


def by_ids(session: Session, *, team_id: int, ids: list[int]) -> list[Calibration]:
    if not ids:
        return []
    return list(session.scalars(select(Calibration).where(Calibration.team_id == team_id, Calibration.id.in_(ids))
                                .order_by(Calibration.id)))


def list_calibrations(session: Session, *, team_id: int, kind: str, part_id: int) -> list[Calibration]:
    return list(session.scalars(select(Calibration).where(Calibration.team_id == team_id,
                                                          Calibration.part_kind == kind,
                                                          Calibration.part_id == part_id)
                                .order_by(Calibration.id.desc())))


def get(session: Session, *, team_id: int, calibration_id: int) -> Calibration:
    row = session.scalar(select(Calibration).where(Calibration.id == calibration_id, Calibration.team_id == team_id))
    if row is None:
        raise NotFound(f"No calibration with id {calibration_id}")
    return row


def set_active(session: Session, *, team_id: int, calibration_id: int, active: bool) -> Calibration:
    """The "use this calibration" switch: one active calibration per part at most."""
    row = get(session, team_id=team_id, calibration_id=calibration_id)
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
            "created_at": row.created_at, "covariance": row.covariance}
