"""imaging train: stored modifiers become train elements, each rig's modifier a one-element train

Revision ID: 0003_imaging_train
Revises: 0005_club_operations
Create Date: 2026-12-02 05:00:00

Upgrade: every row of ``modifiers`` is copied, with its id, into ``train_elements`` (its
``corrected_field_mm`` renamed ``image_circle_mm``; a reducer whose factor is above 1 or a barlow whose
factor is below 1, which the train's rules refuse, becomes a ``corrector``, the kind that takes any
factor). Each rig's spec trades ``modifier`` for ``train`` (``[]`` for none, else a one-element list,
inline or ``{"id": N}``), and ``rigs.modifier_id`` becomes ``rigs.train_0_id``.

Downgrade keeps what the old schema can hold: the elements with focusing power go back to
``modifiers``, and a rig keeps the first such element of its train as its modifier (the rest of its
train is dropped).
"""
from typing import Sequence, Union

import sqlalchemy as sa
import sqlmodel  # noqa: F401
from alembic import op

revision: str = '0003_imaging_train'
down_revision: Union[str, Sequence[str], None] = '0005_club_operations'
branch_labels: Union[str, Sequence[str], None] = None
depends_on: Union[str, Sequence[str], None] = None

ID = sa.BigInteger().with_variant(sa.Integer(), 'sqlite')
TRAIN_COLUMNS = [f'train_{i}_id' for i in range(8)]
POWERED = {'reducer', 'flattener', 'corrector', 'reducer-flattener', 'barlow'}


def _item_table(name: str) -> None:
    op.create_table(
        name,
        sa.Column('id', ID, nullable=False),
        sa.Column('owner_id', ID, nullable=False),
        sa.Column('visibility', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
        sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=True),
        sa.Column('spec', sa.JSON(), nullable=False),
        sa.Column('version', sa.BigInteger(), nullable=False),
        sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
        sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
        sa.Column('retired_at', sa.DateTime(timezone=True), nullable=True),
        sa.ForeignKeyConstraint(['owner_id'], ['accounts.id'], ondelete='CASCADE'),
        sa.PrimaryKeyConstraint('id'),
    )
    with op.batch_alter_table(name, schema=None) as batch_op:
        batch_op.create_index(batch_op.f(f'ix_{name}_name'), ['name'], unique=False)
        batch_op.create_index(batch_op.f(f'ix_{name}_owner_id'), ['owner_id'], unique=False)
        batch_op.create_index(batch_op.f(f'ix_{name}_visibility'), ['visibility'], unique=False)


def _items(name: str) -> sa.Table:
    return sa.table(
        name, sa.column('id', ID), sa.column('owner_id', ID), sa.column('visibility', sa.String),
        sa.column('name', sa.String), sa.column('spec', sa.JSON), sa.column('version', sa.BigInteger),
        sa.column('created_at', sa.DateTime(timezone=True)),
        sa.column('updated_at', sa.DateTime(timezone=True)),
        sa.column('retired_at', sa.DateTime(timezone=True)),
    )


def _is_ref(value) -> bool:
    return isinstance(value, dict) and set(value) == {'id'}


def modifier_to_element(spec: dict) -> dict:
    """An old modifier's spec as a train element's (kept here: a migration must not change later)."""
    spec = dict(spec)
    if 'corrected_field_mm' in spec:
        field = spec.pop('corrected_field_mm')
        if field is not None:
            spec['image_circle_mm'] = field
    factor = spec.get('factor') or 1.0
    kind = spec.get('kind')
    if (kind in ('reducer', 'reducer-flattener') and factor > 1) or (kind == 'barlow' and factor < 1):
        spec['kind'] = 'corrector'
    return spec


def element_to_modifier(spec: dict) -> dict:
    keep = {'name', 'kind', 'factor', 'throughput', 'mass_kg', 'price'}
    out = {k: v for k, v in spec.items() if k in keep}
    if spec.get('image_circle_mm') is not None:
        out['corrected_field_mm'] = spec['image_circle_mm']
    out.setdefault('factor', 1.0)
    return out


def _copy(source: str, target: str, convert, keep=lambda spec: True) -> None:
    bind = op.get_bind()
    src, dst = _items(source), _items(target)
    rows = bind.execute(sa.select(src)).mappings().all()
    values = [{**row, 'spec': convert(row['spec'])} for row in rows if keep(row['spec'])]
    if values:
        bind.execute(dst.insert(), values)


def upgrade() -> None:
    _item_table('train_elements')
    _copy('modifiers', 'train_elements', modifier_to_element)
    if op.get_bind().dialect.name == 'postgresql':  # ids were copied: move the sequence past them
        op.execute("SELECT setval(pg_get_serial_sequence('train_elements', 'id'), "
                   "COALESCE((SELECT MAX(id) FROM train_elements), 0) + 1, false)")

    with op.batch_alter_table('rigs', schema=None) as batch_op:
        for column in TRAIN_COLUMNS:
            batch_op.add_column(sa.Column(column, ID, nullable=True))
            batch_op.create_foreign_key(f'fk_rigs_{column}_train_elements', 'train_elements',
                                        [column], ['id'], ondelete='RESTRICT')
            batch_op.create_index(batch_op.f(f'ix_rigs_{column}'), [column], unique=False)

    bind = op.get_bind()
    rigs = sa.table('rigs', sa.column('id', ID), sa.column('spec', sa.JSON),
                    sa.column('modifier_id', ID), sa.column('train_0_id', ID))
    for row in bind.execute(sa.select(rigs.c.id, rigs.c.spec)).mappings().all():
        spec = dict(row['spec'])
        modifier = spec.pop('modifier', None)
        if modifier is None:
            spec['train'] = []
        elif _is_ref(modifier):
            spec['train'] = [modifier]
        else:
            spec['train'] = [modifier_to_element(modifier)]
        bind.execute(rigs.update().where(rigs.c.id == row['id']).values(spec=spec))
    bind.execute(rigs.update().values(train_0_id=rigs.c.modifier_id))

    with op.batch_alter_table('rigs', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_rigs_modifier_id'))
        batch_op.drop_column('modifier_id')

    # Saved evaluations keep copies of their components: the modifiers become one-element trains.
    saved = sa.table('saved_evaluations', sa.column('id', ID), sa.column('spec', sa.JSON))
    for row in bind.execute(sa.select(saved.c.id, saved.c.spec)).mappings().all():
        spec = dict(row['spec'])
        components = dict(spec.get('components') or {})
        if 'modifiers' in components:
            components['trains'] = [[] if m is None else [modifier_to_element(m)]
                                    for m in components.pop('modifiers')]
        spec['components'] = components
        spec['stored'] = [{**e, 'kind': 'train', 'position': 0} if e.get('kind') == 'modifier' else e
                          for e in spec.get('stored', [])]
        bind.execute(saved.update().where(saved.c.id == row['id']).values(spec=spec))

    with op.batch_alter_table('modifiers', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_modifiers_visibility'))
        batch_op.drop_index(batch_op.f('ix_modifiers_owner_id'))
        batch_op.drop_index(batch_op.f('ix_modifiers_name'))
    op.drop_table('modifiers')


def downgrade() -> None:
    _item_table('modifiers')
    _copy('train_elements', 'modifiers', element_to_modifier,
          keep=lambda spec: spec.get('kind') in POWERED)
    bind = op.get_bind()
    kept = {row[0] for row in bind.execute(sa.text('SELECT id FROM modifiers'))}

    with op.batch_alter_table('rigs', schema=None) as batch_op:
        batch_op.add_column(sa.Column('modifier_id', ID, nullable=True))
        batch_op.create_foreign_key('fk_rigs_modifier_id_modifiers', 'modifiers', ['modifier_id'],
                                    ['id'], ondelete='RESTRICT')
        batch_op.create_index(batch_op.f('ix_rigs_modifier_id'), ['modifier_id'], unique=False)

    rigs = sa.table('rigs', sa.column('id', ID), sa.column('spec', sa.JSON),
                    sa.column('modifier_id', ID))
    for row in bind.execute(sa.select(rigs.c.id, rigs.c.spec)).mappings().all():
        spec = dict(row['spec'])
        modifier, modifier_id = None, None
        for element in spec.pop('train', None) or []:
            if _is_ref(element) and element['id'] in kept:
                modifier, modifier_id = element, element['id']
                break
            if not _is_ref(element) and element.get('kind') in POWERED:
                modifier = element_to_modifier(element)
                break
        spec['modifier'] = modifier
        bind.execute(rigs.update().where(rigs.c.id == row['id'])
                     .values(spec=spec, modifier_id=modifier_id))

    saved = sa.table('saved_evaluations', sa.column('id', ID), sa.column('spec', sa.JSON))
    for row in bind.execute(sa.select(saved.c.id, saved.c.spec)).mappings().all():
        spec = dict(row['spec'])
        components = dict(spec.get('components') or {})
        if 'trains' in components:
            components['modifiers'] = [
                next((element_to_modifier(e) for e in t if e.get('kind') in POWERED), None)
                for t in components.pop('trains')]
        spec['components'] = components
        spec['stored'] = [{k: v for k, v in e.items() if k != 'position'} | {'kind': 'modifier'}
                          if e.get('kind') == 'train' else e for e in spec.get('stored', [])
                          if e.get('kind') != 'train' or e.get('position') == 0]
        bind.execute(saved.update().where(saved.c.id == row['id']).values(spec=spec))

    with op.batch_alter_table('rigs', schema=None) as batch_op:
        for column in TRAIN_COLUMNS:
            batch_op.drop_index(batch_op.f(f'ix_rigs_{column}'))
            batch_op.drop_constraint(f'fk_rigs_{column}_train_elements', type_='foreignkey')
            batch_op.drop_column(column)

    with op.batch_alter_table('train_elements', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_train_elements_visibility'))
        batch_op.drop_index(batch_op.f('ix_train_elements_owner_id'))
        batch_op.drop_index(batch_op.f('ix_train_elements_name'))
    op.drop_table('train_elements')
