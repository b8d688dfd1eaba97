"""mission motor-out limit: minimum thrust-to-weight with the worst single motor out (nullable: no check)

Revision ID: 5d0c7e3a9b21
Revises: 5eb55cc62007
Create Date: 2026-12-02 03:40:00.000000
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "5d0c7e3a9b21"
down_revision: str | None = "5eb55cc62007"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.add_column(sa.Column("min_thrust_to_weight_motor_out", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.drop_column("min_thrust_to_weight_motor_out")
