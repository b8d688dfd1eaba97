"""heat and cold: motor thermal fields (nullable: priors), mission temperature effects, burst, cold day

Revision ID: 7c41d2e8a9f3
Revises: 7a3e5c1d9f40
Create Date: 2026-12-02 05:40:00.000000
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "7c41d2e8a9f3"
down_revision: str | None = "7a3e5c1d9f40"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("motor", schema=None) as batch_op:
        batch_op.add_column(sa.Column("thermal_resistance_k_per_w", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("thermal_time_constant_s", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("max_winding_temperature_c", sa.Float(), nullable=True))
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.add_column(sa.Column("temperature_effects", sa.Boolean(), nullable=False,
                                      server_default=sa.false()))
        batch_op.add_column(sa.Column("burst_s", sa.Float(), nullable=False, server_default="0"))
        batch_op.add_column(sa.Column("cold_day_temperature_c", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("mission", schema=None) as batch_op:
        batch_op.drop_column("cold_day_temperature_c")
        batch_op.drop_column("burst_s")
        batch_op.drop_column("temperature_effects")
    with op.batch_alter_table("motor", schema=None) as batch_op:
        batch_op.drop_column("max_winding_temperature_c")
        batch_op.drop_column("thermal_time_constant_s")
        batch_op.drop_column("thermal_resistance_k_per_w")
