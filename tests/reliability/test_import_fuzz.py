"""Library import fuzzing: a valid exported file with one value anywhere replaced by arbitrary JSON.

Every such file is either imported whole (201) — and then everything that reads the library still answers — or
refused with 422 naming where, and nothing at all is stored. Before strict validation, ``"parts": []`` was a 500,
and samples with rpm −1e308 or calibrations with text parameters were stored and broke predict and rankings.
"""

from __future__ import annotations

import copy
from collections.abc import Iterator
from typing import Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import func, select

from server.db import transaction
from server.models import BenchRun, BenchSample, Calibration, Mission, Motor
from server.services import seed, teams
from tests.factories import make_team

JSON_VALUES = st.recursive(
    st.none() | st.booleans() | st.integers(min_value=-(10**400), max_value=10**400)
    | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=20)
    | st.sampled_from(["", "\x00", "=1+1", "1e308", "-1e308", "fixed", "identified", "escs"]),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=8), inner, max_size=3),
    max_leaves=6,
)


def paths(doc: Any, prefix: tuple[Any, ...] = ()) -> Iterator[tuple[Any, ...]]:
    """Every location in a JSON document (bench samples thinned: the first two of each run)."""
    yield prefix
    if isinstance(doc, dict):
        for key, value in doc.items():
            yield from paths(value, (*prefix, key))
    elif isinstance(doc, list):
        for i, value in enumerate(doc[:2]):
            yield from paths(value, (*prefix, i))


def replaced(doc: Any, path: tuple[Any, ...], value: Any) -> Any:
    if not path:
        return value
    out = copy.deepcopy(doc)
    target = out
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    return out


@pytest.fixture(scope="module")
def library_file(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict[str, Any], list[tuple[Any, ...]]]:
    from server import migrate
    from server.main import create_app
    from tests.conftest import make_settings

    url = f"sqlite:///{tmp_path_factory.mktemp('fuzzsrc') / 'src.db'}"
    migrate.upgrade(url)
    app = create_app(make_settings(url))
    with TestClient(app) as client:
        with transaction(app.state.sessionmaker) as session:
            seed.load_demo(session, settings=app.state.settings)
            team = teams.get_team_by_name(session, name="Northfold Survey")
            _, key = teams.create_api_key(session, team_id=team.id, scope="read")
        doc = client.get("/api/v1/export", headers={"Authorization": f"Bearer {key}"}).json()
    # Keep it small: two runs of 20 samples, their parts' calibrations.
    for run in doc["bench_runs"]:
        run["samples"] = run["samples"][:20]
    doc["bench_runs"] = doc["bench_runs"][:2]
    keep = {r["ref"] for r in doc["bench_runs"]}
    doc["calibrations"] = [c for c in doc["calibrations"] if set(c["run_refs"]) <= keep][:4]
    return doc, sorted(set(paths(doc)), key=str)


def _stored(app: FastAPI, team_id: int) -> tuple[int, ...]:
    with app.state.sessionmaker() as s:
        return tuple(s.scalar(select(func.count()).select_from(m).where(m.team_id == team_id)) or 0
                     for m in (Motor, Mission, BenchRun, Calibration)) + (
            s.scalar(select(func.count()).select_from(BenchSample)) or 0,)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                 HealthCheck.too_slow])
@given(where=st.integers(min_value=0, max_value=1_000_000), value=JSON_VALUES)
def test_any_bad_value_is_422_and_stores_nothing(
    client: TestClient, library_file: tuple[dict[str, Any], list[tuple[Any, ...]]], where: int, value: Any
) -> None:
    doc, locations = library_file
    app: FastAPI = client.app  # type: ignore[assignment]
    team = getattr(app.state, "_fuzz_team", None) or make_team(app, "Fuzz")
    app.state._fuzz_team = team
    path = locations[where % len(locations)]
    before = _stored(app, team.team_id)
    response = client.post("/api/v1/import", json=replaced(doc, path, value), headers=team.headers())
    assert response.status_code in (201, 422), (path, value, response.text)
    if response.status_code == 422:
        assert response.json()["errors"], response.text
        assert _stored(app, team.team_id) == before
        return
    # Accepted: the library still reads and computes.
    h = team.headers()
    for run in client.get("/api/v1/bench-runs", headers=h).json():
        assert client.get(f"/api/v1/bench-runs/{run['id']}", headers=h).status_code == 200
    for mission in client.get("/api/v1/missions", headers=h).json()[:1]:
        assert client.post("/api/v1/rankings", headers=h, json={"mission_id": mission["id"], "top_n": 3}
                           ).status_code == 202


def test_the_campaign_files_are_422(client: TestClient, library_file: tuple[dict[str, Any], Any]) -> None:
    doc, _ = library_file
    team = make_team(client.app, "Campaign")  # type: ignore[arg-type]
    h = team.headers()
    empty = client.post("/api/v1/import", json={"format": "liftmatch-library", "version": 1, "parts": []}, headers=h)
    assert empty.status_code == 422 and empty.json()["errors"][0]["field"] == "parts"
    negative = replaced(doc, ("bench_runs", 0, "samples", 0, "rpm"), -1e308)
    response = client.post("/api/v1/import", json=negative, headers=h)
    assert response.status_code == 422
    assert "bench_runs.0.samples.0.rpm" in {e["field"] for e in response.json()["errors"]}
    cal = next(i for i, c in enumerate(doc["calibrations"]) if c["part_kind"] == "motors")
    name = next(iter(doc["calibrations"][cal]["parameters"]))
    text = replaced(doc, ("calibrations", cal, "parameters", name, "value"), "fast")
    response = client.post("/api/v1/import", json=text, headers=h)
    assert response.status_code == 422
    assert any(e["field"].startswith(f"calibrations.{cal}.parameters") for e in response.json()["errors"])
    assert client.get("/api/v1/parts/motors", headers=h).json()["total"] == 0
