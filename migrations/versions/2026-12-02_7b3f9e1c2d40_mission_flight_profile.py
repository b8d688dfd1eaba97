"""mission flight profile: segments flown in order (JSON list, empty: single point) and a reserve in minutes

Revision ID: 7b3f9e1c2d40
Revises: 7c41d2e8a9f3
Create Date: 2026-12-02 05:30:00.000000
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "7b3f9e1c2d40"
down_revision: str | None = "7c41d2e8a9f3"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.add_column(sa.Column("segments", sa.JSON(), nullable=False, server_default="[]"))
        batch_op.add_column(sa.Column("reserve_min", sa.Float(), nullable=False, server_default="0"))


def downgrade() -> None:
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.drop_column("reserve_min")
        batch_op.drop_column("segments")
