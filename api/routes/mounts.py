"""`/v1/mounts`: CRUD for stored mounts (see api.routes.crud and api.resources for the rules)."""

from api.resources import MOUNTS
from api.routes.crud import crud_router

router = crud_router(MOUNTS)
