"""Refit jobs: after a bench-run upload commits, the ESC's pool is re-fitted outside the request.

The upload answers as soon as the run is stored; the fit (seconds to a minute for large pools) runs in a job, so it
never holds a request or the database's write lock for long. Uploads in a row for the same ESC share one queued
refit. The fit itself is :func:`server.services.calibrations.calibrate_esc`.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session, sessionmaker

from server.errors import NotFound
from server.jobs import JobContext
from server.models import Refit
from server.services import calibrations


def request(session: Session, *, team_id: int, esc_id: int, run_id: int | None) -> tuple[Refit, bool]:
    """A queued refit of the ESC's pool: an already queued one is reused. Returns it and whether it is new.

    Reusing is an UPDATE of the queued row (not a read): it locks the row until this upload commits, so the job
    cannot claim it in between and miss the new run (its claim waits for the lock, then reads every run).
    """
    queued = session.scalar(select(Refit.id).where(Refit.team_id == team_id, Refit.esc_id == esc_id,
                                                   Refit.status == "queued").order_by(Refit.id))
    if queued is not None:
        taken = session.execute(update(Refit).where(Refit.id == queued, Refit.status == "queued")
                                .values(run_id=run_id))
        if taken.rowcount == 1:  # type: ignore[attr-defined]
            row = session.get(Refit, queued)
            assert row is not None
            session.refresh(row)
            return row, False
    row = Refit(team_id=team_id, esc_id=esc_id, run_id=run_id, status="queued")
    session.add(row)
    session.flush()
    return row, True


def run_job(factory: sessionmaker[Session], refit_id: int, context: JobContext) -> None:
    """The job body: fit the ESC's pool (every run stored so far) and store the calibrations, all in one commit."""
    with factory() as session, session.begin():
        row = session.get(Refit, refit_id)
        assert row is not None
        outcome = calibrations.calibrate_esc(session, team_id=row.team_id, esc_id=row.esc_id)
        context.check()  # cancelled or out of time while fitting: store nothing
        row.result = {"calibration_ids": [c["id"] for c in outcome["calibrations"]], "error": outcome["error"],
                      "changes": outcome.get("changes", [])}
        row.status, row.progress, row.finished_at = "done", 1.0, datetime.now(UTC)


def get(session: Session, *, team_id: int, refit_id: int) -> Refit:
    row = session.scalar(select(Refit).where(Refit.id == refit_id, Refit.team_id == team_id))
    if row is None:
        raise NotFound(f"No refit with id {refit_id}")
    return row


def latest_for(session: Session, *, team_id: int, esc_id: int) -> Refit | None:
    return session.scalar(select(Refit).where(Refit.team_id == team_id, Refit.esc_id == esc_id)
                          .order_by(Refit.id.desc()))


def status(session: Session, row: Refit) -> dict[str, Any]:
    """The API document; ``calibrations`` and ``error`` keep the names the upload response always had."""
    stored = []
    if row.result:
        stored = [calibrations.calibration_dict(c) for c in calibrations.by_ids(
            session, team_id=row.team_id, ids=row.result.get("calibration_ids", []))]
    return {"refit_id": row.id, "status": row.status, "esc_id": row.esc_id, "run_id": row.run_id,
            "calibrations": stored, "error": (row.result or {}).get("error") or row.error or None,
            "changes": (row.result or {}).get("changes", []),
            "created_at": row.created_at, "started_at": row.started_at, "finished_at": row.finished_at,
            "url": f"/api/v1/refits/{row.id}"}
