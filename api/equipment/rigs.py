"""`/v1/rigs`: CRUD for stored rigs (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import RIGS

router = crud_router(RIGS)
