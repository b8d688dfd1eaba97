"""Settings: the placeholder secret is refused outside demo mode; demo mode makes its own."""

from __future__ import annotations

from pathlib import Path

import pytest

from server.config import PLACEHOLDER_SECRET, Settings
from server.main import create_app


def test_placeholder_secret_is_refused_outside_demo(tmp_path: Path) -> None:
    settings = Settings(database_url=f"sqlite:///{tmp_path / 'a.db'}", secret_key=PLACEHOLDER_SECRET, demo=False)
    with pytest.raises(ValueError, match="placeholder"):
        create_app(settings)


def test_short_secret_is_refused(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="at least 16"):
        create_app(Settings(database_url=f"sqlite:///{tmp_path / 'a.db'}", secret_key="short"))


def test_demo_mode_generates_and_keeps_a_secret(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    first = Settings(secret_key=PLACEHOLDER_SECRET, demo=True)
    second = Settings(secret_key=PLACEHOLDER_SECRET, demo=True)
    assert first.secret_key != PLACEHOLDER_SECRET and len(first.secret_key) >= 32
    assert first.secret_key == second.secret_key  # kept under ./var so sessions survive a restart
    assert (tmp_path / "var" / ".demo_secret").exists()


def test_environment_prefix(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("LIFTMATCH_DATABASE_URL", "sqlite:////tmp/elsewhere.db")
    assert Settings().database_url == "sqlite:////tmp/elsewhere.db"
