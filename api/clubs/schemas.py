"""Response bodies of the public club views (``/v1/clubs…``), named by role like those in api.schemas.

(No ``from __future__ import annotations``: the equipment models are built at run time in
api.schemas and named here as values.)
"""

from pydantic import BaseModel, Field

from api.schemas import CAMERA, MOUNT, TELESCOPE, TRAIN_ELEMENT, AccountPublic, ListMeta
from plugins.results import Comparison


class ClubPublic(AccountPublic):
    """A club account's public profile."""


class ClubList(ListMeta):
    """One page of club accounts."""

    items: list[ClubPublic]


class ClubEquipment(BaseModel):
    """A club's public equipment, by kind, oldest first."""

    club: str = Field(description="Handle of the club.")
    telescopes: list[TELESCOPE.public]
    cameras: list[CAMERA.public]
    train_elements: list[TRAIN_ELEMENT.public] = Field(
        description="Reducers, correctors, filters, wheels, guiders, spacers and eyepieces."
    )
    modifiers: list[TRAIN_ELEMENT.public] = Field(
        deprecated=True, description="Deprecated: the same list as train_elements, for one release."
    )
    mounts: list[MOUNT.public]
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
