"""Property-based fuzzing of the whole JSON API from its own OpenAPI document: no input may cause a 5xx.

schemathesis generates requests (valid and invalid bodies, parameters and paths) for every operation; a write key
of the demo team authenticates them. Two real bugs were found this way and have regression tests of their own.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import not_a_server_error

from server import migrate
from server.db import make_engine, make_sessionmaker, transaction
from server.main import create_app
from server.services import seed, teams
from tests.conftest import make_settings

_DB = Path(tempfile.mkdtemp(prefix="liftmatch-fuzz-")) / "fuzz.db"
_URL = f"sqlite:///{_DB}"
migrate.upgrade(_URL)
_SETTINGS = make_settings(_URL)
with transaction(make_sessionmaker(make_engine(_URL))) as _session:
    seed.load_demo(_session, settings=_SETTINGS)
    _team = teams.get_team_by_name(_session, name="Northfold Survey")
    _, _KEY = teams.create_api_key(_session, team_id=_team.id, scope="write")

app = create_app(_SETTINGS)
schema = schemathesis.openapi.from_asgi("/api/v1/openapi.json", app)


@pytest.mark.slow
# A malformed multipart body (e.g. a bare CR inside a part header) makes the upstream multipart parser stop after
# it has opened a temporary file for the part; the request is answered 400, but that file is only closed by the
# garbage collector. This is outside our code (our own handlers close every upload: server/uploads.py), so that
# one warning is not turned into a failure here; the assertion of this test — no 5xx — is unchanged.
@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
@schema.parametrize()
@settings(max_examples=8, deadline=None, suppress_health_check=list(HealthCheck), database=None)
def test_no_request_causes_a_server_error(case: schemathesis.Case) -> None:
    response = case.call(headers={"Authorization": f"Bearer {_KEY}"})
    case.validate_response(response, checks=[not_a_server_error])
