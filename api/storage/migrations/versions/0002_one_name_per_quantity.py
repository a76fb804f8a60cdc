"""one name per quantity: stored designs and mount types in this release's words

Telescopes stored with design "astrograph" (a purpose, not a design) become design "other"; where
they state no throughput, the 0.85 the old design's default gave is written, so their results do not
change. Mounts stored with type "harmonic-equatorial" become type "german-equatorial" with drive
"strain-wave". Both inline in rigs and as stored equipment. Each changed item's version grows by one,
so ETags read before the upgrade no longer match.

Downgrade turns german-equatorial mounts with a strain-wave drive back into "harmonic-equatorial"
and drops every mount's drive (the old schema has no such field); a telescope that was an
"astrograph" stays "other", a value the old schema also accepts.

Revision ID: 0002_one_name_per_quantity
Revises: 0001
Create Date: 2026-12-02 04:50:00

"""
from typing import Any, Callable, Sequence, Union

import sqlalchemy as sa
from alembic import op

# revision identifiers, used by Alembic.
revision: str = "0002_one_name_per_quantity"
down_revision: Union[str, Sequence[str], None] = "0001"
branch_labels: Union[str, Sequence[str], None] = None
depends_on: Union[str, Sequence[str], None] = None

# The values as they were in this revision (kept here, not imported: a migration must not change
# when the application's code does).
OLD_DESIGN = "astrograph"
NEW_DESIGN = "other"
OLD_DESIGN_THROUGHPUT = 0.85
OLD_MOUNT_TYPE = "harmonic-equatorial"
NEW_MOUNT_TYPE = "german-equatorial"
NEW_DRIVE = "strain-wave"

BATCH = 500


def _table(name: str) -> sa.Table:
    return sa.table(name, sa.column("id", sa.BigInteger), sa.column("spec", sa.JSON),
                    sa.column("version", sa.BigInteger))


def _rewrite(name: str, change: Callable[[dict], dict | None]) -> None:
    """Apply ``change`` to every row's spec of table ``name``; ``None`` means unchanged."""
    table = _table(name)
    connection = op.get_bind()
    last = 0
    while True:
        rows = connection.execute(
            sa.select(table.c.id, table.c.spec, table.c.version)
            .where(table.c.id > last).order_by(table.c.id).limit(BATCH)
        ).all()
        if not rows:
            return
        for row_id, spec, version in rows:
            new = change(dict(spec or {}))
            if new is not None:
                connection.execute(
                    table.update().where(table.c.id == row_id).values(spec=new, version=version + 1)
                )
        last = rows[-1][0]


def _telescope_up(spec: dict) -> dict | None:
    if spec.get("design") != OLD_DESIGN:
        return None
    spec["design"] = NEW_DESIGN
    if spec.get("throughput") is None:
        spec["throughput"] = OLD_DESIGN_THROUGHPUT
    return spec


def _mount_up(spec: dict) -> dict | None:
    if spec.get("type") != OLD_MOUNT_TYPE:
        return None
    spec["type"] = NEW_MOUNT_TYPE
    if spec.get("drive") is None:
        spec["drive"] = NEW_DRIVE
    return spec


def _mount_down(spec: dict) -> dict | None:
    if "drive" not in spec:
        return None
    drive = spec.pop("drive")
    if spec.get("type") == NEW_MOUNT_TYPE and drive == NEW_DRIVE:
        spec["type"] = OLD_MOUNT_TYPE
    return spec


def _inline(slot: str, change: Callable[[dict], dict | None]) -> Callable[[dict], dict | None]:
    """``change`` applied to a rig's inline component in ``slot`` (a stored one is ``{"id": N}``)."""

    def rig(spec: dict) -> dict | None:
        part: Any = spec.get(slot)
        if not isinstance(part, dict) or set(part) == {"id"}:
            return None
        new = change(dict(part))
        return None if new is None else {**spec, slot: new}

    return rig


def upgrade() -> None:
    """Upgrade schema."""
    _rewrite("telescopes", _telescope_up)
    _rewrite("mounts", _mount_up)
    _rewrite("rigs", _inline("telescope", _telescope_up))
    _rewrite("rigs", _inline("mount", _mount_up))


def downgrade() -> None:
    """Downgrade schema."""
    _rewrite("mounts", _mount_down)
    _rewrite("rigs", _inline("mount", _mount_down))
