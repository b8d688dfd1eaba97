"""Vendored front-end files match the checksums recorded when they were fetched (scripts/vendor.sh)."""

from __future__ import annotations

import hashlib

from server.config import REPO_ROOT

VENDOR = REPO_ROOT / "web" / "static" / "vendor"


def test_vendored_files_match_manifest() -> None:
    lines = (VENDOR / "MANIFEST.txt").read_text().splitlines()
    sums = [line.split() for line in lines if len(line.split()) == 2 and len(line.split()[0]) == 64]
    assert {name for _, name in sums} == {"htmx.min.js", "chart.umd.min.js", "swagger-ui-bundle.js", "swagger-ui.css"}
    for digest, name in sums:
        assert hashlib.sha256((VENDOR / name).read_bytes()).hexdigest() == digest, name
    for licence in ("LICENSE.htmx.org.txt", "LICENSE.chart.js.txt", "LICENSE.swagger-ui-dist.txt"):
        assert (VENDOR / licence).exists()


def test_pages_load_no_third_party_urls() -> None:
    for template in (REPO_ROOT / "web" / "templates").rglob("*.html"):
        text = template.read_text()
        assert "https://" not in text and "http://" not in text, template.name
