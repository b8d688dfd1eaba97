"""Parts API: CRUD and validation per kind, optimistic versions, archive/delete, list, CSV import/export."""

from __future__ import annotations

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from tests.factories import TeamFixture, make_team, part_payload

KINDS = ["batteries", "escs", "motors", "propellers"]


@pytest.fixture
def team(app: FastAPI, client: TestClient) -> TeamFixture:
    return make_team(app)


@pytest.mark.parametrize("kind", KINDS)
def test_create_read_update_archive_delete(client: TestClient, team: TeamFixture, kind: str) -> None:
    h = team.headers()
    created = client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h)
    assert created.status_code == 201, created.text
    body = created.json()
    assert body["version"] == 1 and body["kind"] == kind and body["mass_g"] > 0
    assert created.headers["etag"] == '"1"'
    part_id = body["id"]

    read = client.get(f"/api/v1/parts/{kind}/{part_id}", headers=team.headers("read"))
    assert read.status_code == 200 and read.json()["name"] == "Test part"

    updated = client.patch(
        f"/api/v1/parts/{kind}/{part_id}", json={"name": "Renamed", "mass_g": 99.5}, headers={**h, "If-Match": '"1"'}
    )
    assert updated.status_code == 200, updated.text
    assert updated.json()["version"] == 2 and updated.json()["mass_g"] == 99.5
    assert updated.headers["etag"] == '"2"'

    archived = client.post(f"/api/v1/parts/{kind}/{part_id}/archive", headers=h)
    assert archived.json()["archived"] is True
    listed = client.get(f"/api/v1/parts/{kind}", headers=h).json()
    assert part_id not in [p["id"] for p in listed["items"]]
    all_listed = client.get(f"/api/v1/parts/{kind}?archived=all", headers=h).json()
    assert part_id in [p["id"] for p in all_listed["items"]]

    assert client.delete(f"/api/v1/parts/{kind}/{part_id}", headers=h).status_code == 204
    assert client.get(f"/api/v1/parts/{kind}/{part_id}", headers=h).status_code == 404


def test_stale_version_is_refused_and_nothing_changes(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    part_id = client.post("/api/v1/parts/motors", json=part_payload("motors"), headers=h).json()["id"]
    assert (
        client.patch(
            f"/api/v1/parts/motors/{part_id}", json={"kv_rpm_per_v": 900}, headers={**h, "If-Match": '"1"'}
        ).status_code
        == 200
    )
    stale = client.patch(
        f"/api/v1/parts/motors/{part_id}", json={"kv_rpm_per_v": 800}, headers={**h, "If-Match": '"1"'}
    )
    assert stale.status_code == 412
    assert stale.headers["content-type"].startswith("application/problem+json")
    assert client.get(f"/api/v1/parts/motors/{part_id}", headers=h).json()["kv_rpm_per_v"] == 900


def test_update_without_version_needs_a_precondition(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    part_id = client.post("/api/v1/parts/escs", json=part_payload("escs"), headers=h).json()["id"]
    response = client.patch(f"/api/v1/parts/escs/{part_id}", json={"mass_g": 20}, headers=h)
    assert response.status_code == 428
    by_query = client.patch(f"/api/v1/parts/escs/{part_id}?version=1", json={"mass_g": 20}, headers=h)
    assert by_query.status_code == 200 and by_query.json()["mass_g"] == 20


@pytest.mark.parametrize(
    ("kind", "field", "value", "expected"),
    [
        ("motors", "kv_rpm_per_v", 5, "between 10 and 20000 rpm/V"),
        ("motors", "kv_rpm_per_v", 25000, "between 10 and 20000 rpm/V"),
        ("batteries", "cells_series", 30, "between 1 and 24 cells"),
        ("batteries", "capacity_mah", -100, "between 50 and 500000 mAh"),
        ("propellers", "diameter_in", 90, "between 1 and 80 in"),
        ("escs", "continuous_current_a", 0, "between 1 and 1000 A"),
        ("motors", "mass_g", -1, "between 0.1 and 100000 g"),
        ("propellers", "application", "helicopter", "must be multirotor, fixed_wing or any"),
    ],
)
def test_out_of_range_values_name_the_field_and_range(
    client: TestClient, team: TeamFixture, kind: str, field: str, value: float, expected: str
) -> None:
    response = client.post(f"/api/v1/parts/{kind}", json=part_payload(kind, **{field: value}), headers=team.headers())
    assert response.status_code == 422
    problem = response.json()
    assert problem["status"] == 422
    errors = {e["field"]: e["message"] for e in problem["errors"]}
    assert expected in errors[field]
    assert client.get(f"/api/v1/parts/{kind}", headers=team.headers()).json()["total"] == 0


def test_non_finite_and_cross_field_errors(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    body = '{"name": "x", "mass_g": NaN, "kv_rpm_per_v": 900}'
    nan = client.post("/api/v1/parts/motors", content=body, headers={**h, "content-type": "application/json"})
    assert nan.status_code == 422
    assert any(e["field"] == "mass_g" for e in nan.json()["errors"])
    swapped = client.post("/api/v1/parts/escs", json=part_payload("escs", min_cells=6, max_cells=3), headers=h)
    assert swapped.status_code == 422
    assert any(e["field"] == "min_cells" for e in swapped.json()["errors"])
    unsorted = part_payload(
        "propellers", static_table=[{"rpm": 5000, "ct": 0.1, "cp": 0.04}, {"rpm": 3000, "ct": 0.1, "cp": 0.04}]
    )
    bad_table = client.post("/api/v1/parts/propellers", json=unsorted, headers=h)
    assert bad_table.status_code == 422 and "increasing" in bad_table.text
    unknown = client.post("/api/v1/parts/motors", json=part_payload("motors", colour="red"), headers=h)
    assert unknown.status_code == 422 and any(e["field"] == "colour" for e in unknown.json()["errors"])


def test_list_filters_sorts_and_pages(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    for i, kv in enumerate([300, 920, 700, 1400]):
        client.post("/api/v1/parts/motors", json=part_payload("motors", name=f"M{i}", kv_rpm_per_v=kv), headers=h)
    page = client.get("/api/v1/parts/motors?sort=-kv_rpm_per_v&page_size=2&page=1", headers=h).json()
    assert [p["kv_rpm_per_v"] for p in page["items"]] == [1400, 920] and page["total"] == 4
    page2 = client.get("/api/v1/parts/motors?sort=-kv_rpm_per_v&page_size=2&page=2", headers=h).json()
    assert [p["kv_rpm_per_v"] for p in page2["items"]] == [700, 300]
    filtered = client.get(
        "/api/v1/parts/motors", params={"where": "kv_rpm_per_v>=700", "sort": "kv_rpm_per_v"}, headers=h
    ).json()
    assert [p["kv_rpm_per_v"] for p in filtered["items"]] == [700, 920, 1400]
    assert client.get("/api/v1/parts/motors?q=M2", headers=h).json()["total"] == 1
    assert client.get("/api/v1/parts/motors?sort=secret", headers=h).status_code == 422
    assert client.get("/api/v1/parts/motors?where=team_id=1", headers=h).status_code == 422


CSV_OK = (
    "name,part_number,mass_g,kv_rpm_per_v,winding_resistance_ohm,no_load_current_a\n"
    "A,NS-1,60,920,0.1,0.5\n"
    "B,NS-2,80,700,0.08,0.4\n"
)
CSV_BAD = (
    "name,part_number,mass_g,kv_rpm_per_v,winding_resistance_ohm,no_load_current_a\n"
    "A,NS-1,60,920,0.1,0.5\n"
    "B,NS-2,eighty,700,0.08,0.4\n"
    "C,NS-3,70,5,0.08,0.4\n"
)


def test_csv_import_is_all_or_nothing(client: TestClient, team: TeamFixture) -> None:
    h = team.headers()
    bad = client.post("/api/v1/parts/motors/import", files={"file": ("m.csv", CSV_BAD, "text/csv")}, headers=h)
    assert bad.status_code == 422
    errors = bad.json()["errors"]
    assert {"row": 3, "field": "mass_g"} in [{"row": e["row"], "field": e["field"]} for e in errors]
    assert {"row": 4, "field": "kv_rpm_per_v"} in [{"row": e["row"], "field": e["field"]} for e in errors]
    assert client.get("/api/v1/parts/motors", headers=h).json()["total"] == 0  # row 2 was not saved either

    ok = client.post("/api/v1/parts/motors/import", files={"file": ("m.csv", CSV_OK, "text/csv")}, headers=h)
    assert ok.status_code == 201 and ok.json()["created"] == 2


@pytest.mark.parametrize(
    ("content", "field"),
    [
        ("", "file"),
        ("name,name,mass_g,kv_rpm_per_v\nA,B,60,920\n", "name"),
        ("name,mass_g\nA,60\n", "kv_rpm_per_v"),
        ("name,mass_g,kv_rpm_per_v,colour\nA,60,920,red\n", "colour"),
        ("name,mass_g,kv_rpm_per_v\nA,60\n", "row"),
    ],
)
def test_malformed_csv_names_the_problem(client: TestClient, team: TeamFixture, content: str, field: str) -> None:
    response = client.post(
        "/api/v1/parts/motors/import", files={"file": ("m.csv", content, "text/csv")}, headers=team.headers()
    )
    assert response.status_code == 422
    assert field in [e["field"] for e in response.json()["errors"]]


@pytest.mark.parametrize("kind", KINDS)
def test_csv_export_round_trips(client: TestClient, team: TeamFixture, kind: str) -> None:
    h = team.headers()
    original = client.post(f"/api/v1/parts/{kind}", json=part_payload(kind), headers=h).json()
    exported = client.get(f"/api/v1/parts/{kind}/export.csv", headers=h)
    assert exported.status_code == 200 and exported.headers["content-type"].startswith("text/csv")
    imported = client.post(
        f"/api/v1/parts/{kind}/import", files={"file": ("p.csv", exported.text, "text/csv")}, headers=h
    )
    assert imported.status_code == 201, imported.text
    copy = client.get(f"/api/v1/parts/{kind}/{imported.json()['ids'][0]}", headers=h).json()
    volatile = {"id", "created_at", "updated_at", "version"}
    assert {k: v for k, v in copy.items() if k not in volatile} == {
        k: v for k, v in original.items() if k not in volatile
    }


def test_null_for_a_text_field_in_a_patch_is_a_clear_422_or_no_change(client: TestClient, team: TeamFixture) -> None:
    """Regression (found by fuzzing): a null name in a PATCH crashed the text validator with a 500."""
    h = team.headers()
    part_id = client.post("/api/v1/parts/motors", json=part_payload("motors"), headers=h).json()["id"]
    response = client.patch(f"/api/v1/parts/motors/{part_id}?version=1", json={"name": None}, headers=h)
    assert response.status_code == 422
    assert any(e["field"] == "name" for e in response.json()["errors"])


def test_an_unreadable_csv_is_a_422(client: TestClient, team: TeamFixture) -> None:
    """Regression (found by fuzzing): a field longer than the csv module's limit was a 500."""
    content = 'name,mass_g,kv_rpm_per_v\n"' + "a" * 200_000 + '",60,920\n'
    response = client.post("/api/v1/parts/motors/import", files={"file": ("m.csv", content, "text/csv")},
                           headers=team.headers())
    assert response.status_code == 422 and response.json()["errors"][0]["field"] == "file"


def test_an_id_beyond_64_bits_is_a_422_not_a_500(client: TestClient, team: TeamFixture) -> None:
    """Regression (found by fuzzing): an airframe_id above 2**63 - 1 overflowed SQLite's INTEGER with a 500."""
    response = client.post("/api/v1/missions", json={"name": "m", "airframe_id": 2**63, "kind": "hover"},
                           headers=team.headers())
    assert response.status_code == 422 and response.json()["errors"][0]["field"] == "airframe_id"


def test_propeller_application_defaults_to_any_and_round_trips_through_csv(client: TestClient,
                                                                          team: TeamFixture) -> None:
    h = team.headers()
    plain = client.post("/api/v1/parts/propellers", json=part_payload("propellers", name="Plain"), headers=h).json()
    assert plain["application"] == "any"
    wing = client.post("/api/v1/parts/propellers", headers=h,
                       json=part_payload("propellers", name="Wing", application="fixed_wing")).json()
    assert wing["application"] == "fixed_wing"
    patched = client.patch(f"/api/v1/parts/propellers/{plain['id']}", json={"application": "multirotor"},
                           headers={**h, "If-Match": '"1"'})
    assert patched.status_code == 200 and patched.json()["application"] == "multirotor"
    exported = client.get("/api/v1/parts/propellers/export.csv", headers=h).text
    assert "application" in exported.splitlines()[0]
    other = make_team(client.app, "Other")  # type: ignore[arg-type]
    imported = client.post("/api/v1/parts/propellers/import", files={"file": ("p.csv", exported, "text/csv")},
                           headers=other.headers())
    assert imported.status_code in (200, 201), imported.text
    back = client.get("/api/v1/parts/propellers?sort=name", headers=other.headers()).json()["items"]
    assert [p["application"] for p in back] == ["multirotor", "fixed_wing"]
