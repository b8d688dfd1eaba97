"""R_th from bench runs that carry winding temperatures: a synthetic round trip through upload, refit and predict.

The sweeps are the published 5-inch ones (tests/data/reference/bench-5in); their winding temperatures are
synthetic, made from a known R_th with the motor's own calibrated Kv, R and I0 (docs/model-reference.md#heat), so
this checks the fitter and its plumbing, never a published value.
"""

from __future__ import annotations

import numpy as np
import pytest
from fastapi.testclient import TestClient

from server.physics import thermal
from tests.api.test_bench_runs import calibration_of, csv_of, stand, upload, upload_sweeps  # noqa: F401
from tests.factories import TeamFixture

TRUE_R_TH_K_PER_W = 3.0  # invented for the round trip
AIR_C = 22.0


def _with_temperatures(content: str, kv: float, winding_ohm: float, no_load_a: float) -> str:
    """The sweep with a temperature_c column: the steady winding temperature each step would settle at."""
    lines = content.strip().splitlines()
    out = [lines[0] + ",temperature_c"]
    for line in lines[1:]:
        throttle, _, current, rpm, _ = (float(v) for v in line.split(","))
        duty = max(throttle, 1e-3)
        emf = rpm * 2 * np.pi / 60 / (kv * 2 * np.pi / 60)
        t, _ = thermal.steady_winding_temperature_c(AIR_C, current / duty, winding_ohm, no_load_a * emf,
                                                    TRUE_R_TH_K_PER_W)
        out.append(f"{line},{float(t):.4f}")
    return "\n".join(out) + "\n"


def test_thermal_resistance_is_calibrated_from_winding_temperatures(
        client: TestClient, stand: tuple[TeamFixture, dict[str, int]]) -> None:  # noqa: F811
    team, ids = stand
    h = team.headers()
    upload_sweeps(client, team, ids)
    motor_cal = next(c for c in client.get(f"/api/v1/parts/motors/{ids['motor']}/calibrations", headers=h).json()
                     if c["active"])
    assert "thermal_resistance_k_per_w" not in motor_cal["parameters"]  # no temperatures yet
    values = {k: motor_cal["parameters"][k]["value"] for k in ("kv_rpm_per_v", "winding_resistance_ohm",
                                                                "no_load_current_a")}
    content = _with_temperatures(csv_of("m_a_p_1_v11p1"), values["kv_rpm_per_v"], values["winding_resistance_ohm"],
                                 values["no_load_current_a"])
    response = upload(client, team, ids, content, supply_voltage_v=11.1, air_temperature_c=AIR_C)
    assert response.status_code == 201, response.text
    calibration = calibration_of(client, team, response)
    motor = next(c for c in calibration["calibrations"] if c["part_kind"] == "motors")
    fitted = motor["parameters"]["thermal_resistance_k_per_w"]
    assert fitted["status"] == "identified" and fitted["unit"] == "K/W" and fitted["stderr"] is not None
    # the refit with the fifth run moves Kv, R and I0 a little, so R_th comes back close, not exact
    assert fitted["value"] == pytest.approx(TRUE_R_TH_K_PER_W, rel=0.05)
    assert "thermal resistance fitted" in motor["notes"]
    # predict takes it as calibrated, and the heat block uses it
    body = client.post("/api/v1/predict", json={
        "battery": {"supply_voltage_v": 11.1}, "motor": {"id": ids["motor"]}, "esc": {"id": ids["esc"]},
        "propeller": {"id": ids["prop"]}, "points": [{"throttle": 0.6}], "heat": {}}, headers=h).json()
    assert body["parameters"]["motor"]["thermal_resistance_k_per_w"]["source"] == "calibrated"
    assert body["heat"]["thermal_resistance_k_per_w"] == pytest.approx(fitted["value"], rel=1e-12)
