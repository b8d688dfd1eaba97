"""The docs mention every setting, CLI command and API route (a new one fails until it is documented)."""

from __future__ import annotations

import re

from server.cli import build_parser
from server.config import REPO_ROOT, Settings
from server.main import create_app
from tests.conftest import make_settings

DOCS = (REPO_ROOT / "README.md").read_text() + (REPO_ROOT / "DEVELOPERS.md").read_text()


def test_every_setting_is_documented() -> None:
    for name in Settings.model_fields:
        env = f"LIFTMATCH_{name.upper()}"
        short = "_" + name.upper().split("_", 1)[1] if name.startswith("password_") else env
        assert env in DOCS or short in DOCS, env


def test_every_cli_command_is_documented() -> None:
    parser = build_parser()
    commands = next(a for a in parser._actions if a.dest == "command").choices
    for name in commands:
        assert f"liftmatch {name}" in DOCS, name


def test_every_api_route_is_documented(tmp_path) -> None:  # type: ignore[no-untyped-def]
    app = create_app(make_settings(f"sqlite:///{tmp_path / 'x.db'}"))
    for path in app.openapi()["paths"]:
        short = path.removeprefix("/api/v1")
        short = re.sub(r"/parts/(batteries|escs|motors|propellers)", "/parts/{kind}", short)
        short = re.sub(r"\{\w+_id\}", "{id}", short)
        assert re.search(re.escape(short) + r"[`,? ]", DOCS), short
