"""Bench-run API: upload (multipart) → stored, flagged, calibrated; predict then uses the calibration.

Sweeps are the published 5-inch bench data in tests/data/reference/bench-5in (StrawsonDesign/
motor_propeller_testing, P. Cao and J. Strawson, 2018, MIT licence; see PROVENANCE.md), written out in our CSV format.
"""

from __future__ import annotations

import json
import time
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.db import transaction
from server.models import BenchRun, BenchSample, Calibration
from server.services import calibrations
from tests.bench_runs.reference import load_tests
from tests.bench_runs.test_idle_thrust import csv_of as reference_csv
from tests.factories import TeamFixture, make_team, part_payload


def csv_of(test_id: str) -> str:
    """A published sweep in our CSV format, every value as published (the bench's empty rpm means 0)."""
    return reference_csv(load_tests()[test_id])


@pytest.fixture
def stand(app: FastAPI, client: TestClient) -> tuple[TeamFixture, dict[str, int]]:
    team = make_team(app)
    h = team.headers()
    ids = {
        "motor": client.post(
            "/api/v1/parts/motors",
            headers=h,
            json=part_payload(
                "motors",
                name="2205 2600",
                kv_rpm_per_v=2600,
                winding_resistance_ohm=None,
                no_load_current_a=None,
                max_cells=4,
                mass_g=30,
            ),
        ).json()["id"],
        **{
            key: client.post(
                "/api/v1/parts/propellers",
                headers=h,
                json=part_payload(
                    "propellers",
                    name=name,
                    diameter_in=5,
                    pitch_in=pitch,
                    blades=3,
                    ct=None,
                    cp=None,
                    static_table=None,
                    mass_g=4,
                ),
            ).json()["id"]
            for key, name, pitch in (("prop", "5x4x3", 4), ("prop2", "5x4.5x3", 4.5))
        },
        "esc": client.post("/api/v1/parts/escs", headers=h, json=part_payload("escs")).json()["id"],
    }
    return team, ids


FOUR_SWEEPS = (
    ("m_a_p_1_v7p4", "prop"),
    ("m_a_p_1_v11p1", "prop"),
    ("m_a_p_2_v7p4", "prop2"),
    ("m_a_p_2_v11p1", "prop2"),
)


def upload_sweeps(
    client: TestClient, team: TeamFixture, ids: dict[str, int], sweeps: tuple[tuple[str, str], ...] = FOUR_SWEEPS
) -> Any:
    """Upload reference sweeps (test id, which propeller); returns the last response."""
    response = None
    for test_id, prop in sweeps:
        response = upload(
            client, team, ids | {"prop": ids[prop]}, csv_of(test_id), supply_voltage_v=7.4 if "7p4" in test_id else 11.1
        )
        assert response.status_code == 201, response.text
    calibration_of(client, team, response)  # the refit that includes the last run has finished
    return response


def calibration_of(client: TestClient, team: TeamFixture, response: Any, timeout_s: float = 60) -> dict[str, Any]:
    """The upload's calibration once its refit job has finished (the upload itself answers before)."""
    status = response.json()["calibration"]
    deadline = time.monotonic() + timeout_s
    while status["status"] in ("queued", "running"):
        assert time.monotonic() < deadline, status
        time.sleep(0.05)
        status = client.get(status["url"], headers=team.headers("read")).json()
    assert status["status"] == "done", status
    return dict(status)


def upload(client: TestClient, team: TeamFixture, ids: dict[str, int], content: str, **meta: object):  # type: ignore[no-untyped-def]
    body = {"motor_id": ids["motor"], "propeller_id": ids["prop"], "esc_id": ids["esc"], **meta}
    return client.post(
        "/api/v1/bench-runs",
        headers=team.headers(),
        data={"metadata": json.dumps(body)},
        files={"file": ("sweep.csv", content, "text/csv")},
    )


def test_unknown_motor_data_needs_a_bench_run_then_predict_uses_the_calibration(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]]
) -> None:
    team, ids = stand
    h = team.headers()
    request = {
        "battery": {"supply_voltage_v": 11.1},
        "esc": {"id": ids["esc"]},
        "motor": {"id": ids["motor"]},
        "propeller": {"id": ids["prop"]},
        "points": [{"thrust_n": 3.0}],
    }
    missing = client.post("/api/v1/predict", json=request, headers=h)
    assert missing.status_code == 422
    assert {"motor.winding_resistance_ohm", "motor.no_load_current_a"} <= {e["field"] for e in missing.json()["errors"]}
    first = upload(client, team, ids, csv_of("m_a_p_1_v7p4"), supply_voltage_v=7.4)
    assert first.status_code == 201, first.text
    # One motor, one propeller, one voltage cannot separate motor losses from ESC losses: nothing is claimed.
    assert first.json()["calibration"]["status"] in ("queued", "running", "done")  # the upload does not wait
    alone = {c["part_kind"]: c for c in calibration_of(client, team, first)["calibrations"]}
    assert alone["motors"]["parameters"]["winding_resistance_ohm"]["status"] == "fixed"
    assert "do not determine it" in alone["motors"]["notes"]
    last = upload_sweeps(client, team, ids, FOUR_SWEEPS[1:])
    body = last.json()
    calibration = calibration_of(client, team, last)
    assert calibration["error"] is None
    kinds = {c["part_kind"]: c for c in calibration["calibrations"]}
    assert set(kinds) == {"escs", "motors", "propellers"}
    motor = kinds["motors"]["parameters"]
    assert motor["kv_rpm_per_v"]["status"] == "identified" and motor["kv_rpm_per_v"]["stderr"] > 0
    assert 1800 < motor["kv_rpm_per_v"]["value"] < 3000
    assert kinds["escs"]["parameters"]["k_pwm"]["status"] == "identified"
    predicted = client.post("/api/v1/predict", json=request, headers=h)
    assert predicted.status_code == 200, predicted.text
    sources = predicted.json()["parameters"]
    assert sources["motor"]["winding_resistance_ohm"]["source"] == "calibrated"
    assert sources["esc"]["k_pwm"]["source"] == "calibrated"
    assert sources["propeller"]["static_table"]["source"] == "calibrated"
    detail = client.get(f"/api/v1/bench-runs/{body['id']}", headers=h).json()
    powered = [s for s in detail["samples"] if s["flag"] is None and s["thrust_n"] > 0.5]
    residuals = sorted(abs(s["residual_power"]) for s in powered if s["residual_power"] is not None)
    assert residuals and residuals[len(residuals) // 2] < 0.10  # the fit describes its own data
    # The "use this calibration" switch: turning it off brings back the entered (here: unknown) values.
    motor_cal = kinds["motors"]["id"]
    assert (
        client.patch(f"/api/v1/calibrations/{motor_cal}", json={"active": False}, headers=h).json()["active"] is False
    )
    assert client.post("/api/v1/predict", json=request, headers=h).status_code == 422


def test_flagged_rows_are_kept_but_not_fitted(client: TestClient, stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    limited = next(t for t in load_tests().values() if t.supply_limited.any() and t.motor_id == "m_a")
    response = upload(client, team, ids, csv_of(limited.test_id), supply_voltage_v=11.1)
    assert response.status_code == 201
    assert response.json()["flags"].get("supply_collapsed", 0) >= 1
    assert response.json()["flagged_count"] >= int(limited.supply_limited.sum()) - 1


@pytest.mark.parametrize(
    ("content", "field", "row"),
    [
        ("", "file", None),
        ("throttle,bus_voltage_v,bus_current_a,rpm\n0.5,11,3,5000\n", "thrust_n", 1),
        ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n0.5,11,3,5000,abc\n", "thrust_n", 2),
        ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n0.5,11,-3,5000,2\n", "bus_current_a", 2),
        ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n1.5,11,3,5000,2\n", "throttle", 2),
        ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n0.5,nan,3,5000,2\n", "bus_voltage_v", 2),
        ("throttle,throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n0.5,0.5,11,3,5000,2\n", "throttle", 1),
        ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n,thrust_g\n0.5,11,3,5000,2,200\n", "thrust_g", 1),
    ],
)
def test_malformed_csv_is_422_with_row_and_column_and_nothing_saved(
    client: TestClient,
    stand: tuple[TeamFixture, dict[str, int]],
    app: FastAPI,
    content: str,
    field: str,
    row: int | None,
) -> None:
    team, ids = stand
    response = upload(client, team, ids, content, supply_voltage_v=11.1)
    assert response.status_code == 422, response.text
    errors = response.json()["errors"]
    assert any(e["field"] == field and e.get("row") == row for e in errors), errors
    with transaction(app.state.sessionmaker) as session:
        assert session.query(BenchRun).count() == 0 and session.query(BenchSample).count() == 0
        assert session.query(Calibration).count() == 0


def test_too_many_rows_and_bad_metadata(client: TestClient, stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    big = "throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n" + "0.5,11,3,5000,2\n" * 10_001
    assert upload(client, team, ids, big, supply_voltage_v=11.1).status_code == 422
    both = upload(client, team, ids, csv_of("m_a_p_1_v7p4"), supply_voltage_v=7.4, pack_id=1)
    assert both.status_code == 422 and both.json()["errors"][0]["field"].startswith("metadata")
    foreign = upload(client, team, ids | {"motor": 99999}, csv_of("m_a_p_1_v7p4"), supply_voltage_v=7.4)
    assert foreign.status_code == 422 and foreign.json()["errors"][0]["field"] == "motor_id"


def test_calibrate_on_demand_and_list(client: TestClient, stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    h = team.headers()
    assert client.post(f"/api/v1/parts/motors/{ids['motor']}/calibrate", headers=h).status_code == 422  # no runs
    calibration_of(client, team, upload(client, team, ids, csv_of("m_a_p_1_v7p4"), supply_voltage_v=7.4))
    again = client.post(f"/api/v1/parts/motors/{ids['motor']}/calibrate", headers=h)
    assert again.status_code == 200 and again.json()["calibration"]["part_id"] == ids["motor"]
    history = client.get(f"/api/v1/parts/motors/{ids['motor']}/calibrations", headers=h).json()
    assert len(history) == 2 and [c["active"] for c in history] == [True, False]
    assert client.get("/api/v1/bench-runs", headers=h).json()[0]["sample_count"] > 5
    other = make_team(client.app, "Other")  # type: ignore[arg-type]
    assert client.get("/api/v1/bench-runs", headers=other.headers()).json() == []


def test_rankings_use_the_calibration(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]], app: FastAPI
) -> None:
    """A ranking's snapshot carries the calibrated values (and says which) instead of the entered ones."""
    from server.models import Mission
    from server.services.ranking_inputs import snapshot

    team, ids = stand
    h = team.headers()
    upload_sweeps(client, team, ids)
    airframe = client.post(
        "/api/v1/airframes", json={"name": "5 in quad", "rotor_count": 4, "frame_mass_g": 300}, headers=h
    ).json()["id"]
    mission_id = client.post(
        "/api/v1/missions", json={"name": "Hover", "airframe_id": airframe, "kind": "hover"}, headers=h
    ).json()["id"]
    with app.state.sessionmaker() as session:
        mission = session.get(Mission, mission_id)
        assert mission is not None
        snap = snapshot(session, team_id=team.team_id, mission=mission)
    motor = next(m for m in snap["parts"]["motors"] if m["id"] == ids["motor"])
    assert {"kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a"} <= set(motor["calibrated"])
    assert motor["winding_resistance_ohm"] is not None  # unknown on the part, known from the bench
    esc = next(e for e in snap["parts"]["escs"] if e["id"] == ids["esc"])
    assert "k_pwm" in esc["calibrated"] and esc["k_pwm"] > 0
    prop = next(p for p in snap["parts"]["propellers"] if p["id"] == ids["prop"])
    assert prop["calibrated"] == ["static_table"] and len(prop["static_table"]) >= 3
    started = client.post("/api/v1/rankings", json={"mission_id": mission_id}, headers=h)
    assert started.status_code == 202


def test_an_idle_load_cell_offset_is_stored_and_flagged(client: TestClient,
                                                         stand: tuple[TeamFixture, dict[str, int]]) -> None:
    team, ids = stand
    response = upload(client, team, ids, csv_of("m_e_p_5_v7p4"), supply_voltage_v=7.4)  # first row: -0.0016 N
    assert response.status_code == 201, response.text
    assert response.json()["flags"]["thrust_offset"] == 1
    detail = client.get(f"/api/v1/bench-runs/{response.json()['id']}", headers=team.headers()).json()
    idle = detail["samples"][0]
    assert idle["thrust_n"] == -0.0016 and "thrust_offset" in idle["flag"] and "zero offset" in idle["flag_text"]


def test_a_clearly_negative_sample_mid_run_is_rejected_with_row_and_column(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]], app: FastAPI
) -> None:
    team, ids = stand
    lines = csv_of("m_e_p_5_v7p4").splitlines()
    lines[6] = ",".join([*lines[6].split(",")[:4], "-0.8"])
    response = upload(client, team, ids, "\n".join(lines) + "\n", supply_voltage_v=7.4)
    assert response.status_code == 422, response.text
    assert [(e["field"], e["row"]) for e in response.json()["errors"]] == [("thrust_n", 7)]
    with transaction(app.state.sessionmaker) as session:
        assert session.query(BenchRun).count() == 0


def test_a_reversed_load_cell_is_named_and_thrust_sign_flips_it(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]]
) -> None:
    team, ids = stand
    h = team.headers()
    # m_m is the collection's 1806-size motor whose data point to about 1400 rpm/V (PROVENANCE.md)
    motor = client.post("/api/v1/parts/motors", headers=h, json=part_payload(
        "motors", name="1806 1400", kv_rpm_per_v=1400, winding_resistance_ohm=None, no_load_current_a=None,
        max_cells=4, mass_g=20)).json()["id"]
    prop = client.post("/api/v1/parts/propellers", headers=h, json=part_payload(
        "propellers", name="5x5.3x3", diameter_in=5, pitch_in=5.3, blades=3, ct=None, cp=None, static_table=None,
        mass_g=4)).json()["id"]
    stand_ids = ids | {"motor": motor, "prop": prop}
    rejected = upload(client, team, stand_ids, csv_of("m_m_p_8_v11p1"), supply_voltage_v=11.1)
    assert rejected.status_code == 422
    (error,) = rejected.json()["errors"]
    assert error["field"] == "thrust_n" and "load cell looks reversed" in error["message"]
    assert "thrust_sign -1" in error["message"]
    bad_sign = upload(client, team, stand_ids, csv_of("m_m_p_8_v11p1"), supply_voltage_v=11.1, thrust_sign=2)
    assert bad_sign.status_code == 422 and bad_sign.json()["errors"][0]["field"] == "metadata.thrust_sign"
    for test_id, volts in (("m_m_p_8_v7p4", 7.4), ("m_m_p_8_v11p1", 11.1)):  # both runs of this pair are reversed
        flipped = upload(client, team, stand_ids, csv_of(test_id), supply_voltage_v=volts, thrust_sign=-1)
        assert flipped.status_code == 201, flipped.text
    body = flipped.json()
    assert body["thrust_sign"] == -1
    calibration = calibration_of(client, team, flipped)
    assert calibration["error"] is None
    fitted = {c["part_kind"]: c for c in calibration["calibrations"]}
    assert fitted["propellers"]["parameters"]["static_table"]["status"] == "identified"
    kv = fitted["motors"]["parameters"]["kv_rpm_per_v"]
    # PROVENANCE: the label reads 2400 or 1400 and the data point to about 1400 (measured here: 1529 ± 2)
    assert kv["status"] == "identified" and 1200 < kv["value"] < 1800
    detail = client.get(f"/api/v1/bench-runs/{body['id']}", headers=h).json()
    assert detail["run"]["thrust_sign"] == -1
    assert detail["samples"][-1]["thrust_n"] == 2.3087  # stored corrected: the published -2.3087 N, flipped
    assert all(s["thrust_coefficient"] > 0 for s in detail["samples"] if s["flag"] is None)


def test_prediction_bands_shrink_as_bench_runs_are_added(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]]
) -> None:
    """Published sweeps (bench-5in, Cao & Strawson 2018): before any bench run the prediction rests on stated values
    (datasheet-like R, I0 and coefficients, the Kv label) and the ESC's k_pwm prior; once the sweeps are calibrated
    the 80 % band of the predicted power is much narrower."""
    team, ids = stand
    h = team.headers()
    stated = {"motor": {"id": ids["motor"], "winding_resistance_ohm": 0.09, "no_load_current_a": 0.8},
              "propeller": {"id": ids["prop"], "ct": 0.13, "cp": 0.07}}
    request = {"battery": {"supply_voltage_v": 11.1}, "esc": {"id": ids["esc"]}, "motor": {"id": ids["motor"]},
               "propeller": {"id": ids["prop"]}, "points": [{"thrust_n": 3.0}]}

    def width(body: dict[str, Any]) -> float:
        response = client.post("/api/v1/predict", json=body, headers=h)
        assert response.status_code == 200, response.text
        point = response.json()["points"][0]
        lo, hi = point["bands"]["electrical_power_w"]
        assert lo <= point["electrical_power_w"] <= hi
        return float((hi - lo) / point["electrical_power_w"])

    before = width(request | stated)
    upload_sweeps(client, team, ids)
    after = width(request)
    assert after < 0.5 * before, (before, after)


def test_a_tested_esc_is_not_beaten_by_its_untested_twin(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]]
) -> None:
    """Two ESCs with the same stated values, one calibrated on the published 5-inch sweeps (Cao & Strawson 2018):
    the untested one takes the team's pooled k_pwm (source 'prior') instead of a free zero, so the ranking no
    longer puts it first; its rows carry bands, 'assumed' and the indistinguishable flag."""
    from tests.api.test_rankings import wait_done

    team, ids = stand
    h = team.headers()
    upload_sweeps(client, team, ids)
    twin = client.post("/api/v1/parts/escs", headers=h, json=part_payload("escs", name="Untested twin")).json()["id"]
    pack = client.post("/api/v1/parts/batteries", headers=h, json=part_payload(
        "batteries", name="3S 1800", cells_series=3, capacity_mah=1800, mass_g=160, cell_resistance_mohm=4,
        max_continuous_c=100, max_burst_c=150))
    assert pack.status_code == 201, pack.text
    airframe = client.post("/api/v1/airframes", headers=h,
                           json={"name": "5 in quad", "rotor_count": 4, "frame_mass_g": 250}).json()["id"]
    mission = client.post("/api/v1/missions", headers=h, json={
        "name": "Hover", "airframe_id": airframe, "kind": "hover", "min_thrust_to_weight": 1.5,
        "min_endurance_min": 0}).json()["id"]
    started = client.post("/api/v1/rankings", json={"mission_id": mission, "top_n": 20}, headers=h)
    assert started.status_code == 202, started.text
    status = wait_done(client, h, started.json()["id"])
    assert status["feasible"] >= 2, status["rejected"]
    rows = client.get(f"/api/v1/rankings/{started.json()['id']}/results?page_size=100", headers=h).json()["items"]
    by_esc = {r["esc_id"]: r for r in reversed(rows)}  # each ESC's best row
    tested, untested = by_esc[ids["esc"]], by_esc[twin]
    assert tested["rank"] < untested["rank"]
    assert "k_pwm" in untested["assumed"]["esc"] and "k_pwm" not in tested["assumed"]["esc"]
    # the same power system but for the ESC: the pooled prior reproduces the tested ESC's loss, not zero
    same = next(r for r in rows if r["esc_id"] == twin and all(
        r[k] == tested[k] for k in ("battery_id", "motor_id", "propeller_id", "packs_in_parallel")))
    assert same["cruise"]["electrical_power_w"] == pytest.approx(tested["cruise"]["electrical_power_w"], rel=1e-9)
    assert same["cruise"]["losses"]["calibrated_pwm_w"] > 0
    for r in rows:
        lo, hi = r["cruise"]["electrical_power_w_band"]
        tw_lo, tw_hi = r["full_throttle"]["thrust_to_weight_band"]
        assert lo < hi and tw_lo < tw_hi
        assert r["endurance_min_band"][0] < r["endurance_min_band"][1]
        assert 0.0 <= r["feasible_share"] <= 1.0
    assert rows[0]["indistinguishable_from_best"] is True
    assert same["indistinguishable_from_best"] is True  # identical central values: bands overlap
    assert untested["assumed_share"] > 0 and tested["assumed_share"] == 0


def test_a_pool_above_the_sample_limit_is_fitted_thinned_and_says_so(
    client: TestClient, stand: tuple[TeamFixture, dict[str, int]], monkeypatch: pytest.MonkeyPatch
) -> None:
    # The bound on a refit's cost (physics.calibrate.POOL_SAMPLE_LIMIT, 50 000 samples) lowered to 20 samples so
    # that the reference sweeps exceed it: the fit still calibrates the motor, on every k-th sample, and says so.
    monkeypatch.setattr(calibrations, "POOL_SAMPLE_LIMIT", 20)
    team, ids = stand
    upload_sweeps(client, team, ids)
    history = client.get(f"/api/v1/parts/motors/{ids['motor']}/calibrations", headers=team.headers()).json()
    assert history[0]["active"] and "fitted on every" in history[0]["notes"]
    assert "exceed the 20 a refit uses" in history[0]["notes"]
    assert history[0]["parameters"]["kv_rpm_per_v"]["value"] > 0
