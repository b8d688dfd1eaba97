"""JSON routes for calibrations: calibrate a part on demand, list a part's calibrations, switch one on or off."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.schemas.calibrations import CalibrationRead, CalibrationSwitch, PartCalibrated
from server.services import calibrations as calibration_service
from server.services import parts as parts_service

router = APIRouter(tags=["calibrations"])


def _add_calibrate_routes(kind: str) -> None:
    @router.post(f"/parts/{kind}/{{part_id}}/calibrate", response_model=PartCalibrated,
                 summary=f"Calibrate from bench runs ({kind})")
    def calibrate(caller: WriterDep, session: SessionDep, part_id: IdPath) -> dict[str, Any]:
        result = calibration_service.calibrate_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
        session.commit()
        return result

    @router.get(f"/parts/{kind}/{{part_id}}/calibrations", response_model=list[CalibrationRead],
                summary=f"Calibrations of a part ({kind})")
    def calibrations(caller: CallerDep, session: SessionDep, part_id: IdPath) -> list[dict[str, Any]]:
        parts_service.get_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
        rows = calibration_service.list_calibrations(session, team_id=caller.team_id, kind=kind, part_id=part_id)
        return [calibration_service.calibration_dict(c) for c in rows]


for _kind in ("escs", "motors", "propellers"):
    _add_calibrate_routes(_kind)


@router.patch("/calibrations/{calibration_id}", response_model=CalibrationRead)
def switch_calibration(caller: WriterDep, session: SessionDep, calibration_id: IdPath,
                       data: CalibrationSwitch) -> dict[str, Any]:
    """Use (or stop using) a calibration for its part; at most one is active per part."""
    row = calibration_service.set_active(session, team_id=caller.team_id, calibration_id=calibration_id,
                                         active=data.active)
    session.commit()
    return calibration_service.calibration_dict(row)
