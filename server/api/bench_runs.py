"""JSON routes for bench runs: multipart upload (stored, then calibrated), list, read, delete."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, File, Form, Query, Request, UploadFile
from fastapi.responses import Response
from pydantic import ValidationError

from server import jobs
from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.errors import FieldError, InvalidInput
from server.limits import UPLOAD_BODY_BYTES
from server.schemas.bench_runs import BenchRunDetail, BenchRunMeta, BenchRunSummary, BenchRunUploaded
from server.schemas.calibrations import RefitStatus
from server.services import bench_runs as bench_service
from server.services import refits
from server.services._validation import field_errors, parse_json
from server.uploads import read_upload

router = APIRouter(tags=["bench runs"])
MAX_UPLOAD = 2 * 1024 * 1024


def parse_meta(text: str) -> BenchRunMeta:
    data = parse_json(text, field="metadata")
    try:
        return BenchRunMeta.model_validate(data)
    except ValidationError as exc:
        raise InvalidInput("Invalid metadata", [FieldError(f"metadata.{e.field}", e.message)
                                                for e in field_errors(exc)]) from None


@router.post("/bench-runs", status_code=201, response_model=BenchRunUploaded, max_body_size=UPLOAD_BODY_BYTES)
def upload(
    caller: WriterDep, session: SessionDep, request: Request,
    file: Annotated[UploadFile, File(description="Bench-run CSV (unit-suffixed headers)")],
    metadata: Annotated[str, Form(max_length=20_000, description="JSON: motor_id, propeller_id, esc_id, "
                                                                 "pack_id | supply_voltage_v, altitude_m, ..., "
                                                                 "thrust_sign (-1 flips a reversed load cell)")],
) -> dict[str, Any]:
    """Upload a measured sweep: validated (all or nothing), flagged and stored; the ESC's pool is then re-fitted by
    a job — ``calibration`` says its status, and ``calibration.url`` gives the calibrations when it is done."""
    meta = parse_meta(metadata)
    raw = read_upload(file, MAX_UPLOAD)
    run, flags = bench_service.store_run(session, team_id=caller.team_id, user_id=caller.user_id, meta=meta, raw=raw,
                                         filename=file.filename or "")
    refit, new = refits.request(session, team_id=caller.team_id, esc_id=run.esc_id, run_id=run.id)
    session.commit()
    if new:
        jobs.submit(request.app.state, "refit", refit.id, caller.team_id)
    return {**bench_service.run_summary(run), "flags": flags, "calibration": refits.status(session, refit)}


@router.get("/refits/{refit_id}", response_model=RefitStatus)
def read_refit(caller: CallerDep, session: SessionDep, refit_id: IdPath) -> dict[str, Any]:
    """A refit job: status (queued, running, done, failed), and when done the calibrations it stored."""
    return refits.status(session, refits.get(session, team_id=caller.team_id, refit_id=refit_id))


@router.get("/bench-runs", response_model=list[BenchRunSummary])
def list_runs(caller: CallerDep, session: SessionDep,
              part_kind: Annotated[str | None, Query(pattern="^(batteries|escs|motors|propellers)$")] = None,
              part_id: Annotated[int | None, Query(ge=1, le=2**63 - 1)] = None) -> list[dict[str, Any]]:
    """The team's bench runs (newest first), optionally those using one part."""
    return [bench_service.run_summary(r) for r in bench_service.list_runs(session, team_id=caller.team_id,
                                                                           part_kind=part_kind, part_id=part_id)]


@router.get("/bench-runs/{run_id}", response_model=BenchRunDetail)
def read_run(caller: CallerDep, session: SessionDep, run_id: IdPath) -> dict[str, Any]:
    """A run with every sample, its derived quantities, flag, the model's prediction there, and calibrations."""
    return bench_service.run_detail(session, team_id=caller.team_id, run_id=run_id)


@router.delete("/bench-runs/{run_id}", status_code=204)
def delete_run(caller: WriterDep, session: SessionDep, run_id: IdPath) -> Response:
    """Delete a run and its samples (calibrations already stored stay until you recalibrate)."""
    bench_service.delete_run(session, team_id=caller.team_id, run_id=run_id)
    session.commit()
    return Response(status_code=204)
