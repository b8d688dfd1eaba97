"""Load the invented demo scenario (seed_data/northfold.json) through the same validation as the API."""

from __future__ import annotations

import json
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from server.config import Settings
from server.errors import Conflict
from server.models import PART_MODELS, Team
from server.resources import demo_file
from server.schemas.bench_runs import BenchRunMeta
from server.schemas.missions import AirframeCreate, MissionCreate
from server.schemas.parts import CREATE_SCHEMAS, KIND_WORDS
from server.services import bench_runs, missions, parts, teams
from server.services._validation import validate

DEMO_FILE = demo_file()
DEMO_LOGIN = ("engineer@northfold.example", "northfold-demo")


@contextmanager
def throwaway_demo() -> Iterator[sessionmaker[Session]]:
    """The invented demo (with its synthetic bench runs and calibrations) in a temporary SQLite file, for scripts
    and benchmarks that print what the engine makes of it; the file goes when the block ends."""
    from server.db import make_engine, make_sessionmaker, transaction
    from server.migrate import upgrade

    with tempfile.TemporaryDirectory() as tmp:
        url = f"sqlite:///{Path(tmp) / 'demo.db'}"
        upgrade(url)
        engine = make_engine(url)
        factory = make_sessionmaker(engine)
        settings = Settings(database_url=url, demo=True, password_time_cost=1, password_memory_kib=1024,
                            password_parallelism=1)
        with transaction(factory) as session:
            load_demo(session, settings=settings)
        try:
            yield factory
        finally:
            engine.dispose()


def read_demo(path: Path = DEMO_FILE) -> dict[str, Any]:
    data: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
    return data


def load_demo(session: Session, *, settings: Settings, if_missing: bool = False, path: Path = DEMO_FILE) -> str:
    """Create the demo team with its users, parts, airframes and missions; returns a one-line summary."""
    data = read_demo(path)
    team_name = data["team"]["name"]
    if session.scalar(select(Team).where(Team.name == team_name)) is not None:
        if if_missing:
            return f"demo team {team_name!r} already loaded"
        raise Conflict(f"The demo team {team_name!r} already exists")
    team = teams.create_team(session, name=team_name)
    for user in data["users"]:
        teams.create_user(
            session,
            settings=settings,
            email=user["email"],
            password=user["password"],
            team=team,
            role=user["role"],
            display_name=user.get("display_name", ""),
        )
    counts = {}
    for kind, schema in CREATE_SCHEMAS.items():
        rows = data.get(kind, [])
        for row in rows:
            model = validate(schema, row, what=f"demo {kind} {row.get('name')!r}")
            parts.create_part(session, team_id=team.id, user_id=None, kind=kind, data=model)
        counts[kind] = len(rows)
    airframe_ids = {}
    for row in data["airframes"]:
        airframe = missions.create_airframe(
            session, team_id=team.id, data=validate(AirframeCreate, row, what="demo airframe")
        )
        airframe_ids[airframe.name] = airframe.id
    for row in data["missions"]:
        fields = {k: v for k, v in row.items() if k != "airframe"} | {"airframe_id": airframe_ids[row["airframe"]]}
        missions.create_mission(session, team_id=team.id, data=validate(MissionCreate, fields, what="demo mission"))
    runs = data.get("bench_runs", [])
    if runs:
        by_number = {
            kind: {p.part_number: p.id for p in session.scalars(select(model).where(model.team_id == team.id))}
            for kind, model in PART_MODELS.items()
        }
        for row in runs:
            meta = BenchRunMeta(
                name=row["name"],
                motor_id=by_number["motors"][row["motor"]],
                propeller_id=by_number["propellers"][row["propeller"]],
                esc_id=by_number["escs"][row["esc"]],
                pack_id=by_number["batteries"][row["pack"]] if row.get("pack") else None,
                supply_voltage_v=row.get("supply_voltage_v"),
                altitude_m=row.get("altitude_m", 0.0),
                notes=row.get("notes", ""),
            )
            raw = (path.parent / row["file"]).read_bytes()
            bench_runs.import_run(session, team_id=team.id, user_id=None, meta=meta, raw=raw, filename=row["file"])
    listed = ", ".join(f"{n} {KIND_WORDS[k][2]}" for k, n in counts.items())
    return (
        f"loaded demo team {team_name!r}: {listed}, {len(data['airframes'])} airframes, "
        f"{len(data['missions'])} missions, {len(runs)} synthetic bench runs (invented data)"
    )
