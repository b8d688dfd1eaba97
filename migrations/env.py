"""Alembic environment: URL from liftmatch Settings unless the caller set one; SQLite in batch mode."""

from __future__ import annotations

from alembic import context

import server.models  # noqa: F401  (registers every table)
from server.db import Base, make_engine

config = context.config
target_metadata = Base.metadata


def _url() -> str:
    url = config.get_main_option("sqlalchemy.url")
    if url:
        return url
    from server.config import get_settings

    return get_settings().database_url


def _ours(name: str | None, type_: str, parent_names: object) -> bool:
    """Leave the job queue's own tables (procrastinate_*, PostgreSQL only; server/jobs/pgqueue.py) to the queue."""
    return not (type_ == "table" and name is not None and name.startswith("procrastinate_"))


def run_migrations_offline() -> None:
    url = _url()
    context.configure(
        url=url,
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=url.startswith("sqlite"),
        compare_type=True,
        include_name=_ours,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    engine = make_engine(_url())
    with engine.connect() as connection:
        sqlite = connection.dialect.name == "sqlite"
        if sqlite:
            # Batch mode rebuilds tables (copy, drop, rename); with foreign keys on, the drop would
            # cascade into child rows. Keys are checked once at the end instead.
            connection.exec_driver_sql("PRAGMA foreign_keys=OFF")
            connection.commit()
        context.configure(
            connection=connection,
            target_metadata=target_metadata,
            render_as_batch=sqlite,
            compare_type=True,
            include_name=_ours,
        )
        with context.begin_transaction():
            context.run_migrations()
        if sqlite:
            bad = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
            if bad:
                raise RuntimeError(f"foreign key violations after migration: {bad[:5]}")
    engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
