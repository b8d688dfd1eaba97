"""Request size limits hold before authentication and before parsing; every response carries the security headers;
the interactive API docs load only vendored files."""

from __future__ import annotations

import json

from fastapi.testclient import TestClient

from server.limits import LIBRARY_BODY_BYTES, MAX_BODY_BYTES, UPLOAD_BODY_BYTES
from tests.factories import make_team


def test_oversized_json_is_413_before_authentication(client: TestClient) -> None:
    body = json.dumps({"name": "x" * (MAX_BODY_BYTES + 10)})
    response = client.post("/api/v1/parts/motors", content=body, headers={"content-type": "application/json"})
    assert response.status_code == 413  # not 401: the limit comes first, the body is never parsed
    assert response.headers["content-type"].startswith("application/problem+json")
    assert str(MAX_BODY_BYTES) in response.json()["detail"]


def test_oversized_upload_is_413_before_authentication(client: TestClient) -> None:
    files = {"file": ("big.csv", b"throttle\n" + b"0.5\n" * (UPLOAD_BODY_BYTES // 4), "text/csv")}
    assert client.post("/api/v1/bench-runs", files=files, data={"metadata": "{}"}).status_code == 413
    assert client.post("/api/v1/parts/motors/import", files=files).status_code == 413
    assert client.post("/parts/motors/import", files=files).status_code == 413


def test_library_import_authenticates_before_reading(client: TestClient) -> None:
    big = b'{"format": "liftmatch-library", "version": 1, "team": "' + b"x" * (2 * MAX_BODY_BYTES) + b'"}'
    assert client.post("/api/v1/import", content=big, headers={"content-type": "application/json"}).status_code == 401
    team = make_team(client.app, "Big")  # type: ignore[arg-type]
    accepted_size = client.post("/api/v1/import", content=big, headers={**team.headers(),
                                                                          "content-type": "application/json"})
    assert accepted_size.status_code == 422  # read (within the 32 MiB limit) and validated: team name too long
    too_big = b" " * (LIBRARY_BODY_BYTES + 1)
    json_headers = {**team.headers(), "content-type": "application/json"}
    assert client.post("/api/v1/import", content=too_big, headers=json_headers).status_code == 413


def test_security_headers_on_pages_api_errors_and_static(client: TestClient) -> None:
    for path in ("/login", "/api/v1/parts/motors", "/no-such-page", "/static/css/liftmatch.css", "/healthz"):
        response = client.get(path)
        assert "script-src 'self'" in response.headers["content-security-policy"], path
        assert "frame-ancestors 'none'" in response.headers["content-security-policy"]
        assert response.headers["x-content-type-options"] == "nosniff"
        assert response.headers["referrer-policy"] == "same-origin"
        assert response.headers["x-frame-options"] == "DENY"


def test_api_docs_use_vendored_files_only(client: TestClient) -> None:
    page = client.get("/api/v1/docs")
    assert page.status_code == 200
    assert "/static/vendor/swagger-ui-bundle.js" in page.text and "/static/vendor/swagger-ui.css" in page.text
    import re

    urls = re.findall(r'(?:src|href)="([^"]+)"', page.text)
    assert urls and all(u.startswith(("http://testserver/static/", "data:")) for u in urls), urls  # no CDN
    assert "<script>" not in page.text  # no inline script: the CSP forbids it
    for asset in ("/static/vendor/swagger-ui-bundle.js", "/static/vendor/swagger-ui.css", "/static/js/api-docs.js"):
        assert client.get(asset).status_code == 200
