"""bench run thrust sign: -1 when an upload's thrust column was flipped on import (load cell reversed)

Revision ID: 1a4e191e1862
Revises: 3a10a656525c
Create Date: 2026-12-02 00:33:25.020266
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "1a4e191e1862"
down_revision: str | None = "3a10a656525c"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("bench_run", schema=None) as batch_op:
        batch_op.add_column(sa.Column("thrust_sign", sa.Integer(), server_default="1", nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("bench_run", schema=None) as batch_op:
        batch_op.drop_column("thrust_sign")
