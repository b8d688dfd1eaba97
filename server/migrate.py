"""Run Alembic programmatically (its configuration is built here; there is no alembic.ini)."""

from __future__ import annotations

from alembic import command
from alembic.config import Config

from server.resources import migrations_dir

FILE_TEMPLATE = "%(year)d-%(month).2d-%(day).2d_%(rev)s_%(slug)s"
"""New revisions are named ``YYYY-MM-DD_rev_slug.py``."""


def alembic_config(database_url: str) -> Config:
    """Alembic's configuration: the migrations shipped with the package, the given database."""
    cfg = Config()
    cfg.set_main_option("script_location", str(migrations_dir()))
    cfg.set_main_option("file_template", FILE_TEMPLATE.replace("%", "%%"))  # configparser interpolation
    cfg.set_main_option("sqlalchemy.url", database_url.replace("%", "%%"))
    return cfg


def upgrade(database_url: str, revision: str = "head") -> None:
    """Bring the database at ``database_url`` to ``revision`` (on PostgreSQL, also create the job queue's schema)."""
    command.upgrade(alembic_config(database_url), revision)
    if database_url.startswith("postgresql"):
        from server.jobs.pgqueue import install

        install(database_url)


def downgrade(database_url: str, revision: str) -> None:
    command.downgrade(alembic_config(database_url), revision)


def check(database_url: str) -> None:
    """Raise if the ORM models and the migrations disagree."""
    command.check(alembic_config(database_url))
