"""`/v1/modifiers`: CRUD for stored modifiers (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import MODIFIERS

router = crud_router(MODIFIERS)
