"""Predict page: pick four parts (or type parameters), conditions and points; see operating points and curves."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse
from pydantic import ValidationError

from server.deps import PageCaller, SessionDep
from server.errors import DomainError
from server.pages._render import error_lines, render
from server.schemas.predict import PredictRequest
from server.services import parts as parts_service
from server.services import predict as predict_service

router = APIRouter()

# Typed overrides offered on the page: (request section, field, label, unit).
OVERRIDES = [
    ("battery", "cells_series", "Cells in series", "S"), ("battery", "capacity_mah", "Capacity", "mAh"),
    ("battery", "cell_resistance_mohm", "Cell resistance", "mΩ"),
    ("esc", "r_on_path_ohm", "Conduction resistance", "Ω"), ("esc", "pwm_frequency_khz", "PWM frequency", "kHz"),
    ("esc", "k_pwm", "Partial-throttle loss k_pwm", ""),
    ("motor", "kv_rpm_per_v", "Kv", "rpm/V"), ("motor", "winding_resistance_ohm", "Winding resistance", "Ω"),
    ("motor", "no_load_current_a", "No-load current", "A"),
    ("motor", "thermal_resistance_k_per_w", "Thermal resistance winding-to-air", "K/W"),
    ("motor", "thermal_time_constant_s", "Thermal time constant", "s"),
    ("motor", "max_winding_temperature_c", "Highest winding temperature", "°C"),
    ("propeller", "diameter_in", "Diameter", "in"), ("propeller", "ct", "CT", ""), ("propeller", "cp", "CP", ""),
]
POINT_WORDS = {"thrust_n": "{:g} N", "rpm": "{:g} rpm", "throttle": "throttle {:g}"}  # a requested point, for people
SCALARS = ["rotor_count", "all_up_mass_g", "supply_voltage_v", "packs_in_parallel", "state_of_charge", "altitude_m",
           "temperature_offset_c", "airspeed_m_s", "forward_airspeed_m_s", "climb_rate_m_s", "drag_area_m2", "coaxial"]


def _numbers(text: str) -> list[float]:
    return [float(x) for x in text.replace(";", ",").replace(" ", ",").split(",") if x.strip()]


def build_request(q: dict[str, str]) -> dict[str, Any]:
    """Query parameters of the page form → a PredictRequest body (validated by the caller)."""
    body: dict[str, Any] = {"battery": {}, "esc": {}, "motor": {}, "propeller": {}, "conditions": {}}
    for section in ("battery", "esc", "motor", "propeller"):
        if q.get(f"{section}_id"):
            body[section]["id"] = q[f"{section}_id"]
    for section, name, _, _ in OVERRIDES:
        if q.get(f"{section}.{name}"):
            body[section][name] = q[f"{section}.{name}"]
    if q.get("supply_voltage_v"):
        body["battery"] = {"supply_voltage_v": q["supply_voltage_v"]}
    for name in ("packs_in_parallel", "state_of_charge"):
        if q.get(name) and "supply_voltage_v" not in body["battery"]:
            body["battery"][name] = q[name]
    for name in ("altitude_m", "temperature_offset_c", "airspeed_m_s", "forward_airspeed_m_s", "climb_rate_m_s",
                 "drag_area_m2", "coaxial"):
        if q.get(name):
            body["conditions"][name] = q[name]
    for name in ("rotor_count", "all_up_mass_g"):
        if q.get(name):
            body[name] = q[name]
    points: list[dict[str, float]] = []
    try:
        points += [{"throttle": x} for x in _numbers(q.get("throttles", ""))]
        points += [{"thrust_n": x} for x in _numbers(q.get("thrusts", ""))]
    except ValueError:
        points = [{"throttle": "not a number"}]  # type: ignore[dict-item]
    body["points"] = points
    if q.get("endurance_thrust_n"):
        body["endurance"] = {"thrust_n": q["endurance_thrust_n"]}
    if q.get("heat") == "on":
        body["heat"] = {"burst_s": q.get("burst_s") or 0}
        if q.get("heat_motor_mass_g"):
            body["heat"]["motor_mass_g"] = q["heat_motor_mass_g"]
    return body


@router.get("/predict", response_class=HTMLResponse)
def predict_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    q = {k: v.strip() for k, v in request.query_params.items()}
    options = {kind: parts_service.list_parts(session, team_id=caller.team_id, kind=kind, page_size=500)[0]
               for kind in ("batteries", "escs", "motors", "propellers")}
    defaults = {"throttles": "1.0", "rotor_count": "4", "state_of_charge": "1.0", "altitude_m": "0"}
    values = q if q.get("submitted") else {**defaults, **q}
    result: dict[str, Any] | None = None
    errors: list[str] = []
    chart: dict[str, Any] | None = None
    if q.get("submitted"):
        try:
            model = PredictRequest.model_validate(build_request(q))
            result = predict_service.predict(session, caller.team_id, model)
            system = predict_service.System(session, caller.team_id, model)
            chart = predict_service.chart_data(system, result)
            for point, loss in zip((k for p in result["points"] for k in p["request"].items()), chart["losses"],
                                   strict=True):
                loss["label"] = POINT_WORDS.get(point[0], point[0] + " {:g}").format(point[1])
        except (ValidationError, DomainError) as exc:
            errors = error_lines(exc)
    return render(request, "pages/predict.html", {
        "caller": caller, "nav": "predict", "options": options, "values": values, "overrides": OVERRIDES,
        "result": result, "errors": errors, "chart": chart,
    }, block="results", status_code=422 if errors else 200)
