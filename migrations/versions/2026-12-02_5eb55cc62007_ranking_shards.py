"""Ranking shards: large rankings split into groups of chunks that any worker screens

Revision ID: 5eb55cc62007
Revises: 1a4e191e1862
Create Date: 2026-12-02 02:49:15.509062
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = '5eb55cc62007'
down_revision: str | None = '1a4e191e1862'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('ranking_shard',
    sa.Column('ranking_id', sa.Integer(), nullable=False),
    sa.Column('shard_index', sa.Integer(), nullable=False),
    sa.Column('shard_count', sa.Integer(), nullable=False),
    sa.Column('status', sa.String(length=12), nullable=False),
    sa.Column('progress', sa.Float(), nullable=False),
    sa.Column('error', sa.Text(), nullable=False),
    sa.Column('cancel_requested', sa.Boolean(), nullable=False),
    sa.Column('attempts', sa.Integer(), nullable=False),
    sa.Column('partial', sa.LargeBinary(), nullable=True),
    sa.Column('started_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('finished_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('team_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['ranking_id'], ['ranking.id'], name=op.f('fk_ranking_shard_ranking_id_ranking'),
                            ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['team_id'], ['team.id'], name=op.f('fk_ranking_shard_team_id_team'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_ranking_shard')),
    sa.UniqueConstraint('ranking_id', 'shard_index', name=op.f('uq_ranking_shard_ranking_id'))
    )
    with op.batch_alter_table('ranking_shard', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_ranking_shard_ranking_id'), ['ranking_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_ranking_shard_status'), ['status'], unique=False)
        batch_op.create_index(batch_op.f('ix_ranking_shard_team_id'), ['team_id'], unique=False)



def downgrade() -> None:
    with op.batch_alter_table('ranking_shard', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_ranking_shard_team_id'))
        batch_op.drop_index(batch_op.f('ix_ranking_shard_status'))
        batch_op.drop_index(batch_op.f('ix_ranking_shard_ranking_id'))

    op.drop_table('ranking_shard')
