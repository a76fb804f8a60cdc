"""The stored-site resource for the generic CRUD router (owner, visibility, versions like equipment)."""

from __future__ import annotations

from api import schemas
from api.equipment.crud import crud_router
from api.equipment.rules import Resource, _equipment_prepare, _equipment_present
from api.storage.models import SiteRow

SITES = Resource(
    path="sites", label="site", table=SiteRow, create=schemas.SITE.create, update=schemas.SITE.update,
    public=schemas.SITE.public, list=schemas.SITE.list, prepare=_equipment_prepare,
    present=_equipment_present(schemas.SITE.public), tags=["sites"],
)

router = crud_router(SITES)
