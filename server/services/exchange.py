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
from server.schemas.exchange import ImportFile
from server.schemas.missions import AirframeCreate, MissionCreate
from server.schemas.parts import CREATE_SCHEMAS
from server.services import parts as parts_service
from server.services._validation import field_errors

FORMAT = "liftmatch-library"
VERSION = 1
SAMPLE_FIELDS = ["position", "throttle", "bus_voltage_v", "bus_current_a", "rpm", "thrust_n", "torque_nm",
                 "temperature_c", "flag"]
RUN_FIELDS = ["name", "altitude_m", "air_temperature_c", "air_pressure_pa", "throttle_offset", "throttle_scale",
              "thrust_sign", "air_density_kg_m3", "filename", "notes", "sample_count", "flagged_count",
              "supply_voltage_v"]
MAX_REPORTED = 200
CALIBRATION_FIELDS = ["part_kind", "parameters", "residual_rms", "residual_unit", "sample_count", "notes",
                      "engine_version", "active", "covariance"]


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


def _ref(mapping: dict[int | None, int], ref: int | None) -> int | None:
    return None if ref is None else mapping[ref]


def _items(value: Any) -> list[tuple[int, dict[str, Any]]]:
    return [(i, row) for i, row in enumerate(value) if isinstance(row, dict)] if isinstance(value, list) else []


def _reference_errors(data: dict[str, Any]) -> list[FieldError]:
    """Refs that appear twice or point at nothing in the file (checked on the raw file, so these are reported
    together with any type errors)."""
    errors: list[FieldError] = []

    def known(rows: Any, where: str) -> set[Any]:
        seen: set[Any] = set()
        for i, row in _items(rows):
            ref = row.get("ref", i)
            if not isinstance(ref, int | str):  # a type error, reported by the schema
                continue
            if ref in seen:
                errors.append(FieldError(f"{where}.{i}.ref", f"ref {ref!r} appears twice"))
            seen.add(ref)
        return seen

    def check(refs: set[Any], value: Any, where: str) -> None:
        if isinstance(value, int | str) and value not in refs:
            errors.append(FieldError(where, f"refers to {value!r}, which is not in the file"))

    parts: dict[str, Any] = data["parts"] if isinstance(data.get("parts"), dict) else {}
    part_refs = {kind: known(parts.get(kind), f"parts.{kind}") for kind in CREATE_SCHEMAS}
    airframes = known(data.get("airframes"), "airframes")
    for i, row in _items(data.get("missions")):
        check(airframes, row.get("airframe_id"), f"missions.{i}.airframe_id")
    runs = known(data.get("bench_runs"), "bench_runs")
    for i, row in _items(data.get("bench_runs")):
        for name, kind in (("motor", "motors"), ("propeller", "propellers"), ("esc", "escs"), ("pack", "batteries")):
            check(part_refs[kind], row.get(f"{name}_ref"), f"bench_runs.{i}.{name}_ref")
    for i, row in _items(data.get("calibrations")):
        if isinstance(row.get("part_kind"), str) and row["part_kind"] in part_refs:
            check(part_refs[row["part_kind"]], row.get("part_ref"), f"calibrations.{i}.part_ref")
        for j, ref in enumerate(row.get("run_refs") or [] if isinstance(row.get("run_refs"), list) else []):
            check(runs, ref, f"calibrations.{i}.run_refs.{j}")
    return errors


def parse_library(data: Any) -> ImportFile:
    """The file validated as a whole (every nested value typed and bounded, every ref resolvable); a 422 naming
    each path in the file otherwise."""
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise InvalidInput("Not a library file", [FieldError("format", f"must be {FORMAT!r}")])
    if data.get("version") != VERSION:
        raise InvalidInput("Unknown version", [FieldError("version", f"this server reads version {VERSION}")])
    errors = []
    library = None
    try:
        library = ImportFile.model_validate(data)
    except ValidationError as exc:
        errors = field_errors(exc)
    errors += _reference_errors(data)
    if errors or library is None:
        raise InvalidInput(f"{len(errors)} problem(s) in the library file; nothing was imported",
                           errors[:MAX_REPORTED])
    return library


def import_library(session: Session, *, team_id: int, user_id: int | None, data: Any) -> dict[str, int]:
    """Create everything in the file in the caller's team, or nothing (errors name the path in the file)."""
    library = parse_library(data)
    part_ids: dict[str, dict[int | None, int]] = {}
    counts: dict[str, int] = {}
    for kind, schema in CREATE_SCHEMAS.items():
        part_ids[kind] = {}
        rows = getattr(library.parts, kind)
        for i, row in enumerate(rows):
            model = schema.model_validate(row.model_dump(exclude={"ref", "archived"}))
            part = parts_service.create_part(session, team_id=team_id, user_id=user_id, kind=kind, data=model)
            part.archived = row.archived
            part_ids[kind][row.ref if row.ref is not None else i] = part.id
        counts[kind] = len(rows)
    airframe_ids: dict[int | None, int] = {}
    for i, airframe_row in enumerate(library.airframes):
        airframe = Airframe(team_id=team_id, **airframe_row.model_dump(exclude={"ref"}))
        session.add(airframe)
        session.flush()
        airframe_ids[airframe_row.ref if airframe_row.ref is not None else i] = airframe.id
    for mission_row in library.missions:
        session.add(Mission(team_id=team_id, **mission_row.model_dump(exclude={"ref"}) | {
            "airframe_id": airframe_ids[mission_row.airframe_id]}))
    run_ids: dict[int | None, int] = {}
    for i, run_row in enumerate(library.bench_runs):
        refs = {name: _ref(part_ids[kind], getattr(run_row, f"{name}_ref"))
                for name, kind in (("motor", "motors"), ("propeller", "propellers"), ("esc", "escs"),
                                   ("pack", "batteries"))}
        fields = run_row.model_dump(exclude={"ref", "motor_ref", "propeller_ref", "esc_ref", "pack_ref", "samples"})
        run = BenchRun(team_id=team_id, created_by_id=user_id, motor_id=refs["motor"], propeller_id=refs["propeller"],
                       esc_id=refs["esc"], pack_id=refs["pack"], **fields | {"sample_count": len(run_row.samples)})
        session.add(run)
        session.flush()
        run_ids[run_row.ref if run_row.ref is not None else i] = run.id
        session.add_all(BenchSample(run_id=run.id, **s.model_dump()) for s in run_row.samples)
    for cal_row in library.calibrations:
        session.add(Calibration(team_id=team_id, part_id=part_ids[cal_row.part_kind][cal_row.part_ref],
                                run_ids=[run_ids[r] for r in cal_row.run_refs],
                                **cal_row.model_dump(mode="json", exclude={"part_ref", "run_refs"})))
    session.flush()
    return {**counts, "airframes": len(airframe_ids), "missions": len(library.missions),
            "bench_runs": len(run_ids), "calibrations": len(library.calibrations)}
