"""initial schema

Revision ID: 0001
Revises: 
Create Date: 2026-12-01 20:45:37.600940

"""
from typing import Sequence, Union

import sqlalchemy as sa
import sqlmodel  # noqa: F401  (autogenerate renders sqlmodel.sql.sqltypes.AutoString)
from alembic import op

# revision identifiers, used by Alembic.
revision: str = '0001'
down_revision: Union[str, Sequence[str], None] = None
branch_labels: Union[str, Sequence[str], None] = None
depends_on: Union[str, Sequence[str], None] = None


def upgrade() -> None:
    """Upgrade schema."""
    op.create_table('accounts',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('name', sa.String(length=40), nullable=False),
    sa.Column('kind', sa.String(length=10), nullable=False),
    sa.Column('display_name', sa.String(length=120), nullable=False),
    sa.Column('location', sa.String(length=200), nullable=False),
    sa.Column('contact_url', sa.String(length=500), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('accounts', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_accounts_name'), ['name'], unique=True)

    op.create_table('api_keys',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('account_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('key_hash', sa.String(length=64), nullable=False),
    sa.Column('prefix', sa.String(length=16), nullable=False),
    sa.Column('scope', sa.String(length=10), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('revoked_at', sa.DateTime(timezone=True), nullable=True),
    sa.ForeignKeyConstraint(['account_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('key_hash')
    )
    with op.batch_alter_table('api_keys', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_api_keys_account_id'), ['account_id'], unique=False)

    op.create_table('cameras',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('cameras', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_cameras_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_cameras_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_cameras_visibility'), ['visibility'], unique=False)

    op.create_table('modifiers',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('modifiers', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_modifiers_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_modifiers_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_modifiers_visibility'), ['visibility'], unique=False)

    op.create_table('mounts',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('mounts', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_mounts_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_mounts_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_mounts_visibility'), ['visibility'], unique=False)

    op.create_table('telescopes',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('telescopes', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_telescopes_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_telescopes_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_telescopes_visibility'), ['visibility'], unique=False)

    op.create_table('rigs',
    sa.Column('id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('owner_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=False),
    sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
    sa.Column('spec', sa.JSON(), nullable=False),
    sa.Column('version', sa.BigInteger(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('telescope_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=True),
    sa.Column('camera_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=True),
    sa.Column('modifier_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=True),
    sa.Column('mount_id', sa.BigInteger().with_variant(sa.Integer(), 'sqlite'), nullable=True),
    sa.ForeignKeyConstraint(['camera_id'], ['cameras.id'], ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['modifier_id'], ['modifiers.id'], ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['mount_id'], ['mounts.id'], ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['telescope_id'], ['telescopes.id'], ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('rigs', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_rigs_camera_id'), ['camera_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_modifier_id'), ['modifier_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_mount_id'), ['mount_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_telescope_id'), ['telescope_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_rigs_visibility'), ['visibility'], unique=False)



def downgrade() -> None:
    """Downgrade schema."""
    with op.batch_alter_table('rigs', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_rigs_visibility'))
        batch_op.drop_index(batch_op.f('ix_rigs_telescope_id'))
        batch_op.drop_index(batch_op.f('ix_rigs_owner_id'))
        batch_op.drop_index(batch_op.f('ix_rigs_name'))
        batch_op.drop_index(batch_op.f('ix_rigs_mount_id'))
        batch_op.drop_index(batch_op.f('ix_rigs_modifier_id'))
        batch_op.drop_index(batch_op.f('ix_rigs_camera_id'))

    op.drop_table('rigs')
    with op.batch_alter_table('telescopes', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_telescopes_visibility'))
        batch_op.drop_index(batch_op.f('ix_telescopes_owner_id'))
        batch_op.drop_index(batch_op.f('ix_telescopes_name'))

    op.drop_table('telescopes')
    with op.batch_alter_table('mounts', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_mounts_visibility'))
        batch_op.drop_index(batch_op.f('ix_mounts_owner_id'))
        batch_op.drop_index(batch_op.f('ix_mounts_name'))

    op.drop_table('mounts')
    with op.batch_alter_table('modifiers', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_modifiers_visibility'))
        batch_op.drop_index(batch_op.f('ix_modifiers_owner_id'))
        batch_op.drop_index(batch_op.f('ix_modifiers_name'))

    op.drop_table('modifiers')
    with op.batch_alter_table('cameras', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_cameras_visibility'))
        batch_op.drop_index(batch_op.f('ix_cameras_owner_id'))
        batch_op.drop_index(batch_op.f('ix_cameras_name'))

    op.drop_table('cameras')
    with op.batch_alter_table('api_keys', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_api_keys_account_id'))

    op.drop_table('api_keys')
    with op.batch_alter_table('accounts', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_accounts_name'))

    op.drop_table('accounts')
