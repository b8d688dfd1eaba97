"""Run Alembic programmatically (configuration lives in pyproject.toml, no alembic.ini)."""

from __future__ import annotations

from alembic import command
from alembic.config import Config

from server.config import REPO_ROOT


def alembic_config(database_url: str) -> Config:
    cfg = Config(toml_file=str(REPO_ROOT / "pyproject.toml"))
    cfg.set_main_option("sqlalchemy.url", database_url)
    return cfg


def upgrade(database_url: str, revision: str = "head") -> None:
    """Bring the database at ``database_url`` to ``revision``."""
    command.upgrade(alembic_config(database_url), revision)


def downgrade(database_url: str, revision: str) -> None:
    command.downgrade(alembic_config(database_url), revision)


def check(database_url: str) -> None:
    """Raise if the ORM models and the migrations disagree."""
    command.check(alembic_config(database_url))
