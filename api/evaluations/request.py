"""Turning a purchase-evaluation request into engine input: the request body, its stored ids
resolved (one query per kind of equipment, through :func:`api.equipment.rules.resolve_slots`), and the
engine's refusals as problem documents naming the field.

The sweep itself is :func:`calculators.sweep.evaluate_spec`; this module only feeds it.
"""

from __future__ import annotations

import math
import re
from typing import Annotated, Any

from pydantic import (
    Discriminator,
    Field,
    StrictBool,
    Tag,
    ValidationError,
    ValidationInfo,
    field_validator,
)
from sqlalchemy import Engine
from sqlmodel import Session

from api.accounts.keys import Principal
from api.equipment.rules import SlotRequest, resolve_slots
from api.http.problems import ApiProblem, FieldError, field_errors, field_path, from_validation_error
from api.schemas import Ref, slot
from calculators.batch import AXES
from calculators.evaluation_schemas import (
    EYEPIECES_DESCRIPTION,
    EvaluationSpec,
    EyepieceCandidate,
    trains_from,
)
from calculators.ownership import CandidateTrainElement, as_owned, candidate_model
from calculators.schemas import Camera, Modifier, Mount, Telescope
from calculators.site import Site, SiteUsed, fill_params
from calculators.train_elements import MAX_TRAIN_ELEMENTS, TrainElement, train_element
from calculators.sweep import EvaluationError, TooManyCombinations
from calculators.sweep.detectors import product_text

#: The request's list of each kind of component, in the engine's axis order.
LISTS = {"telescope": "telescopes", "camera": "cameras", "train": "trains", "mount": "mounts"}
MODELS = {"telescope": Telescope, "camera": Camera, "mount": Mount}

#: Most rows a front may hold in an answer. Combinations with equal objective values are all on the
#: front, so ties (one objective that depends on a single kind, identical candidates) can make it
#: as large as the product; past this the request is refused before the rows are built.
MAX_FRONT_ROWS = 10_000

Components = tuple[list[Any], list[Any], list[Any], list[Any]]
Ids = dict[str, list[int | None]]


class StoredCandidate(Ref):
    """Stored equipment you may read, as a candidate: ``owned`` says whether you have it already."""

    owned: StrictBool | None = Field(
        default=None, description="Whether you own it already (its price then stays out of "
        "`cost.purchase_price`). Default: true for an item stored under your own account, false "
        "for anyone else's (a club's, a public one); say `false` to price one of yours as a "
        "purchase, `true` for one you have but did not store.",
    )


def _candidate_tag(value: Any) -> str:
    if isinstance(value, Ref) or (isinstance(value, dict) and "id" in value
                                  and set(value) <= {"id", "owned"}):
        return "stored"
    return "inline"


def candidate(model: Any) -> Any:
    """An inline ``model`` with ``owned`` or ``{"id": N}`` with ``owned`` optional (the tags are
    dropped from error paths, as :func:`api.schemas.slot`'s are)."""
    inline = model if not isinstance(model, type) else candidate_model(model)
    return Annotated[
        Annotated[StoredCandidate, Tag("stored")] | Annotated[inline, Tag("inline")],
        Discriminator(_candidate_tag),
    ]


class EvaluationRequest(EvaluationSpec):
    """Candidate equipment to sweep, and what to compute and how to choose."""

    telescopes: list[candidate(Telescope)] = Field(
        min_length=1, description='Inline telescopes or {"id": N} of stored ones you may read; '
        "each may say `owned`."
    )
    cameras: list[candidate(Camera)] = Field(
        default_factory=list, description='Inline cameras or {"id": N} of stored ones you may '
        "read; each may say `owned`. May be empty when `eyepieces` are given (or every train "
        "ends in an eyepiece)."
    )
    modifiers: list[slot(Modifier) | None] | None = Field(
        default=None, min_length=1, deprecated=True,
        description="Deprecated (read for one release): each modifier, inline, {\"id\": N} or "
        "null, becomes a one-element train (null: the empty train).",
    )
    trains: list[Annotated[list[candidate(CandidateTrainElement)],
                           Field(max_length=MAX_TRAIN_ELEMENTS)]] = Field(
        default_factory=lambda: [[]], min_length=1, validate_default=True,
        description='Candidate trains, each a list of elements (inline or {"id": N} of stored '
        "ones, each may say `owned`), telescope side first; [] is nothing between telescope and "
        "camera. Default: [[]].",
    )
    mounts: list[candidate(Mount) | None] = Field(
        default_factory=lambda: [None], min_length=1,
        description='Inline mounts, {"id": N} of stored ones, or null for "no mount"; default: '
        "none. Each may say `owned`.",
    )
    eyepieces: list[candidate(EyepieceCandidate)] = Field(
        default_factory=list, max_length=100, description=EYEPIECES_DESCRIPTION)
    site: slot(Site) | None = Field(
        default=None, description='An observing site, inline or {"id": N}: its conditions fill the params '
        "of the same meaning of every calculator used that `params` does not state.",
    )

    @field_validator("trains")
    @classmethod
    def _trains(cls, value: list, info: ValidationInfo) -> list:
        return trains_from(value, info)


def with_site(body: EvaluationRequest, site: Site | None, site_id: int | None, calculators) -> tuple[EvaluationRequest, SiteUsed | None]:
    """The request with the site's conditions in the params of the calculators it uses."""
    if site is None:
        return body, None
    used = {key.split(".", 1)[0] for key in (*body.constraints, *body.objectives)}
    chosen = {name: calc for name, calc in calculators.items() if name in used}
    conditions = site.conditions()
    params, filled = fill_params(chosen, body.params, conditions)
    return body.model_copy(update={"params": params}), SiteUsed(
        id=site_id, name=site.name, values=conditions, filled=filled)



def sizes(body: EvaluationRequest) -> tuple[int, ...]:
    return tuple(len(getattr(body, LISTS[kind])) for kind in AXES)


def combinations(body: EvaluationRequest) -> int:
    """How many combinations the request asks for: telescopes × (cameras × binning factors +
    eyepieces, or 1 for trains that end in their eyepiece) × trains × mounts."""
    t, c, r, m = sizes(body)
    eyepieces = len(getattr(body, "eyepieces", ()))
    return t * (c * len(body.binning) + eyepieces or 1) * r * m


def check_size(body: EvaluationRequest, maximum: int) -> None:
    """Refuse a product above the maximum before reading anything from the database."""
    counts = sizes(body)
    total = combinations(body)
    if total > maximum:
        factors, eyepieces = len(body.binning), len(getattr(body, "eyepieces", ()))
        raise as_problem(TooManyCombinations(
            product_text(counts, factors, eyepieces), total, maximum,
            factors=factors, eyepieces=eyepieces), counts)


def entries_of(body: EvaluationRequest, kind: str):
    """(index, position in the train or None, value) of every candidate of one kind."""
    for i, value in enumerate(getattr(body, LISTS[kind])):
        if kind == "train":
            for j, element in enumerate(value):
                yield i, j, element
        else:
            yield i, None, value


def needs_database(body: EvaluationRequest) -> bool:
    return any(isinstance(v, Ref) for kind in AXES for _, _, v in entries_of(body, kind)) or \
        any(isinstance(v, Ref) for v in body.eyepieces)


def resolve_request(engine: Engine, principal: Principal | None, body: EvaluationRequest):
    """The component lists, their ids (``"eyepiece"`` among them) and the candidate eyepieces, every
    stored id resolved (inline ones as given)."""
    if not needs_database(body):
        return inline_components(body), None, list(body.eyepieces)
    components, ids = resolve_components(engine, principal, body)
    eyepieces, ids["eyepiece"] = resolve_eyepieces(engine, principal, body)
    return components, ids, eyepieces


def resolve_eyepieces(engine: Engine, principal: Principal | None,
                      body: EvaluationRequest) -> tuple[list[Any], list[int | None]]:
    """The candidate eyepieces with every ``{"id": N}`` replaced by the stored train element (which
    must be an eyepiece), and their stored ids; 422 naming ``eyepieces.N.id`` otherwise."""
    given = list(body.eyepieces)
    ids = [v.id if isinstance(v, Ref) else None for v in given]
    if not any(isinstance(v, Ref) for v in given):
        return given, ids
    mine: set[tuple[str, int]] = set()
    with Session(engine) as session:
        [specs] = resolve_slots(session, principal, [
            SlotRequest({"train": given}, loc=("eyepieces",), slot_in_path=False)], mine=mine)
    out = []
    for i, (value, spec) in enumerate(zip(given, specs["train"])):
        if not isinstance(value, Ref):
            out.append(value)
            continue
        try:
            element = train_element(spec)
        except ValidationError as exc:  # a stored item written under an older schema
            raise from_validation_error(exc, prefix=("eyepieces", i)) from None
        if element.kind != "eyepiece":
            message = f"train element {value.id} is a {element.kind}, not an eyepiece"
            raise ApiProblem(422, f"eyepieces.{i}.id: {message}", title="Invalid input",
                             type="/problems/invalid-input",
                             errors=[FieldError(field=f"eyepieces.{i}.id", message=message)])
        # Owned: as the request says, else when it is stored under the caller's own account.
        owned = value.owned if getattr(value, "owned", None) is not None else ("train", value.id) in mine
        out.append(_marked(element, owned))
    return out, ids


def inline_components(body: EvaluationRequest) -> Components:
    """The component lists of a request that names no stored equipment."""
    return tuple(list(getattr(body, LISTS[kind])) for kind in AXES)  # type: ignore[return-value]


def resolve_components(
    engine: Engine, principal: Principal | None, body: EvaluationRequest
) -> tuple[Components, Ids]:
    """The component lists with every ``{"id": N}`` replaced by the stored item, and the stored id
    of each entry (None for inline ones). 422 naming each id the caller may not read."""
    refs = [
        (kind, i, j, value)
        for kind in AXES
        for i, j, value in entries_of(body, kind)
        if isinstance(value, Ref)
    ]
    mine: set[tuple[str, int]] = set()
    with Session(engine) as session:
        specs = resolve_slots(session, principal, [
            SlotRequest({kind: ref}, loc=(LISTS[kind], i), slot_in_path=False) if j is None else
            SlotRequest({"train": [ref]}, loc=(LISTS[kind], i, j), slot_in_path=False)
            for kind, i, j, ref in refs
        ], mine=mine)
    lists = {kind: [list(v) if kind == "train" else v for v in getattr(body, LISTS[kind])]
             for kind in AXES}
    ids: Ids = {kind: [None] * len(items) for kind, items in lists.items()}
    ids["train"] = [[None] * len(train) for train in lists["train"]]
    for (kind, i, j, ref), spec in zip(refs, specs):
        where = (LISTS[kind], i) if j is None else (LISTS[kind], i, j)
        # Owned: as the request says, else when it is stored under the caller's own account.
        owned = ref.owned if getattr(ref, "owned", None) is not None else (kind, ref.id) in mine
        try:
            if j is None:
                lists[kind][i] = _marked(MODELS[kind].model_validate(spec[kind]), owned)
                ids[kind][i] = ref.id
            else:
                lists[kind][i][j] = _marked(train_element(spec["train"][0]), owned)
                ids[kind][i][j] = ref.id
        except ValidationError as exc:  # a stored item written under an older schema
            raise from_validation_error(exc, prefix=where) from None
    return tuple(lists[kind] for kind in AXES), ids  # type: ignore[return-value]


def _marked(item, owned: bool):
    return as_owned(item) if owned else item


def as_problem(exc: EvaluationError, counts: tuple[int, ...]) -> ApiProblem:
    """The engine's refusal as a problem document whose ``errors`` name the request's fields."""
    raw = getattr(exc, "errors", None)
    if isinstance(raw, list):  # invalid params: pydantic's errors, located in the request
        errors = field_errors(raw)
    elif isinstance(exc, TooManyCombinations):  # no one field: every list adds to the product
        errors = [FieldError(field=LISTS[kind], message=f"{n} given; {exc}")
                  for kind, n in zip(AXES, counts)]
        errors.append(FieldError(field="binning", message=f"each camera is swept at each factor; {exc}"))
        errors.append(FieldError(field="eyepieces", message=f"each eyepiece adds a visual entry; {exc}"))
    else:
        errors = [FieldError(field=field_path(exc.loc) if exc.loc else "(body)", message=str(exc))]
    slug = re.sub(r"[^a-z0-9]+", "-", exc.title.lower()).strip("-")
    extra = {}
    if isinstance(exc, TooManyCombinations):  # the figures, for a program to read
        extra = {"combinations": exc.combinations, "max_combinations": exc.maximum}
    return ApiProblem(exc.status, str(exc), title=exc.title, type=f"/problems/{slug}", errors=errors,
                      **extra)
