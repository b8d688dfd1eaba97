"""Engine and session factory; SQLite gets WAL, foreign keys and a busy timeout on every connection."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, MetaData, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.orm import DeclarativeBase, Session, sessionmaker
from sqlalchemy.orm.exc import StaleDataError

from server.errors import FieldError, InvalidInput, VersionMismatch

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class Base(DeclarativeBase):
    """Declarative base with named constraints (needed by Alembic batch mode on SQLite)."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)

    def __repr__(self) -> str:
        ident = getattr(self, "id", None)
        name = getattr(self, "name", None)
        return f"<{type(self).__name__} id={ident}{f' name={name!r}' if name else ''}>"


def _sqlite_pragmas(dbapi_conn: Any, _record: Any) -> None:
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA journal_mode=WAL")
    cur.execute("PRAGMA foreign_keys=ON")
    cur.execute("PRAGMA busy_timeout=5000")
    cur.execute("PRAGMA synchronous=NORMAL")
    cur.close()


def _refuse_nul(_conn: Any, _cursor: Any, _statement: str, parameters: Any, _context: Any, executemany: bool) -> None:
    """Text with a NUL character never reaches the database (PostgreSQL refuses it with an error; SQLite would store
    it): a 422 on both backends, whatever the path in (form, query string, JSON, CSV, library file)."""
    rows = parameters if executemany else (parameters,)
    for row in rows:
        values = row.values() if isinstance(row, dict) else row if isinstance(row, list | tuple) else (row,)
        for value in values:
            if isinstance(value, str) and "\x00" in value:
                raise InvalidInput("Text with a NUL character", [FieldError("text", "must not contain NUL characters")])


def make_engine(url: str, pool_size: int = 5) -> Engine:
    """Create an engine; SQLite files get their folder created and the pragmas above.

    ``pool_size`` connections are kept (as many as threads may use the database at once), and as many again may be
    opened for a burst, so a request never waits long for a connection.
    """
    pool = {"pool_size": pool_size, "max_overflow": pool_size, "pool_timeout": 30}
    if url.startswith("sqlite"):
        database = make_url(url).database
        if database and database != ":memory:":
            Path(database).parent.mkdir(parents=True, exist_ok=True)
            engine = create_engine(url, connect_args={"check_same_thread": False, "timeout": 30}, **pool)
        else:
            engine = create_engine(url, connect_args={"check_same_thread": False, "timeout": 30})
        event.listen(engine, "connect", _sqlite_pragmas)
    else:
        engine = create_engine(url, pool_pre_ping=True, **pool)
    event.listen(engine, "before_cursor_execute", _refuse_nul)
    return engine


class AppSession(Session):
    """A session whose lost races surface as domain errors.

    A versioned row (``models._common.Versioned``) whose UPDATE matched no row was saved by someone else after
    this session read it: that is a :class:`VersionMismatch` (412 / a form conflict), never a 500.
    """

    def flush(self, objects: Any = None) -> None:
        try:
            super().flush(objects)
        except StaleDataError as exc:
            raise VersionMismatch(
                "Someone else saved this record after you loaded it; reload it and apply your change again"
            ) from exc


def make_sessionmaker(engine: Engine) -> sessionmaker[Session]:
    return sessionmaker(engine, class_=AppSession, expire_on_commit=False)


@contextmanager
def transaction(factory: sessionmaker[Session]) -> Iterator[Session]:
    """A session whose work commits at the end or rolls back as a whole on any error."""
    with factory() as session, session.begin():
        yield session
