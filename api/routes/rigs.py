"""`/v1/rigs`: CRUD for stored rigs (see api.routes.crud and api.resources for the rules)."""

from api.resources import RIGS
from api.routes.crud import crud_router

router = crud_router(RIGS)
