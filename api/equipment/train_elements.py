"""`/v1/train-elements`: CRUD for stored train elements, and the same items at the deprecated
`/v1/modifiers` for one release (see api.equipment.crud and api.equipment.rules for the rules)."""

from api.equipment.crud import crud_router
from api.equipment.rules import MODIFIERS, TRAIN_ELEMENTS

router = crud_router(TRAIN_ELEMENTS)
old_router = crud_router(MODIFIERS)
