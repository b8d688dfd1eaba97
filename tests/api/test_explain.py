"""POST /api/v1/explain and `liftmatch explain` on the demo: the ranking's reasons, order and numbers."""

from __future__ import annotations

import json
from typing import Any

import pytest
from fastapi.testclient import TestClient

from server.cli import main
from server.selection import REASONS
from tests.api.test_rankings import wait_done
from tests.conftest import TEST_SECRET
from tests.factories import demo_key, make_team

pytestmark = pytest.mark.demo_data


@pytest.fixture
def ranked(app: Any, client: TestClient) -> tuple[dict[str, str], int, int, dict[str, Any]]:
    headers, missions = demo_key(app)
    mission = missions["Q4 mapping survey"]
    rid = client.post("/api/v1/rankings", json={"mission_id": mission, "top_n": 10}, headers=headers).json()["id"]
    status = wait_done(client, headers, rid)
    assert status["status"] == "done"
    return headers, mission, rid, status


KEYS = ("battery_id", "esc_id", "motor_id", "propeller_id", "packs_in_parallel")


def test_top_row_is_explained_feasible_with_the_rows_numbers(client: TestClient, ranked: Any) -> None:
    headers, mission, rid, _ = ranked
    row = client.get(f"/api/v1/rankings/{rid}/results?page_size=1", headers=headers).json()["items"][0]
    for source in ({"ranking_id": rid}, {"mission_id": mission}):
        doc = client.post("/api/v1/explain", json={**source, **{k: row[k] for k in KEYS}}, headers=headers)
        assert doc.status_code == 200, doc.text
        body = doc.json()
        assert body["feasible"] and body["first_failed"] is None
        assert [c["reason"] for c in body["checks"]] == list(REASONS) and all(c["passed"] for c in body["checks"])
        assert body["cruise"]["electrical_power_w"] == pytest.approx(row["cruise"]["electrical_power_w"], rel=1e-9)
        assert body["endurance_min"] == pytest.approx(row["endurance_min"], rel=1e-9)
        tw = next(c for c in body["checks"] if c["reason"] == "below_thrust_to_weight")
        assert tw["value"] == pytest.approx(row["full_throttle"]["thrust_to_weight"], rel=1e-9)


def test_every_rejected_example_is_explained_as_its_reason(client: TestClient, ranked: Any) -> None:
    headers, _, rid, status = ranked
    examples = status["rejected_examples"]
    assert set(examples) == set(status["rejected"]) and examples
    for reason, found in examples.items():
        for ex in found:
            body = client.post("/api/v1/explain", json={"ranking_id": rid, **ex}, headers=headers).json()
            assert body["first_failed"] == reason, (reason, ex, body["checks"])


def test_bad_requests_name_the_field(app: Any, client: TestClient, ranked: Any) -> None:
    headers, mission, rid, _ = ranked
    row = client.get(f"/api/v1/rankings/{rid}/results?page_size=1", headers=headers).json()["items"][0]
    base = {"mission_id": mission, **{k: row[k] for k in KEYS}}
    for change, field in (({"motor_id": 999_999}, "motor_id"), ({"packs_in_parallel": 7}, "packs_in_parallel"),
                          ({"mission_id": None}, "mission_id"), ({"ranking_id": rid, "mission_id": mission + 1000},
                                                                 "mission_id")):
        response = client.post("/api/v1/explain", json={**base, **change}, headers=headers)
        assert response.status_code == 422, response.text
        assert field in {e["field"] for e in response.json()["errors"]}
    other = make_team(app, "Elsewhere")
    assert client.post("/api/v1/explain", json=base, headers=other.headers()).status_code == 422
    assert client.post("/api/v1/explain", json={**base, "ranking_id": rid},
                       headers=other.headers()).status_code == 404


def test_cli_prints_the_api_document(client: TestClient, ranked: Any, db_url: str,
                                     monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    headers, mission, rid, _ = ranked
    row = client.get(f"/api/v1/rankings/{rid}/results?page_size=1", headers=headers).json()["items"][0]
    api = client.post("/api/v1/explain", json={"mission_id": mission, **{k: row[k] for k in KEYS}},
                      headers=headers).json()
    monkeypatch.setenv("LIFTMATCH_DATABASE_URL", db_url)
    monkeypatch.setenv("LIFTMATCH_SECRET_KEY", TEST_SECRET)
    args = ["explain", "--mission", str(mission), "--battery", str(row["battery_id"]), "--esc", str(row["esc_id"]),
            "--motor", str(row["motor_id"]), "--propeller", str(row["propeller_id"]),
            "--packs", str(row["packs_in_parallel"])]
    assert main([*args, "--json"]) == 0
    assert json.loads(capsys.readouterr().out) == api
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "feasible" in text and "below_thrust_to_weight" in text
    assert main(["explain", "--mission", "999999", "--battery", "1", "--esc", "1", "--motor", "1",
                 "--propeller", "1"]) == 1


def test_the_motor_out_mission_checks_two_thirds_of_the_hexas_thrust(app: Any, client: TestClient) -> None:
    """The demo hexa's motor-out mission: every ranked row keeps 2/3 of its T/W with the worst motor out (the hand
    calculation in docs/model-reference.md#motor-out) above the floor, and the limit rejects systems the plain
    mission keeps."""
    headers, missions = demo_key(app)
    counts = {}
    for name in ("H6 structure inspection", "H6 structure inspection, motor-out"):
        rid = client.post("/api/v1/rankings", json={"mission_id": missions[name], "top_n": 5},
                          headers=headers).json()["id"]
        counts[name] = wait_done(client, headers, rid)
    status = counts["H6 structure inspection, motor-out"]
    assert status["rejected"].get("motor_out_thrust_short", 0) > 0
    assert status["feasible"] < counts["H6 structure inspection"]["feasible"]
    row = client.get(f"/api/v1/rankings/{status['id']}/results?page_size=1", headers=headers).json()["items"][0]
    body = client.post("/api/v1/explain", json={"ranking_id": status["id"], **{k: row[k] for k in KEYS}},
                       headers=headers).json()
    check = next(c for c in body["checks"] if c["reason"] == "motor_out_thrust_short")
    assert check["passed"] and check["limit"] == 1.5
    assert check["value"] == pytest.approx(2.0 / 3.0 * row["full_throttle"]["thrust_to_weight"], rel=1e-9)
