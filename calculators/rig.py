"""A rig: a telescope, an ordered imaging train, a camera (or an eyepiece), a mount and accessories.

Importable as ``calculators.schemas.Rig`` too. See :mod:`calculators.train_elements` for the train.
"""

from __future__ import annotations

from pydantic import Field, ValidationInfo, field_validator

from calculators.binning import MAX_BINNING
from calculators.schemas import (
    Accessory,
    Camera,
    Geometry,
    Modifier,
    Mount,
    Name,
    Strict,
    Telescope,
    one_currency,
)
from calculators.train_elements import (
    MAX_TRAIN_ELEMENTS,
    ElementKind,
    TrainElement,
    check_train,
    train_element,
)


class Rig(Strict):
    """A telescope, an ordered imaging train, a camera (or an eyepiece ending the train), a mount and
    accessories. ``modifier`` is the old single-element slot, read for one release as a one-element
    train."""

    name: Name
    telescope: Telescope
    modifier: Modifier | None = Field(
        default=None, exclude=True, deprecated=True,
        description="Deprecated: read as a one-element `train` for one release.",
    )
    train: list[TrainElement] = Field(
        default_factory=list, max_length=MAX_TRAIN_ELEMENTS, validate_default=True,
        description="Elements between the telescope and the camera, telescope side first "
        f"(0-{MAX_TRAIN_ELEMENTS}).",
    )
    camera: Camera | None = Field(
        default=None, validate_default=True,
        description="Needed unless the train ends in an eyepiece (then there is none).",
    )
    binning: int = Field(
        default=1, ge=1, le=MAX_BINNING,
        description="Binning the camera is read at: b × b pixels summed into one (1: none; see "
        "the sampling, target_fit and integration_time calculators). Only with a camera.",
    )
    mount: Mount | None = None
    accessories: list[Accessory] = Field(default_factory=list, max_length=50)
    geometry: Geometry | None = None

    @field_validator("train")
    @classmethod
    def _train_possible(cls, value: list, info: ValidationInfo) -> list:
        modifier = info.data.get("modifier")
        if modifier is not None:
            if value:
                raise ValueError("give the train, or the deprecated modifier, not both")
            value = [train_element(modifier.to_element())]
        telescope = info.data.get("telescope")
        check_train(value, telescope.focal_length_mm / telescope.aperture_mm if telescope else None)
        return value

    @field_validator("camera")
    @classmethod
    def _camera_or_eyepiece(cls, value: Camera | None, info: ValidationInfo) -> Camera | None:
        train = info.data.get("train")
        if train is None:  # the train itself was invalid; that error says enough
            return value
        eyepiece = bool(train) and train[-1].kind == ElementKind.eyepiece
        if eyepiece and value is not None:
            raise ValueError("a rig whose train ends in an eyepiece has no camera; drop one of them")
        if not eyepiece and value is None:
            raise ValueError("a rig needs a camera, or an eyepiece as the last element of its train")
        return value

    @field_validator("binning")
    @classmethod
    def _binning_needs_a_camera(cls, value: int, info: ValidationInfo) -> int:
        if value != 1 and "camera" in info.data and info.data["camera"] is None:
            raise ValueError("a rig without a camera has no pixels to bin; leave binning at 1")
        return value

    @field_validator("accessories")
    @classmethod
    def _one_currency(cls, value: list[Accessory]) -> list[Accessory]:
        return one_currency(value)

    def model_post_init(self, _context) -> None:
        self.modifier = None  # read into the train

    @property
    def eyepiece(self):
        """The eyepiece ending the train, or None."""
        return self.train[-1] if self.train and self.train[-1].kind == ElementKind.eyepiece else None
