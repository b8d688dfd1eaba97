"""Shared fixtures: a migrated SQLite file per test (copied from one migrated template), app, clients.

A test marked ``demo_data`` starts from a copy of a template that already holds the invented demo scenario
(seeded once per session: the bench sweeps and their calibrations take a few seconds).
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server import migrate
from server.config import Settings
from server.db import make_engine, make_sessionmaker, transaction
from server.main import create_app

TEST_SECRET = "test-secret-key-0123456789abcdef"


def make_settings(url: str) -> Settings:
    # Cheap argon2 parameters for speed; hashes made with any parameters still verify.
    return Settings(
        database_url=url,
        secret_key=TEST_SECRET,
        demo=False,
        password_time_cost=1,
        password_memory_kib=1024,
        password_parallelism=1,
    )


@pytest.fixture(scope="session")
def migrated_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("template") / "template.db"
    migrate.upgrade(f"sqlite:///{path}")
    return path


@pytest.fixture(scope="session")
def demo_template(migrated_template: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    from server.services import seed

    path = tmp_path_factory.mktemp("demo") / "demo.db"
    shutil.copy(migrated_template, path)
    url = f"sqlite:///{path}"
    engine = make_engine(url)
    with transaction(make_sessionmaker(engine)) as session:
        seed.load_demo(session, settings=make_settings(url))
    with engine.connect() as connection:  # fold the WAL into the file so that a plain copy carries everything
        connection.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    engine.dispose()
    return path


@pytest.fixture
def db_url(request: pytest.FixtureRequest, migrated_template: Path, tmp_path: Path) -> str:
    template = (request.getfixturevalue("demo_template") if request.node.get_closest_marker("demo_data")
                else migrated_template)
    path = tmp_path / "test.db"
    shutil.copy(template, path)
    return f"sqlite:///{path}"


@pytest.fixture
def settings(db_url: str) -> Settings:
    return make_settings(db_url)


@pytest.fixture
def app(settings: Settings) -> FastAPI:
    return create_app(settings)


@pytest.fixture
def client(app: FastAPI) -> Iterator[TestClient]:
    with TestClient(app) as c:
        yield c
