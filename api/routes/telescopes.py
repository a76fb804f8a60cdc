"""`/v1/telescopes`: CRUD for stored telescopes (see api.routes.crud and api.resources for the rules)."""

from api.resources import TELESCOPES
from api.routes.crud import crud_router

router = crud_router(TELESCOPES)
