"""part revisions: a token per team and part kind, set to a fresh random value by triggers on every part write

Revision ID: 3f0c7a9e2b51
Revises: 7b3f9e1c2d40
Create Date: 2026-12-02 09:00:00.000000

The parts list's cache (server/services/page_cache.py) compares this token instead of aggregating the team's rows.
The triggers live in the database so that every write counts, whoever makes it. SQLite drops a table's triggers
when batch mode rebuilds the table: a later migration that rebuilds a part table must create them again
(``create_triggers`` below; tests/test_migrations.py checks that they exist at head).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "3f0c7a9e2b51"
down_revision: str | None = "7b3f9e1c2d40"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

KINDS = {"battery": "batteries", "esc": "escs", "motor": "motors", "propeller": "propellers"}
"""Part table -> the kind's name in the API (the key of ``part_revision``)."""

# A fresh random 64-bit value on SQLite; 53 random bits on PostgreSQL.
_SQLITE_BUMP = """INSERT INTO part_revision (team_id, kind, revision) SELECT {team}, '{kind}', random() WHERE {when}
    ON CONFLICT (team_id, kind) DO UPDATE SET revision = excluded.revision;"""

_PG_FUNCTION = """CREATE FUNCTION part_revision_bump() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    teams bigint[];
BEGIN
    IF TG_OP = 'INSERT' THEN
        teams := ARRAY[NEW.team_id];
    ELSIF TG_OP = 'DELETE' THEN
        teams := ARRAY[OLD.team_id];
    ELSIF OLD.team_id = NEW.team_id THEN
        teams := ARRAY[NEW.team_id];
    ELSE
        teams := ARRAY[OLD.team_id, NEW.team_id];
    END IF;
    INSERT INTO part_revision (team_id, kind, revision)
        SELECT t, TG_ARGV[0], (random() * 9007199254740991)::bigint FROM unnest(teams) AS t
        ON CONFLICT (team_id, kind) DO UPDATE SET revision = excluded.revision;
    RETURN NULL;
END
$$"""


def create_triggers(table: str) -> None:
    """The triggers of one part table (after it was created or rebuilt)."""
    kind = KINDS[table]
    if op.get_bind().dialect.name == "postgresql":
        op.execute(f"CREATE TRIGGER part_revision_{table} AFTER INSERT OR UPDATE OR DELETE ON {table} "
                   f"FOR EACH ROW EXECUTE FUNCTION part_revision_bump('{kind}')")
        return
    bumps = {
        "insert": [_SQLITE_BUMP.format(team="NEW.team_id", kind=kind, when="1")],
        "update": [_SQLITE_BUMP.format(team="NEW.team_id", kind=kind, when="1"),
                   _SQLITE_BUMP.format(team="OLD.team_id", kind=kind, when="OLD.team_id IS NOT NEW.team_id")],
        "delete": [_SQLITE_BUMP.format(team="OLD.team_id", kind=kind, when="1")],
    }
    for event, statements in bumps.items():
        op.execute(f"CREATE TRIGGER part_revision_{table}_{event} AFTER {event.upper()} ON {table} FOR EACH ROW "
                   f"BEGIN {' '.join(statements)} END")


def drop_triggers(table: str) -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute(f"DROP TRIGGER IF EXISTS part_revision_{table} ON {table}")
        return
    for event in ("insert", "update", "delete"):
        op.execute(f"DROP TRIGGER IF EXISTS part_revision_{table}_{event}")


def upgrade() -> None:
    op.create_table(
        "part_revision",
        sa.Column("team_id", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("kind", sa.String(length=16), nullable=False),
        sa.Column("revision", sa.BigInteger(), nullable=False),
        sa.PrimaryKeyConstraint("team_id", "kind", name=op.f("pk_part_revision")),
    )
    if op.get_bind().dialect.name == "postgresql":
        op.execute(_PG_FUNCTION)
    for table in KINDS:
        create_triggers(table)


def downgrade() -> None:
    for table in KINDS:
        drop_triggers(table)
    if op.get_bind().dialect.name == "postgresql":
        op.execute("DROP FUNCTION IF EXISTS part_revision_bump()")
    op.drop_table("part_revision")
