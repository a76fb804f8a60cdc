"""`/v1/mounts`: CRUD for stored mounts (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import MOUNTS

router = crud_router(MOUNTS)
