"""Bench-run pages: list, upload with a preview, detail with the fit (± standard error), curves and flags."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import ValidationError

from server import jobs
from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep
from server.errors import DomainError
from server.limits import UPLOAD_BODY_BYTES
from server.pages._render import PostedForm, error_lines, form_values, render
from server.schemas.bench_runs import BenchRunMeta
from server.services import bench_runs as bench_service
from server.services import calibration_report, refits
from server.services import calibrations as calibration_service
from server.services import parts as parts_service

router = APIRouter(prefix="/bench-runs")
META_FIELDS = list(BenchRunMeta.model_fields)
MAX_UPLOAD_BYTES = 2 * 1024 * 1024


def _options(session: Any, caller: Caller) -> dict[str, Any]:
    return {kind: parts_service.list_parts(session, team_id=caller.team_id, kind=kind, page_size=500)[0]
            for kind in ("batteries", "escs", "motors", "propellers")}


def _meta(values: dict[str, str]) -> BenchRunMeta:
    return BenchRunMeta.model_validate({k: v for k, v in values.items() if k in META_FIELDS and v != ""})


def _list(request: Request, session: Any, caller: Caller, status_code: int = 200, **extra: Any) -> HTMLResponse:
    names = {kind: {p.id: p.name for p in parts} for kind, parts in _options(session, caller).items()}
    ctx: dict[str, Any] = {"caller": caller, "nav": "bench", "options": _options(session, caller), "names": names,
                           "runs": [bench_service.run_summary(r)
                                    for r in bench_service.list_runs(session, team_id=caller.team_id)],
                           "errors": [], "values": {}, "preview": None}
    ctx.update(extra)
    return render(request, "pages/bench_runs.html", ctx, block="preview", status_code=status_code)


@router.get("", response_class=HTMLResponse)
def bench_runs_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _list(request, session, caller)


async def _read_form(request: Request) -> tuple[dict[str, str], bytes, str]:
    """The upload form's text fields, the file's bytes (at most the limit + 1) and its name; the file is closed."""
    async with request.form() as form:  # closes the uploaded temporary file
        upload = form.get("file")
        raw = b""
        filename = ""
        if upload is not None and not isinstance(upload, str):
            raw = await upload.read(MAX_UPLOAD_BYTES + 1)
            filename = upload.filename or ""
        return form_values(form), raw, filename


UploadForm = Annotated[tuple[dict[str, str], bytes, str], Depends(_read_form)]


@router.post("/preview", response_class=HTMLResponse, max_body_size=UPLOAD_BODY_BYTES)
def preview(request: Request, caller: PageWriter, session: SessionDep, form: UploadForm) -> HTMLResponse:
    values, raw, _ = form
    try:
        result = bench_service.preview(session, team_id=caller.team_id, meta=_meta(values), raw=raw)
    except (ValidationError, DomainError) as exc:
        return _list(request, session, caller, errors=error_lines(exc), values=values)
    return _list(request, session, caller, preview=result, values=values)


@router.post("", response_class=HTMLResponse, max_body_size=UPLOAD_BODY_BYTES)
def upload(request: Request, caller: PageWriter, session: SessionDep, form: UploadForm) -> Response:
    values, raw, filename = form
    try:
        run, _ = bench_service.store_run(session, team_id=caller.team_id, user_id=caller.user_id,
                                         meta=_meta(values), raw=raw, filename=filename)
        refit, new = refits.request(session, team_id=caller.team_id, esc_id=run.esc_id, run_id=run.id)
        session.commit()
    except (ValidationError, DomainError) as exc:
        session.rollback()
        return _list(request, session, caller, 422, errors=error_lines(exc), values=values)
    if new:
        jobs.submit(request.app.state, "refit", refit.id, caller.team_id)
    return RedirectResponse(f"/bench-runs/{run.id}", status_code=303)


@router.get("/{run_id}", response_class=HTMLResponse)
def run_page(request: Request, caller: PageCaller, session: SessionDep, run_id: IdPath) -> HTMLResponse:
    detail = bench_service.run_detail(session, team_id=caller.team_id, run_id=run_id)
    run = detail["run"]
    ids = {"motors": {run["motor_id"]}, "propellers": {run["propeller_id"]}, "escs": {run["esc_id"]},
           "batteries": {run["pack_id"]} if run["pack_id"] else set()}
    parts = {kind: next(iter(found.values()), None)
             for kind, found in parts_service.by_ids(session, team_id=caller.team_id, ids=ids).items()}
    views = {}
    for kind, cal in detail["calibrations"].items():
        if cal is not None:
            row = calibration_service.get(session, team_id=caller.team_id, calibration_id=cal["id"])
            views[kind] = calibration_report.entered_vs_fitted(session, team_id=caller.team_id, calibration=row)
    samples = [{k: s[k] for k in ("throttle", "thrust_n", "bus_current_a", "electrical_power_w",
                                  "specific_thrust_g_per_w", "drive_efficiency", "rpm", "thrust_coefficient",
                                  "power_coefficient", "model_electrical_power_w", "model_bus_current_a",
                                  "residual_power")} | {"flagged": s["flag"] is not None} for s in detail["samples"]]
    table = views.get("propellers", {}).get("table")
    chart = {"samples": samples, "prop_table": table}
    return render(request, "pages/bench_run.html", {"caller": caller, "nav": "bench", "detail": detail,
                                                    "parts": parts, "views": views, "chart": chart,
                                                    "changes": detail["calibration_changes"]})


@router.post("/{run_id}/calibrations/{calibration_id}", response_class=HTMLResponse)
def switch(request: Request, caller: PageWriter, session: SessionDep, values: PostedForm, run_id: IdPath,
           calibration_id: IdPath) -> Response:
    calibration_service.set_active(session, team_id=caller.team_id, calibration_id=calibration_id,
                             active=values.get("active") == "1")
    session.commit()
    return RedirectResponse(f"/bench-runs/{run_id}", status_code=303)


@router.post("/{run_id}/delete", response_class=HTMLResponse)
def delete(caller: PageWriter, session: SessionDep, run_id: IdPath) -> Response:
    bench_service.delete_run(session, team_id=caller.team_id, run_id=run_id)
    session.commit()
    return RedirectResponse("/bench-runs", status_code=303)
