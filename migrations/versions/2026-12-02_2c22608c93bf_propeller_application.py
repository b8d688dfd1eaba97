"""Propeller application: what a propeller is made for (multirotor, fixed_wing or any; existing rows: any).

Revision ID: 2c22608c93bf
Revises: 5d0c7e3a9b21
Create Date: 2026-12-02 02:00:37.477684
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = '2c22608c93bf'
down_revision: str | None = '5d0c7e3a9b21'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("propeller", schema=None) as batch_op:
        batch_op.add_column(sa.Column("application", sa.String(length=16), server_default="any", nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("propeller", schema=None) as batch_op:
        batch_op.drop_column("application")
