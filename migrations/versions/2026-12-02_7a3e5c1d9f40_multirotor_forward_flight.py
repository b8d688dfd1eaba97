"""multirotor forward flight: airframe drag area, frontal-area note and coaxial flag; mission climb rate; kind widened

Revision ID: 7a3e5c1d9f40
Revises: 2c22608c93bf
Create Date: 2026-12-02 06:00:00.000000
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "7a3e5c1d9f40"
down_revision: str | None = "2c22608c93bf"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("airframe", schema=None) as batch_op:
        batch_op.add_column(sa.Column("drag_area_m2", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("frontal_area_note", sa.Text(), server_default="", nullable=False))
        batch_op.add_column(sa.Column("coaxial", sa.Boolean(), server_default=sa.false(), nullable=False))
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.add_column(sa.Column("climb_rate_m_s", sa.Float(), server_default="0", nullable=False))
        batch_op.alter_column("kind", existing_type=sa.String(length=8), type_=sa.String(length=16),
                              existing_nullable=False)


def downgrade() -> None:
    # The old schema knows no forward_flight kind (and its column is too narrow for the name): such missions go back
    # as hovers of the same airframe.
    op.execute("UPDATE mission SET kind = 'hover' WHERE kind = 'forward_flight'")
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.alter_column("kind", existing_type=sa.String(length=16), type_=sa.String(length=8),
                              existing_nullable=False)
        batch_op.drop_column("climb_rate_m_s")
    with op.batch_alter_table("airframe", schema=None) as batch_op:
        batch_op.drop_column("coaxial")
        batch_op.drop_column("frontal_area_note")
        batch_op.drop_column("drag_area_m2")
