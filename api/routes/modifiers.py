"""`/v1/modifiers`: CRUD for stored modifiers (see api.routes.crud and api.resources for the rules)."""

from api.resources import MODIFIERS
from api.routes.crud import crud_router

router = crud_router(MODIFIERS)
