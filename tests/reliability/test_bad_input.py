"""Bad input is a 4xx naming what was wrong, never a 500: huge integers, NUL characters, deep nesting, filters of
the wrong type, a 30 000-column header; CSV exports neutralise formula-leading text."""

from __future__ import annotations

import csv
import io
import json
import time

import pytest
from fastapi.testclient import TestClient

from tests.factories import make_library, make_team, part_payload

BIG = "1" * 400


@pytest.fixture
def api(client: TestClient) -> tuple[TestClient, dict[str, str], dict[str, int]]:
    team = make_team(client.app, "Inputs")  # type: ignore[arg-type]
    return client, team.headers(), make_library(client, team)


def test_400_digit_integers_are_422_everywhere(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, ids = api
    body = json.dumps(part_payload("batteries"))[:-1] + f', "cells_series": {BIG}}}'
    response = client.post("/api/v1/parts/batteries", content=body, headers={**h, "content-type": "application/json"})
    assert response.status_code == 422
    assert response.json()["errors"][0]["field"] == "cells_series"
    for path in (f"/api/v1/parts/motors?page={BIG}", f"/api/v1/rankings?mission_id={BIG}",
                 f"/api/v1/parts/motors/{BIG}", f"/api/v1/parts/motors?where=kv_rpm_per_v>={BIG}"):
        assert client.get(path, headers=h).status_code == 422, path
    huge_version = client.patch(f"/api/v1/parts/motors/{ids['motors']}", json={"mass_g": 61},
                                headers={**h, "If-Match": f'"{BIG[:38]}"'})
    assert huge_version.status_code == 422
    assert client.patch(f"/api/v1/parts/motors/{ids['motors']}", json={"mass_g": 61},
                        headers={**h, "If-Match": '"²"'.encode()}).status_code == 422


def test_nul_characters_are_422(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, _ = api
    response = client.post("/api/v1/parts/motors", json=part_payload("motors", name="a\x00b"), headers=h)
    assert response.status_code == 422 and response.json()["errors"][0]["field"] == "name"
    assert client.get("/api/v1/parts/motors?q=a%00b", headers=h).status_code == 422
    assert client.get("/api/v1/parts/motors?where=name=a%00b", headers=h).status_code == 422
    page = client.post("/login", data={"email": "x\x00@y", "password": "p"})
    assert page.status_code in (401, 403, 422)


@pytest.mark.parametrize("clause", ["kv_rpm_per_v>=abc", "archived=maybe", "created_at>=yesterday",
                                    "kv_rpm_per_v>=nan", "kv_rpm_per_v<=1e999"])
def test_filters_of_the_wrong_type_are_422(api: tuple[TestClient, dict[str, str], dict[str, int]],
                                           clause: str) -> None:
    client, h, _ = api
    response = client.get("/api/v1/parts/motors", params={"where": clause}, headers=h)
    assert response.status_code == 422 and response.json()["errors"][0]["field"] == "where"


def test_typed_filters_still_work(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, _ = api
    for clause, total in (("archived=false", 1), ("archived=true", 0), ("kv_rpm_per_v>=900", 1),
                          ("created_at>=2000-01-01T00:00:00", 1)):
        assert client.get("/api/v1/parts/motors", params={"where": clause}, headers=h).json()["total"] == total


def test_deep_nesting_is_422(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, ids = api
    deep = "[" * 20_000 + "]" * 20_000
    cell = client.post("/api/v1/parts/propellers/import", headers=h, files={"file": (
        "p.csv", f'name,mass_g,diameter_in,pitch_in,static_table\nA,10,10,4,"{deep[:9000]}{deep[-9000:]}"\n',
        "text/csv")})
    assert cell.status_code == 422 and cell.json()["errors"][0]["field"] == "static_table"
    meta = client.post("/api/v1/bench-runs", headers=h, data={"metadata": deep}, files={
        "file": ("s.csv", "throttle,bus_voltage_v,bus_current_a,rpm,thrust_n\n0.5,12,3,5000,4\n", "text/csv")})
    assert meta.status_code == 422 and meta.json()["errors"][0]["field"] == "metadata"
    body = client.post("/api/v1/import", content=deep, headers={**h, "content-type": "application/json"})
    assert body.status_code == 422


def test_a_30000_column_header_is_rejected_quickly(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, _ = api
    header = ",".join(f"c{i}" for i in range(30_000)) + ",name,name\n"
    started = time.monotonic()
    response = client.post("/api/v1/parts/motors/import", headers=h, files={"file": ("m.csv", header, "text/csv")})
    assert response.status_code == 422
    assert time.monotonic() - started < 3.0  # quadratic duplicate check took 30 s
    fields = {e["field"] for e in response.json()["errors"]}
    assert "name" in fields or len(response.json()["errors"]) == 200


FORMULAS = ["=HYPERLINK(\"http://x\")", "+1+1", "-2+3", "@SUM(A1)", "\tTAB"]


def test_csv_exports_neutralise_formulas(api: tuple[TestClient, dict[str, str], dict[str, int]]) -> None:
    client, h, ids = api
    for i, name in enumerate(FORMULAS):
        created = client.post("/api/v1/parts/motors", headers=h,
                              json=part_payload("motors", name=f"{name}", maker=name, part_number=f"{name[:1]}{i}"))
        assert created.status_code == 201, created.text
    exported = client.get("/api/v1/parts/motors/export.csv", headers=h).text
    rows = list(csv.DictReader(io.StringIO(exported)))
    for row in rows:
        for key in ("name", "maker", "part_number"):
            assert not row[key].startswith(("=", "+", "-", "@", "\t")), row[key]
    assert any(r["name"] == "'=HYPERLINK(\"http://x\")" for r in rows)
    # The export imports back to the same names (the apostrophe is ours and is removed again).
    other = make_team(client.app, "Inputs two")  # type: ignore[arg-type]
    imported = client.post("/api/v1/parts/motors/import", headers=other.headers(),
                           files={"file": ("m.csv", exported, "text/csv")})
    assert imported.status_code == 201, imported.text
    names = {m["name"] for m in client.get("/api/v1/parts/motors?page_size=100", headers=other.headers()).json()[
        "items"]}
    assert set(FORMULAS) <= {n.strip() for n in names} | {"\tTAB"}
    # Bills of materials too.
    sid = client.post("/api/v1/shortlists", json={"name": "S", "mission_id": ids["mission"]}, headers=h).json()["id"]
    evil = client.post("/api/v1/parts/escs", headers=h, json=part_payload("escs", name="=cmd|' /C calc'!A0"))
    client.post(f"/api/v1/shortlists/{sid}/entries", headers=h, json={
        "battery_id": ids["batteries"], "esc_id": evil.json()["id"], "motor_id": ids["motors"],
        "propeller_id": ids["propellers"]})
    bom = client.get(f"/api/v1/shortlists/{sid}/bom.csv", headers=h).text
    assert "'=cmd" in bom and ",=cmd" not in bom
