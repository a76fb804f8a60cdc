"""observing sites, and a club's default site

Revision ID: 0004_observing_sites
Revises: 0007_saved_evaluations
Create Date: 2026-12-02 05:00:00

"""
from typing import Sequence, Union

import sqlalchemy as sa
import sqlmodel  # noqa: F401
from alembic import op

revision: str = '0004_observing_sites'
down_revision: Union[str, Sequence[str], None] = '0007_saved_evaluations'
branch_labels: Union[str, Sequence[str], None] = None
depends_on: Union[str, Sequence[str], None] = None

ID = sa.BigInteger().with_variant(sa.Integer(), 'sqlite')


def upgrade() -> None:
    op.create_table('sites',
    sa.Column('id', ID, nullable=False),
    sa.Column('owner_id', ID, nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('sites', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_sites_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_sites_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_sites_visibility'), ['visibility'], unique=False)
    with op.batch_alter_table('accounts', schema=None) as batch_op:
        batch_op.add_column(sa.Column('default_site_id', ID, nullable=True))
        batch_op.create_index(batch_op.f('ix_accounts_default_site_id'), ['default_site_id'], unique=False)
        batch_op.create_foreign_key('fk_accounts_default_site_id_sites', 'sites', ['default_site_id'], ['id'],
                                    ondelete='SET NULL')


def downgrade() -> None:
    with op.batch_alter_table('accounts', schema=None) as batch_op:
        batch_op.drop_constraint('fk_accounts_default_site_id_sites', type_='foreignkey')
        batch_op.drop_index(batch_op.f('ix_accounts_default_site_id'))
        batch_op.drop_column('default_site_id')
    with op.batch_alter_table('sites', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_sites_visibility'))
        batch_op.drop_index(batch_op.f('ix_sites_owner_id'))
        batch_op.drop_index(batch_op.f('ix_sites_name'))
    op.drop_table('sites')
