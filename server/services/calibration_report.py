"""Read-side views of calibrations: each fitted value beside the part's entered one, and what a pooled refit moved.

A pooled refit (every run of one ESC) re-fits the ESC and every motor and propeller of those runs at once, so one
upload can move parts the user never touched; :func:`pool_changes` lists those moves.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.models import BenchRun, Calibration
from server.services import parts as parts_service
from server.services import power_system as ps

TABLE = "static_table"


def _number(value: Any) -> float | None:
    return float(value) if isinstance(value, int | float) and math.isfinite(value) else None


def _change(before: float | None, after: float | None) -> float | None:
    """Relative change after ÷ before − 1 (None when either is unknown or before is 0)."""
    if before is None or after is None or before == 0:
        return None
    return after / before - 1.0


def _table_at(rows: list[dict[str, float]], rpm: float, key: str) -> float | None:
    if not rows:
        return None
    xs = np.array([r["rpm"] for r in rows])
    return float(np.interp(rpm, xs, np.array([r[key] for r in rows])))


def _reference_rpm(rows: list[dict[str, float]]) -> float:
    return float(np.median([r["rpm"] for r in rows])) if rows else 0.0


def parameter_changes(before: Calibration, after: Calibration) -> list[dict[str, Any]]:
    """Every parameter whose value moved between two calibrations of one part (tables: CT and CP at the new
    table's median rpm)."""
    out = []
    for name, new in after.parameters.items():
        old = before.parameters.get(name)
        if old is None:
            continue
        pairs: list[tuple[str, str, float | None, float | None, float | None, float | None]]
        if name == TABLE:
            rpm = _reference_rpm(new["value"])
            pairs = [(f"{key}@{rpm:.0f}", key.upper() + f" at {rpm:.0f} rpm", _table_at(old["value"], rpm, key),
                      _table_at(new["value"], rpm, key), None, None) for key in ("ct", "cp")]
        else:
            pairs = [(name, name, _number(old.get("value")), _number(new.get("value")), _number(old.get("stderr")),
                      _number(new.get("stderr")))]
        for key, label, was, now, was_se, now_se in pairs:
            if was is None or now is None or math.isclose(was, now, rel_tol=1e-9, abs_tol=1e-12):
                continue
            spread = math.hypot(was_se or 0.0, now_se or 0.0)
            out.append({"part_kind": after.part_kind, "part_id": after.part_id, "parameter": key, "label": label,
                        "unit": new.get("unit", ""), "before": was, "before_stderr": was_se, "after": now,
                        "after_stderr": now_se, "change": _change(was, now),
                        "beyond_stderr": bool(spread) and abs(now - was) > spread,
                        "before_id": before.id, "after_id": after.id})
    return out


def pool_parts(session: Session, team_id: int, esc_id: int) -> list[tuple[str, int]]:
    """(kind, id) of the ESC and of every motor and propeller of its runs: what one pooled fit calibrates."""
    runs = list(session.scalars(select(BenchRun).where(BenchRun.team_id == team_id, BenchRun.esc_id == esc_id)))
    motors = sorted({r.motor_id for r in runs})
    props = sorted({r.propeller_id for r in runs})
    return [("escs", esc_id), *(("motors", m) for m in motors), *(("propellers", p) for p in props)]


def _history(session: Session, team_id: int, kind: str, part_id: int, limit: int) -> list[Calibration]:
    return list(session.scalars(select(Calibration).where(
        Calibration.team_id == team_id, Calibration.part_kind == kind, Calibration.part_id == part_id)
        .order_by(Calibration.id.desc()).limit(limit)))


def pool_latest(session: Session, team_id: int, esc_id: int) -> list[Calibration]:
    """The newest calibration of every part of the ESC's pool (parts never calibrated are left out)."""
    out = []
    for kind, part_id in pool_parts(session, team_id, esc_id):
        newest = _history(session, team_id, kind, part_id, 1)
        out += newest
    return out


def pool_changes(session: Session, *, team_id: int, esc_id: int) -> list[dict[str, Any]]:
    """What the latest pooled refit of this ESC moved, part by part, against each part's calibration before it."""
    out = []
    for kind, part_id in pool_parts(session, team_id, esc_id):
        history = _history(session, team_id, kind, part_id, 2)
        if len(history) == 2:
            out += parameter_changes(history[1], history[0])
    names = parts_service.by_ids(session, team_id=team_id, ids={
        kind: {c["part_id"] for c in out if c["part_kind"] == kind} for kind in ("escs", "motors", "propellers")})
    for change in out:
        part = names[change["part_kind"]].get(change["part_id"])
        change["part_name"] = part.name if part else f"#{change['part_id']}"
    return out


def entered_vs_fitted(session: Session, *, team_id: int, calibration: Calibration) -> dict[str, Any]:
    """Each fitted parameter beside the value the part would use without it (entered, else the engine default),
    the standard error and the change in %; for a propeller also its entered CT/CP constants and the fitted table."""
    part = parts_service.get_part(session, team_id=team_id, kind=calibration.part_kind, part_id=calibration.part_id)
    plain = ps.resolve_part(session, team_id, calibration.part_kind, part, use_calibration=False)
    rows = []
    for name, fitted in calibration.parameters.items():
        if name == TABLE:
            continue
        entered = _number(getattr(part, name, None))
        baseline = entered if entered is not None else _number(plain.values.get(name))
        value = _number(fitted.get("value"))
        rows.append({"name": name, "unit": "" if fitted.get("unit") in ("-", None) else fitted["unit"],
                     "entered": entered, "baseline": baseline,
                     "baseline_source": "entered" if entered is not None else "default", "fitted": value,
                     "stderr": _number(fitted.get("stderr")), "status": fitted.get("status", ""),
                     "source": fitted.get("source", ""), "change": _change(baseline, value)})
    table = calibration.parameters.get(TABLE)
    out: dict[str, Any] = {"rows": rows, "table": None}
    if table:
        out["table"] = {"rows": table["value"], "status": table.get("status", ""),
                        "entered_ct": _number(getattr(part, "ct", None)),
                        "entered_cp": _number(getattr(part, "cp", None)),
                        "entered_table": getattr(part, TABLE, None) or []}
    return out
