"""Export a team's whole library as JSON and import it into a team (lossless; all or nothing).

The library is: parts of every kind (archived ones too), airframes, missions, bench runs with their samples, and
calibrations. Ids are replaced by references local to the file (``ref``), so a file imports into any team.
Rankings and shortlists are results, not library, and are not exported.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.errors import FieldError, InvalidInput
from server.models import PART_MODELS, Airframe, BenchRun, BenchSample, Calibration, Mission
from server.schemas.bench_runs import BenchRunMeta
from server.schemas.missions import AirframeCreate, MissionCreate
from server.schemas.parts import CREATE_SCHEMAS
from server.services import parts as parts_service
from server.services._validation import field_errors

FORMAT = "liftmatch-library"
VERSION = 1
SAMPLE_FIELDS = ["position", "throttle", "bus_voltage_v", "bus_current_a", "rpm", "thrust_n", "torque_nm",
                 "temperature_c", "flag"]
RUN_FIELDS = ["name", "altitude_m", "air_temperature_c", "air_pressure_pa", "throttle_offset", "throttle_scale",
              "air_density_kg_m3", "filename", "notes", "sample_count", "flagged_count", "supply_voltage_v"]
CALIBRATION_FIELDS = ["part_kind", "parameters", "residual_rms", "residual_unit", "sample_count", "notes",
                      "engine_version", "active"]


def export(session: Session, *, team_id: int, team_name: str) -> dict[str, Any]:
    parts: dict[str, list[dict[str, Any]]] = {}
    for kind, model in PART_MODELS.items():
        rows = session.scalars(select(model).where(model.team_id == team_id).order_by(model.id))
        parts[kind] = [{"ref": p.id, "archived": p.archived,
                        **CREATE_SCHEMAS[kind].model_validate(
                            {f: getattr(p, f) for f in CREATE_SCHEMAS[kind].model_fields}).model_dump(mode="json")}
                       for p in rows]
    airframes = [{"ref": a.id, **{f: getattr(a, f) for f in AirframeCreate.model_fields}}
                 for a in session.scalars(select(Airframe).where(Airframe.team_id == team_id).order_by(Airframe.id))]
    missions = [{"ref": m.id, **{f: getattr(m, f) for f in MissionCreate.model_fields}}
                for m in session.scalars(select(Mission).where(Mission.team_id == team_id).order_by(Mission.id))]
    runs = [{"ref": r.id, "motor_ref": r.motor_id, "propeller_ref": r.propeller_id, "esc_ref": r.esc_id,
             "pack_ref": r.pack_id, **{f: getattr(r, f) for f in RUN_FIELDS},
             "samples": [{f: getattr(s, f) for f in SAMPLE_FIELDS} for s in r.samples]}
            for r in session.scalars(select(BenchRun).where(BenchRun.team_id == team_id).order_by(BenchRun.id))]
    calibrations = [{"part_ref": c.part_id, "run_refs": c.run_ids, **{f: getattr(c, f) for f in CALIBRATION_FIELDS}}
                    for c in session.scalars(select(Calibration).where(Calibration.team_id == team_id)
                                             .order_by(Calibration.id))]
    return {"format": FORMAT, "version": VERSION, "exported_at": datetime.now(UTC).isoformat(), "team": team_name,
            "parts": parts, "airframes": airframes, "missions": missions, "bench_runs": runs,
            "calibrations": calibrations}


def _validate(schema: Any, data: dict[str, Any], where: str, errors: list[FieldError]) -> Any:
    try:
        return schema.model_validate(data)
    except ValidationError as exc:
        errors.extend(FieldError(f"{where}.{e.field}", e.message) for e in field_errors(exc))
        return None


def _ref(mapping: dict[Any, int], ref: Any, where: str, errors: list[FieldError]) -> int | None:
    if ref is None:
        return None
    if ref not in mapping:
        errors.append(FieldError(where, f"refers to {ref!r}, which is not in the file"))
        return None
    return mapping[ref]


def import_library(session: Session, *, team_id: int, user_id: int | None, data: Any) -> dict[str, int]:
    """Create everything in the file in the caller's team, or nothing (errors name the path in the file)."""
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise InvalidInput("Not a library file", [FieldError("format", f"must be {FORMAT!r}")])
    if data.get("version") != VERSION:
        raise InvalidInput("Unknown version", [FieldError("version", f"this server reads version {VERSION}")])
    errors: list[FieldError] = []
    part_ids: dict[str, dict[Any, int]] = {}
    counts: dict[str, int] = {}
    for kind, schema in CREATE_SCHEMAS.items():
        part_ids[kind] = {}
        rows = data.get("parts", {}).get(kind, [])
        for i, row in enumerate(rows):
            fields = {k: v for k, v in row.items() if k not in ("ref", "archived")}
            model = _validate(schema, fields, f"parts.{kind}.{i}", errors)
            if model is not None:
                part = parts_service.create_part(session, team_id=team_id, user_id=user_id, kind=kind, data=model)
                part.archived = bool(row.get("archived", False))
                part_ids[kind][row.get("ref", i)] = part.id
        counts[kind] = len(rows)
    airframe_ids: dict[Any, int] = {}
    for i, row in enumerate(data.get("airframes", [])):
        model = _validate(AirframeCreate, {k: v for k, v in row.items() if k != "ref"}, f"airframes.{i}", errors)
        if model is not None:
            airframe = Airframe(team_id=team_id, version=1, **model.model_dump())
            session.add(airframe)
            session.flush()
            airframe_ids[row.get("ref", i)] = airframe.id
    for i, row in enumerate(data.get("missions", [])):
        airframe_id = _ref(airframe_ids, row.get("airframe_id"), f"missions.{i}.airframe_id", errors)
        fields = {k: v for k, v in row.items() if k != "ref"} | {"airframe_id": airframe_id or 1}
        model = _validate(MissionCreate, fields, f"missions.{i}", errors)
        if model is not None and airframe_id is not None:
            session.add(Mission(team_id=team_id, version=1, **model.model_dump()))
    run_ids: dict[Any, int] = {}
    for i, row in enumerate(data.get("bench_runs", [])):
        refs = {name: _ref(part_ids[kind], row.get(f"{name}_ref"), f"bench_runs.{i}.{name}_ref", errors)
                for name, kind in (("motor", "motors"), ("propeller", "propellers"), ("esc", "escs"),
                                   ("pack", "batteries"))}
        meta = _validate(BenchRunMeta, {
            "name": row.get("name", ""), "motor_id": refs["motor"] or 1, "propeller_id": refs["propeller"] or 1,
            "esc_id": refs["esc"] or 1, "pack_id": refs["pack"], "supply_voltage_v": row.get("supply_voltage_v"),
            "altitude_m": row.get("altitude_m", 0.0), "air_temperature_c": row.get("air_temperature_c"),
            "air_pressure_pa": row.get("air_pressure_pa"), "throttle_offset": row.get("throttle_offset", 0.0),
            "throttle_scale": row.get("throttle_scale", 1.0), "notes": row.get("notes", ""),
        }, f"bench_runs.{i}", errors)
        if meta is None or None in (refs["motor"], refs["propeller"], refs["esc"]):
            continue
        run = BenchRun(team_id=team_id, created_by_id=user_id, **meta.model_dump(),
                       air_density_kg_m3=float(row["air_density_kg_m3"]), filename=row.get("filename", ""),
                       sample_count=len(row.get("samples", [])), flagged_count=int(row.get("flagged_count", 0)))
        session.add(run)
        session.flush()
        run_ids[row.get("ref", i)] = run.id
        session.add_all(BenchSample(run_id=run.id, **{f: s.get(f) for f in SAMPLE_FIELDS})
                        for s in row.get("samples", []))
    for i, row in enumerate(data.get("calibrations", [])):
        kind = row.get("part_kind")
        if kind not in part_ids:
            errors.append(FieldError(f"calibrations.{i}.part_kind", "must be escs, motors or propellers"))
            continue
        part_id = _ref(part_ids[kind], row.get("part_ref"), f"calibrations.{i}.part_ref", errors)
        if part_id is None:
            continue
        session.add(Calibration(team_id=team_id, part_id=part_id,
                                run_ids=[run_ids[r] for r in row.get("run_refs", []) if r in run_ids],
                                **{f: row.get(f) for f in CALIBRATION_FIELDS}))
    if errors:
        raise InvalidInput(f"{len(errors)} problem(s) in the library file; nothing was imported", errors[:200])
    session.flush()
    return {**counts, "airframes": len(airframe_ids), "missions": len(data.get("missions", [])),
            "bench_runs": len(run_ids), "calibrations": len(data.get("calibrations", []))}
