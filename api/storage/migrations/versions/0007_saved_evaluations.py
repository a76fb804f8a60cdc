"""saved evaluations

Revision ID: 0007_saved_evaluations
Revises: 0002_one_name_per_quantity
Create Date: 2026-12-02 04:40:00

"""
from typing import Sequence, Union

import sqlalchemy as sa
import sqlmodel  # noqa: F401  (autogenerate renders sqlmodel.sql.sqltypes.AutoString)
from alembic import op

# revision identifiers, used by Alembic.
revision: str = '0007_saved_evaluations'
down_revision: Union[str, Sequence[str], None] = '0002_one_name_per_quantity'
branch_labels: Union[str, Sequence[str], None] = None
depends_on: Union[str, Sequence[str], None] = None


def upgrade() -> None:
    """Upgrade schema."""
    op.create_table('saved_evaluations',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('result', sa.JSON(), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('saved_evaluations', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_saved_evaluations_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_saved_evaluations_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_saved_evaluations_visibility'), ['visibility'], unique=False)


def downgrade() -> None:
    """Downgrade schema."""
    with op.batch_alter_table('saved_evaluations', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_saved_evaluations_visibility'))
        batch_op.drop_index(batch_op.f('ix_saved_evaluations_owner_id'))
        batch_op.drop_index(batch_op.f('ix_saved_evaluations_name'))

    op.drop_table('saved_evaluations')
