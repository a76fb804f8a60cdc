"""`/v1/telescopes`: CRUD for stored telescopes (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import TELESCOPES

router = crud_router(TELESCOPES)
