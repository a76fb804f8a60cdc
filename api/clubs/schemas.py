"""Response bodies of the public club views (``/v1/clubs…``), named by role like those in api.schemas.

(No ``from __future__ import annotations``: the equipment models are built at run time in
api.schemas and named here as values.)
"""

from datetime import date

from pydantic import BaseModel, Field, create_model

from api.clubs.operation_schemas import Availability
from api.schemas import CAMERA, MOUNT, TELESCOPE, TRAIN_ELEMENT, AccountPublic, ListMeta, RigPublic
from plugins.results import Comparison


class ClubPublic(AccountPublic):
    """A club account's public profile."""


class ClubList(ListMeta):
    """One page of club accounts."""

    items: list[ClubPublic]


class ClubRigPublic(RigPublic):
    """A club's public rig, with whether its parts go together, in words."""

    fit: str | None = Field(
        default=None, description="The compatibility verdict in plain words, as on the club page and "
        "in the CSV's `fit` column: e.g. 'fits', 'fits with 3.1 mm of spacers', 'vignettes: image "
        "circle 18.9 mm < sensor diagonal 27.4 mm'. Null for a rig stored invalid or when the "
        "compatibility calculator is not loaded.",
    )


class ClubRigList(ListMeta):
    """One page of a club's public rigs."""

    items: list[ClubRigPublic]


def _on_the_shelf(public: type[BaseModel]) -> type[BaseModel]:
    """A stored item of the club, with whether it can be borrowed now."""
    return create_model(
        f"Club{public.__name__}", __base__=public, __doc__=f"{public.__doc__} With its availability.",
        availability=(Availability, Field(description="'available', 'on loan' or 'retired'.")),
        due=(date | None, Field(default=None, description="When on loan: the day it is due back.")),
        borrower=(str | None, Field(default=None, description="Who has it: shown only to the club's "
                                    "officers and to the borrower; null for everyone else.")),
        overdue=(bool | None, Field(default=None, description="Out past its due date (officers only).")),
    )


SHELF = {"telescopes": _on_the_shelf(TELESCOPE.public), "cameras": _on_the_shelf(CAMERA.public),
         # "modifiers": the loans' old name of the kind (api.clubs.operation_schemas.ItemKind)
         "modifiers": _on_the_shelf(TRAIN_ELEMENT.public), "mounts": _on_the_shelf(MOUNT.public)}


class ClubEquipment(BaseModel):
    """A club's equipment, by kind, oldest first, each item with its availability."""

    club: str = Field(description="Handle of the club.")
    telescopes: list[SHELF["telescopes"]]
    cameras: list[SHELF["cameras"]]
    train_elements: list[SHELF["modifiers"]] = Field(
        description="Reducers, correctors, filters, wheels, guiders, spacers and eyepieces."
    )
    modifiers: list[SHELF["modifiers"]] = Field(
        deprecated=True, description="Deprecated: the same list as train_elements, for one release."
    )
    mounts: list[SHELF["mounts"]]
    complete: bool = Field(
        description="False when a kind has more public items than the server's max_page_size; page "
        "through /v1/<kind>?owner=<club>&visibility=public for the rest."
    )


class ClubComparison(Comparison):
    """Every loaded calculator over the club's public rigs (oldest first)."""

    club: str = Field(description="Handle of the club.")
    baseline_rig_id: int | None = Field(
        description="Id of the baseline rig (null when the club has no public rig); `baseline` is its index."
    )
    target: str = Field(description="The deep-sky object the target_fit calculator placed in each field.")
    rigs_total: int = Field(
        description="The club's public rigs; more than len(rigs) when over the server's "
        "max_rigs_per_comparison."
    )
