"""POST /api/v1/predict: operating points of one power system."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from server.deps import CallerDep, SessionDep
from server.schemas.predict import PredictRequest, PredictResponse
from server.services import predict as predict_service

router = APIRouter(tags=["predict"])


@router.post("/predict", response_model=PredictResponse)
def predict(caller: CallerDep, session: SessionDep, request: PredictRequest) -> dict[str, Any]:
    """Operating points (by throttle, thrust or rpm) and optional endurance; parts by id or inline."""
    return predict_service.predict(session, caller.team_id, request)
