"""`/v1/cameras`: CRUD for stored cameras (see api.routes.crud and api.resources for the rules)."""

from api.resources import CAMERAS
from api.routes.crud import crud_router

router = crud_router(CAMERAS)
