"""`/v1/cameras`: CRUD for stored cameras (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import CAMERAS

router = crud_router(CAMERAS)
