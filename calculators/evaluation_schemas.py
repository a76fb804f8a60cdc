"""Request and response models of a purchase evaluation (a sweep over candidate equipment).

The service's ``POST /v1/evaluations`` route builds its request model from :class:`EvaluationSpec`
(adding component lists that may hold ``{"id": N}`` references it resolves) and returns
:class:`EvaluationResult` as it comes from :func:`calculators.sweep.evaluate`.
:class:`InlineEvaluationRequest` is the same request with every component given inline, for scripts.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import BaseModel, BeforeValidator, Field, ValidationInfo, field_validator, model_validator

from calculators.binning import MAX_BINNING
from calculators.schemas import Accessory, Camera, Geometry, Modifier, Mount, Strict, Telescope, one_currency
from calculators.ownership import CandidateTrainElement, candidate_model
from calculators.site import SiteUsed
from calculators.train_elements import (
    MAX_TRAIN_ELEMENTS,
    Eyepiece,
    check_train,
    train_element,
)

#: Largest ``limit`` a request may ask for.
MAX_LIMIT = 1000

Direction = Literal["min", "max"]


class Bounds(Strict):
    """Inclusive bounds on one numeric output; give ``min``, ``max`` or both."""

    min: float | None = Field(default=None, description="Smallest acceptable value (inclusive).")
    max: float | None = Field(default=None, description="Largest acceptable value (inclusive).")


class Indices(Strict):
    """One combination, as an index into each of the request's component lists, with its binning
    factor; a visual combination has an ``eyepiece`` index and no ``camera`` or ``binning``."""

    telescope: int = Field(default=0, ge=0)
    camera: int | None = Field(default=0, ge=0, description="Position (from 0) in the request's "
                               "cameras list; null for a visual combination (an eyepiece).")
    train: int = Field(default=0, ge=0)
    mount: int = Field(default=0, ge=0)
    binning: int | None = Field(
        default=None, ge=1, description="The binning factor the camera is read at (one of the "
        "request's `binning`); null for a visual combination. In `baseline`: default the first "
        "factor listed.")
    eyepiece: int | None = Field(
        default=None, ge=0, description="Position (from 0) in the request's eyepieces list, for a "
        "visual combination (no camera); null for an imaging one.")

    @model_validator(mode="before")
    @classmethod
    def _old_modifier_index(cls, data: Any) -> Any:
        # Read for one release: the train's index was the modifier's.
        if isinstance(data, dict) and "modifier" in data and "train" not in data:
            data = dict(data)
            data["train"] = data.pop("modifier")
        return data


class Ids(BaseModel):
    """Stored ids of a combination's components (null for a component given inline or absent)."""

    telescope: int | None = None
    camera: int | None = None
    train: list[int | None] | None = Field(
        default=None, description="One per element of the train (null for an inline element)."
    )
    mount: int | None = None
    eyepiece: int | None = Field(default=None, description="Stored id of a visual combination's "
                                 "eyepiece (null when inline, or for an imaging combination).")


class EvaluationSpec(Strict):
    """What to compute and how to choose: everything of a request except the component lists."""

    constraints: dict[str, Bounds] = Field(
        default_factory=dict,
        description='Bounds per output, keyed "<calculator>.<output>"; a combination is feasible '
        "when every constrained output is defined and within its bounds.",
        examples=[{"sampling.pixel_scale_arcsec": {"min": 0.7, "max": 2.0}}],
    )
    objectives: dict[str, Direction] = Field(
        description='"min" or "max" per output, keyed "<calculator>.<output>"; at least one.',
        examples=[{"cost.total_price": "min", "speed.time_factor_per_arcsec2": "min"}],
    )
    params: dict[str, dict[str, Any]] = Field(
        default_factory=dict, description="Params per calculator, by calculator name."
    )
    baseline: Indices = Field(
        default_factory=Indices,
        description="The combination relative outputs (ratios, time factors) are measured "
        "against; default the first of each list.",
    )
    limit: int = Field(default=20, ge=0, le=MAX_LIMIT, description="How many rows `top` holds.")
    binning: list[Annotated[int, Field(ge=1, le=MAX_BINNING)]] = Field(
        default_factory=lambda: [1], min_length=1, max_length=MAX_BINNING,
        description="Binning factors to try, each a whole number 1-4 listed once: every camera is "
        "swept at each (b × b pixels summed into one; sampling, target_fit and integration_time "
        "honour it). Rows name theirs in `indices.binning`. Default [1].",
        examples=[[1, 2]],
    )
    accessories: list[candidate_model(Accessory)] = Field(
        default_factory=list, max_length=50,
        description="Items added to every combination, as a rig's `accessories` (finder, guide "
        "scope, dew heater…, each with its mass and price): they count in the payload and the "
        "price of each combination, as they do in a stored or inline rig. Prices share one "
        "currency; `owned: true` keeps one out of `cost.purchase_price`.",
    )
    geometry: Geometry | None = Field(
        default=None, description="Where the payload sits on a german-equatorial mount, as a "
        "rig's `geometry`, for every combination: the payload calculator's moments and inertia "
        "need it (null: not stated, those outputs are null).",
    )
    allow_incompatible: bool = Field(
        default=False, description="Keep combinations the compatibility calculator says cannot be "
        "assembled (wrong design, focal ratio out of range, cannot reach focus, too long); by "
        "default they are excluded and counted in `excluded`. \"not stated\" never excludes.",
    )

    @field_validator("accessories")
    @classmethod
    def _accessories_share_a_currency(cls, value: list) -> list:
        return one_currency(value)


def _eyepiece_kind(value: Any) -> Any:
    # A candidate eyepiece may leave out the element's kind: it can only be "eyepiece".
    if isinstance(value, dict) and "kind" not in value:
        return {"kind": "eyepiece", **value}
    return value


#: One candidate eyepiece: the eyepiece train element (``kind`` optional), for visual combinations.
EyepieceCandidate = Annotated[candidate_model(Eyepiece), BeforeValidator(_eyepiece_kind)]

EYEPIECES_DESCRIPTION = (
    'Candidate eyepieces, each as the eyepiece train element takes it ({"focal_length_mm", '
    '"apparent_field_deg", "field_stop_mm", "eye_relief_mm", "name", "mass_kg", "price", "owned"}; "kind" '
    'may be left out) or {"id": N} of a stored one: each telescope × train × eyepiece × mount is a '
    "camera-free (visual) combination beside the imaging ones, its eyepiece ending the train. "
    "`cameras` may be empty when eyepieces are given. Imaging-only outputs are null for visual "
    "combinations (so a constraint on one leaves them infeasible) and the `visual` calculator's "
    "are null for imaging ones."
)


#: One candidate train: its elements, telescope side first (each may be marked ``owned``).
Train = Annotated[list[CandidateTrainElement], Field(max_length=MAX_TRAIN_ELEMENTS)]


def trains_from(value: list, info) -> list:
    """The request's trains, with the deprecated ``modifiers`` read as one-element trains; each
    train checked on its own (an eyepiece only last, one currency)."""
    modifiers = info.data.get("modifiers")
    if modifiers is not None:
        if value != [[]]:
            raise ValueError("give trains, or the deprecated modifiers, not both")
        value = [[] if m is None else [m if not isinstance(m, Modifier) else
                                        train_element(m.to_element())] for m in modifiers]
    for i, train in enumerate(value):
        try:
            check_train([e for e in train if hasattr(e, "kind")], None)
        except ValueError as exc:
            raise ValueError(f"{i}: {exc}") from None
    return value


class InlineEvaluationRequest(EvaluationSpec):
    """A whole evaluation request with every component given inline; any may be marked ``owned``."""

    telescopes: list[candidate_model(Telescope)] = Field(min_length=1)
    cameras: list[candidate_model(Camera)] = Field(
        default_factory=list, description="Candidate cameras; may be empty when `eyepieces` are "
        "given (or every train ends in an eyepiece).")
    modifiers: list[Modifier | None] | None = Field(
        default=None, min_length=1, deprecated=True,
        description="Deprecated (one release): each becomes a one-element train; null no train.",
    )
    trains: list[Train] = Field(
        default_factory=lambda: [[]], min_length=1, validate_default=True,
        description="Candidate trains; [] is nothing between telescope and camera.",
    )
    mounts: list[candidate_model(Mount) | None] = Field(
        default_factory=lambda: [None], min_length=1, description="null means no mount."
    )
    eyepieces: list[EyepieceCandidate] = Field(default_factory=list, max_length=100,
                                               description=EYEPIECES_DESCRIPTION)

    @field_validator("trains")
    @classmethod
    def _trains(cls, value: list, info: ValidationInfo) -> list:
        return trains_from(value, info)


class EvaluationRow(BaseModel):
    """One combination and its values."""

    indices: Indices
    ids: Ids
    values: dict[str, float | None] = Field(
        description='Every constrained and objective output, keyed "<calculator>.<output>"; '
        "null where undefined."
    )
    score: float | None = Field(
        description="Ranking score (lower is better; see `top`); null for an infeasible row."
    )
    cautions: list[str] = Field(
        default_factory=list,
        description="Hazards of this combination in particular, in words: a payload over the mount's "
        "rating, an item heavier than a safe single lift. Show them with the row.",
    )


class EvaluationResult(BaseModel):
    """The answer to an evaluation."""

    evaluated: int = Field(description="Size of the cartesian product of the component lists.")
    considered: int = Field(
        default=0, description="Combinations left after excluding what cannot be assembled: "
        "`evaluated` = `considered` + the `excluded` counts.")
    excluded: dict[str, int] = Field(
        default_factory=dict, description="Combinations left out because they cannot be assembled, "
        "by the compatibility verdict that says why (none with `allow_incompatible`).")
    feasible: int = Field(description="How many combinations meet every constraint.")
    front: list[EvaluationRow] = Field(
        description="Every Pareto-optimal feasible combination on the objectives, ordered by the "
        "first objective (best first), then the next ones, then by indices."
    )
    top: list[EvaluationRow] = Field(
        description="The best `limit` feasible combinations by score, best first. Score: each "
        "objective scaled to 0 at its best feasible value (ideal point) and 1 at its worst value "
        "on the front (nadir point), summed over the objectives; ties go to the better objective "
        "values in the order given, then to the lower indices."
    )
    baseline: EvaluationRow = Field(description="The baseline combination, feasible or not.")
    baseline_feasible: bool
    units: dict[str, str] = Field(description='Unit of each value key ("" when dimensionless).')
    labels: dict[str, str] = Field(
        default_factory=dict, description="Short name for a person of each value key, e.g. 'Pixel scale'."
    )
    cautions: dict[str, list[str]] = Field(
        default_factory=dict, description="Cautions of the calculators used, by calculator."
    )
    site: SiteUsed | None = Field(
        default=None, description="The observing site whose conditions filled the params (null: none)."
    )
