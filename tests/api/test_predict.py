"""POST /api/v1/predict and `liftmatch predict` reproduce the model reference's check cases, and agree exactly.

Reference values (docs/model-reference.md): OP-*, ESC-* and BAT-*, all [CALC] from the Drela (2007)
first-order motor model, the Mohan (2003) / Erickson (2001) converter loss formulas and the hobby OCV table.
"""

from __future__ import annotations

import io
import json
import sys
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.cli import main
from tests.conftest import TEST_SECRET
from tests.factories import TeamFixture, make_team, part_payload

# MOT check-case motor (Kv 920, R 0.10 Ω, I0 0.5 A) and 10x7 propeller (CT 0.1564, CP 0.0763, D 0.254 m).
MOTOR = {"kv_rpm_per_v": 920, "winding_resistance_ohm": 0.1, "no_load_current_a": 0.5, "inductance_uh": 1e5}
PROP = {"diameter_in": 10, "pitch_in": 7, "ct": 0.1564, "cp": 0.0763}
# The OP and BAT check cases leave out every partial-throttle term, the calibrated one too: k_pwm = 0 is stated (an
# ESC that states nothing would take the k_pwm prior, docs/model-reference.md#uncertainty).
LOSSLESS_ESC = {"r_on_path_ohm": 0, "switching_time_ns": 0, "dead_time_ns": 0, "diode_drop_v": 0, "input_esr_ohm": 0,
                "k_pwm": 0}
ESC_DEFAULTS_CASE = {"r_on_path_ohm": 0.010, "pwm_frequency_khz": 24, "switching_time_ns": 200, "dead_time_ns": 500,
                     "diode_drop_v": 0.8, "input_esr_ohm": 0.02, "k_pwm": 0}


def request(**over: Any) -> dict[str, Any]:
    base: dict[str, Any] = {"battery": {"supply_voltage_v": 11.1}, "esc": LOSSLESS_ESC, "motor": MOTOR,
                            "propeller": PROP, "points": [{"throttle": 1.0}]}
    return {**base, **over}


def rel(a: float, b: float) -> float:
    return abs(a - b) / abs(b)


@pytest.fixture
def team(app: FastAPI, client: TestClient) -> TeamFixture:
    return make_team(app)


def api(client: TestClient, team: TeamFixture, body: dict[str, Any]) -> dict[str, Any]:
    response = client.post("/api/v1/predict", json=body, headers=team.headers("read"))
    assert response.status_code == 200, response.text
    result: dict[str, Any] = response.json()
    return result


def cli(db_url: str, body: dict[str, Any], monkeypatch: pytest.MonkeyPatch,
        capsys: pytest.CaptureFixture[str]) -> tuple[int, dict[str, Any] | None, str]:
    monkeypatch.setenv("LIFTMATCH_DATABASE_URL", db_url)
    monkeypatch.setenv("LIFTMATCH_SECRET_KEY", TEST_SECRET)
    monkeypatch.setattr(sys, "stdin", io.StringIO(json.dumps(body)))
    code = main(["predict", "-"])
    out = capsys.readouterr()
    return code, (json.loads(out.out) if code == 0 else None), out.err


def test_op1_op2_stiff_bus(client: TestClient, team: TeamFixture) -> None:
    out = api(client, team, request(points=[{"throttle": 1.0}, {"throttle": 0.6}]))
    op1, op2 = out["points"]
    # OP-1 [CALC]
    assert rel(op1["rpm"], 7806.35) < 1e-5 and rel(op1["motor_current_a"], 26.1484) < 1e-5
    assert rel(op1["thrust_n"], 13.4990) < 1e-5 and rel(op1["shaft_power_w"], 217.631) < 1e-5
    assert rel(op1["electrical_power_w"], 290.247) < 1e-5
    # OP-2 [CALC]
    assert rel(op2["rpm"], 5081.39) < 1e-5 and rel(op2["motor_current_a"], 11.3675) < 1e-5
    assert rel(op2["thrust_n"], 5.71967) < 1e-5 and rel(op2["shaft_power_w"], 60.0238) < 1e-5


def test_op3_op4_op5_shared_sagging_bus(client: TestClient, team: TeamFixture) -> None:
    body = request(battery={"supply_voltage_v": 12.0, "wiring_resistance_ohm": 0.030}, rotor_count=4,
                   all_up_mass_g=2000, points=[{"throttle": 0.7}, {"thrust_n": 4.90332}, {"throttle": 1.0}])
    op3, op4, op5 = api(client, team, body)["points"]
    # OP-3 [CALC]
    assert rel(op3["rpm"], 5674.79) < 1e-5 and rel(op3["motor_current_a"], 14.0539) < 1e-5
    assert rel(op3["craft"]["bus_current_a"], 39.3508) < 1e-5 and rel(op3["bus_voltage_v"], 10.81948) < 1e-5
    assert rel(op3["thrust_n"], 7.13353) < 1e-5
    # OP-4 [CALC]
    assert rel(op4["duty"], 0.536186) < 1e-5 and rel(op4["bus_voltage_v"], 11.36839) < 1e-5
    assert rel(op4["craft"]["bus_current_a"], 21.0537) < 1e-5
    assert rel(op4["craft"]["electrical_power_w"], 239.347) < 1e-5
    # OP-5 / RULE-2 [CALC]: T/W 2.1460 for the 2.000 kg quad
    assert rel(op5["thrust_n"], 10.5226) < 1e-4 and rel(op5["craft"]["thrust_to_weight"], 2.1460) < 1e-4


def test_esc1_esc2_partial_throttle_costs_power(client: TestClient, team: TeamFixture) -> None:
    esc = {**ESC_DEFAULTS_CASE}
    two_s = api(client, team, request(battery={"supply_voltage_v": 7.6}, esc=esc,
                                      motor={**MOTOR, "inductance_uh": 30}))["points"][0]
    # ESC-1 [CALC]
    assert rel(two_s["rpm"], 5603.84) < 1e-5 and rel(two_s["motor_current_a"], 13.7170) < 1e-5
    assert rel(two_s["electrical_power_w"], 104.2495) < 1e-5
    three_s = api(client, team, request(battery={"supply_voltage_v": 11.4}, esc=esc,
                                        motor={**MOTOR, "inductance_uh": 30},
                                        points=[{"rpm": two_s["rpm"]}]))["points"][0]
    # ESC-2 [PUB formulas + CALC]
    assert abs(three_s["duty"] - 0.666667) < 1e-4
    losses = three_s["losses_w"]
    assert abs(losses["pwm_ripple"] - 0.1135) < 1e-4 and abs(losses["switching"] - 0.3753) < 1e-4
    assert abs(losses["dead_time"] - 0.2634) < 1e-4 and abs(losses["input_capacitor"] - 0.8363) < 1e-4
    assert abs(three_s["electrical_power_w"] - 105.8379) < 1e-3
    assert three_s["drive_efficiency"] < two_s["drive_efficiency"]


def test_bat7_constant_power_and_bat8_constant_thrust(client: TestClient, team: TeamFixture) -> None:
    # BAT-7 [CALC]: 300 W, 4S 5000 mAh, 6 mΩ/cell → 729.08 s (tolerance 0.5 %)
    bat7 = api(client, team, request(
        battery={"cells_series": 4, "capacity_mah": 5000, "cell_resistance_mohm": 6},
        endurance={"power_w": 300}))
    assert rel(bat7["endurance"]["seconds"], 729.08) < 0.005
    assert rel(bat7["endurance"]["start"]["bus_current_a"], 18.3375) < 1e-4
    # BAT-8 [CALC]: OP-4 quad on 3S 5000 mAh, 10 mΩ/cell → 667.82 s
    bat8 = api(client, team, request(
        battery={"cells_series": 3, "capacity_mah": 5000, "cell_resistance_mohm": 10}, rotor_count=4,
        endurance={"thrust_n": 4.90332}))
    end = bat8["endurance"]
    assert rel(end["seconds"], 667.82) < 0.005 and end["stop_reason"] == "usable_capacity"
    assert rel(end["start"]["duty"], 0.50789) < 1e-4 and rel(end["start"]["bus_current_a"], 19.9427) < 1e-4
    assert rel(end["end"]["duty"], 0.58017) < 1e-4 and rel(end["end"]["bus_voltage_v"], 10.5066) < 1e-4


def test_the_endurance_band_march_step_moves_the_band_far_less_than_its_width(
    client: TestClient, team: TeamFixture, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The endurance band's draws fly a coarser SOC step than the central value; against the reference step the band
    moves by under 1 % of its own width (the BAT-8 case)."""
    from server.services import predict as predict_service

    body = request(battery={"cells_series": 3, "capacity_mah": 5000, "cell_resistance_mohm": 10}, rotor_count=4,
                   esc={**LOSSLESS_ESC, "k_pwm": 0.3}, endurance={"thrust_n": 4.90332})
    coarse = api(client, team, body)["endurance"]
    monkeypatch.setattr(predict_service, "BAND_SOC_STEP", 0.01)
    fine = api(client, team, body)["endurance"]
    assert coarse["minutes"] == fine["minutes"]
    (lo_c, hi_c), (lo_f, hi_f) = coarse["minutes_band"], fine["minutes_band"]
    assert lo_f < coarse["minutes"] < hi_f
    assert max(abs(lo_c - lo_f), abs(hi_c - hi_f)) < 0.01 * (hi_f - lo_f)


def test_cli_gives_the_same_numbers_as_the_api(
    client: TestClient, team: TeamFixture, db_url: str, monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    body = request(battery={"cells_series": 3, "capacity_mah": 5000, "cell_resistance_mohm": 10}, rotor_count=4,
                   esc=ESC_DEFAULTS_CASE, points=[{"throttle": 1.0}, {"thrust_n": 4.9}, {"rpm": 5600}],
                   endurance={"thrust_n": 4.9})
    code, from_cli, _ = cli(db_url, body, monkeypatch, capsys)
    assert code == 0
    assert from_cli == api(client, team, body)


def test_cli_invalid_input_exits_2_with_the_field(
    db_url: str, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _, err = cli(db_url, request(motor={**MOTOR, "kv_rpm_per_v": -5}), monkeypatch, capsys)
    assert code == 2 and "motor.kv_rpm_per_v" in err and "between 10 and 20000" in err


@pytest.mark.parametrize(
    ("patch", "field"),
    [
        ({"motor": {**MOTOR, "kv_rpm_per_v": 0}}, "motor.kv_rpm_per_v"),
        ({"propeller": {**PROP, "diameter_in": float("inf")}}, "propeller.diameter_in"),
        ({"points": [{"throttle": 1.5}]}, "points.0.throttle"),
        ({"points": [{"throttle": 0.5, "rpm": 4000}]}, "points"),
        ({"points": []}, "points"),
        ({"battery": {"supply_voltage_v": -3}}, "battery.supply_voltage_v"),
        ({"all_up_mass_g": -10}, "all_up_mass_g"),
        ({"motor": {"kv_rpm_per_v": 920}}, "motor.winding_resistance_ohm"),
        ({"propeller": {"diameter_in": 10}}, "propeller.ct"),
        ({"conditions": {"airspeed_m_s": 10}}, "propeller.forward_table"),
        ({"endurance": {"thrust_n": 4}}, "endurance"),
        ({"motor": {"id": 999999}}, "motor.id"),
    ],
)
def test_bad_input_is_422_naming_the_field(
    client: TestClient, team: TeamFixture, patch: dict[str, Any], field: str
) -> None:
    body = json.dumps(request(**patch)).replace("Infinity", "1e999")
    response = client.post("/api/v1/predict", content=body,
                           headers={**team.headers("read"), "content-type": "application/json"})
    assert response.status_code == 422, response.text
    assert response.headers["content-type"].startswith("application/problem+json")
    fields = [e["field"] for e in response.json()["errors"]]
    assert any(f == field or f.startswith(field + ".") for f in fields), fields


def test_saved_parts_by_id_with_overrides_and_sources(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    motor = client.post("/api/v1/parts/motors", json=part_payload("motors", inductance_uh=None), headers=h).json()
    prop = client.post("/api/v1/parts/propellers", json=part_payload("propellers"), headers=h).json()
    out = api(client, team, request(motor={"id": motor["id"], "no_load_current_a": 0.7},
                                    propeller={"id": prop["id"]}, esc={}))
    params = out["parameters"]
    # stated on the part, not measured: the Kv label's spread (15 %, the same as the calibration's Kv prior)
    assert params["motor"]["kv_rpm_per_v"] == {"value": 920, "source": "part", "unit": "rpm/V",
                                               "sd": pytest.approx(0.15 * 920), "origin": None,
                                               "used": True}
    assert params["motor"]["no_load_current_a"]["source"] == "request"
    assert params["motor"]["inductance_uh"]["source"] == "prior"
    frequency = params["esc"]["pwm_frequency_khz"]
    assert (frequency["value"], frequency["source"], frequency["unit"]) == (24.0, "prior", "kHz")
    assert frequency["sd"] > 0 and "from memory" in frequency["origin"]
    k_pwm = params["esc"]["k_pwm"]  # no bench run, and the team has calibrated no ESC: the published prior
    assert k_pwm["source"] == "prior" and k_pwm["value"] == pytest.approx(0.4655) and "5-inch" in k_pwm["origin"]
    assert params["propeller"]["static_table"]["source"] == "part"
    # The part has constants and a table; the model reads the table, and says the constants go unused.
    ct = params["propeller"]["ct"]
    assert (ct["value"], ct["source"], ct["unit"], ct["used"]) == (0.11, "part", "", False)
    assert params["propeller"]["cp"]["used"] is False and params["propeller"]["static_table"]["used"] is True
    other = make_team(client.app, "Other")  # type: ignore[arg-type]
    response = client.post("/api/v1/predict", json=request(motor={"id": motor["id"]}), headers=other.headers())
    assert response.status_code == 422 and response.json()["errors"][0]["field"] == "motor.id"


def test_warnings_for_over_current_and_tip_mach(client: TestClient, team: TeamFixture) -> None:
    body = request(motor={**MOTOR, "kv_rpm_per_v": 2500, "max_current_a": 20},
                   esc={**LOSSLESS_ESC, "continuous_current_a": 25}, propeller={**PROP, "diameter_in": 5},
                   battery={"supply_voltage_v": 22.2})
    point = api(client, team, body)["points"][0]
    text = " ".join(point["warnings"])
    assert "above the motor's rating of 20 A" in text and "above the ESC's continuous rating" in text
    assert "tip Mach" in text
