"""Request and response bodies of the service, named by role (``TelescopeCreate``, ``TelescopePublic``…).

Equipment bodies are the calculator schemas of :mod:`calculators.schemas` plus ``visibility`` on the
way in, and the stored item's metadata (id, owner, version, timestamps) on the way out. A rig's
component slots each take an inline object or ``{"id": N}`` naming stored equipment.
"""

from __future__ import annotations

from datetime import datetime
from typing import Annotated, Any, Union

from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Discriminator,
    Field,
    RootModel,
    Tag,
    create_model,
    field_validator,
    model_validator,
)

from api.http.problems import FieldError
from api.storage.models import AccountKind, KeyScope, Visibility
from calculators.binning import MAX_BINNING
from calculators.schemas import (
    Accessory,
    Camera,
    Geometry,
    Modifier,
    Mount,
    Name,
    Rig,
    Strict,
    Telescope,
    upgrade_old_mount,
)
from calculators.site import Site
from calculators.train_elements import (
    ELEMENT_MODELS,
    MAX_TRAIN_ELEMENTS,
    TAG_PREFIX,
    ElementKind,
    TrainElement,
    element_tag,
    old_modifier_fields,
)

MAX_ID = 2**63 - 1
Id = Annotated[int, Field(ge=1, le=MAX_ID)]
HANDLE_PATTERN = r"^[a-z0-9](?:[a-z0-9-]{0,38}[a-z0-9])?$"


class Ref(Strict):
    """A reference to stored equipment the caller may read."""

    id: Id


def _slot_tag(value: Any) -> str:
    if isinstance(value, Ref) or (isinstance(value, dict) and set(value) == {"id"}):
        return "stored"
    return "inline"


def slot(model: type[BaseModel]) -> Any:
    """An inline ``model`` or ``{"id": N}``; the tags are dropped from error paths (api.http.problems)."""
    return Annotated[
        Annotated[Ref, Tag("stored")] | Annotated[model, Tag("inline")],
        Discriminator(_slot_tag),
    ]


Visible = Annotated[
    Visibility,
    Field(description="private: only the owner (and a club's officers) see it; public: anyone may read it "
          "without a key; members: a club's members and officers."),
]


def refuse_nul(value: Any) -> Any:
    """A stored name may hold any character but NUL, which PostgreSQL's text columns cannot store."""
    if isinstance(value, str) and "\x00" in value:
        raise ValueError("must not contain the NUL character (U+0000)")
    return value


class ItemMeta(BaseModel):
    """What the service adds to every stored item."""

    id: int
    owner: str = Field(description="Handle of the owning account.")
    visibility: Visibility
    version: int = Field(description="Starts at 1, grows by one on each change; the ETag carries it.")
    created_at: datetime
    updated_at: datetime
    retired_at: datetime | None = Field(
        default=None, description="When its owner retired it (gone from lists, new rigs and loans); null if in use."
    )
    invalid: bool = Field(
        default=False,
        description="True when the stored item no longer meets the current schema (limits tightened "
        "since it was stored, an old migration, a manual edit): its values are shown as stored, "
        "`invalid_reasons` names each field to fix, and a PATCH or PUT that fixes them repairs it. "
        "Comparisons skip an invalid rig and say why.",
    )
    invalid_reasons: list[FieldError] = Field(
        default_factory=list, description="Why the item is invalid, one entry per field; empty when it is valid."
    )


class ListMeta(BaseModel):
    total: int = Field(description="Items matching the filters, over all pages.")
    limit: int
    offset: int


# --- equipment ------------------------------------------------------------------------------------

def _optional_fields(model: type[BaseModel]) -> dict[str, Any]:
    """Every field of ``model`` made optional, keeping its validators, bounds and description."""
    fields = {}
    for name, info in model.model_fields.items():
        annotated = Annotated[(info.annotation, *info.metadata)] if info.metadata else info.annotation
        fields[name] = (annotated | None, Field(default=None, description=info.description))
    return fields


class EquipmentSchemas:
    """The four role-named bodies of one kind of equipment, built from its calculator schema."""

    def __init__(self, spec: type[BaseModel], label: str, upgrade=None):
        self.spec = spec
        title = label.capitalize()
        # Old values a patch may still send for one release (the spec's own validators cover the rest).
        old = {"_old_names": model_validator(mode="before")(upgrade)} if upgrade else {}
        self.create = create_model(
            f"{title}Create", __base__=spec, visibility=(Visible, Visibility.private),
            __doc__=f"A new {label}.", __validators__={"_name_has_no_nul": field_validator("name")(refuse_nul)},
        )
        self.update = create_model(
            f"{title}Update", __base__=Strict, **_optional_fields(self.create),
            __doc__=f"Changes to a {label} (JSON merge patch: null resets a field to its default).",
            __validators__=old,
        )
        # A class statement's worth of namespace, so model_config applies (extra keys in a stored
        # spec, say from an older schema, are dropped rather than failing the read).
        self.public = type(f"{title}Public", (ItemMeta, spec), {
            "__module__": __name__, "__doc__": f"A stored {label}.",
            "model_config": ConfigDict(extra="ignore"),
        })
        self.list = create_model(
            f"{title}List", __base__=ListMeta, items=(list[self.public], ...),
            __doc__=f"One page of {label}s.",
        )


def _element_union(models: dict[str, type[BaseModel]]) -> Any:
    """The per-kind ``models`` as one union told apart by ``kind`` (tags dropped from error paths)."""
    members = tuple(Annotated[m, Tag(TAG_PREFIX + kind)] for kind, m in models.items())
    return Annotated[
        Union[members],  # noqa: UP007  (a tuple of members needs the subscript form)
        Discriminator(element_tag, custom_error_type="invalid_kind",
                      custom_error_message="kind: must be one of " + ", ".join(models)),
        BeforeValidator(old_modifier_fields),
    ]


class _Rooted(RootModel):
    """A root model that reads its root's attributes (``item.id``, ``item.kind``) as its own."""

    def __getattr__(self, name: str) -> Any:
        if name.startswith("_") or name == "root":
            return super().__getattr__(name)
        return getattr(self.root, name)


class _Flat(BaseModel):
    model_config = ConfigDict(extra="ignore")


class TrainElementSchemas:
    """The role-named bodies of a stored train element: one per kind, told apart by ``kind``.

    ``create`` and ``public`` are root models over the per-kind bodies (so the CRUD router can treat
    them as one model); ``update`` takes any field of any kind, and the merged result is checked
    against its kind.
    """

    def __init__(self) -> None:
        per_kind = {kind.value: EquipmentSchemas(model, f"{kind.value} element")
                    for kind, model in ELEMENT_MODELS.items()}
        for kind, bodies in per_kind.items():
            title = "".join(part.capitalize() for part in kind.split("-"))
            for role in ("create", "public"):
                model = getattr(bodies, role)
                model.__name__ = model.__qualname__ = f"{title}Element{role.capitalize()}"
                model.model_rebuild(force=True)
        self.create = type("TrainElementCreate", (_Rooted[_element_union(
            {k: b.create for k, b in per_kind.items()})],), {
            "__module__": __name__, "__doc__": "A new train element (its fields depend on `kind`).",
        })
        fields: dict[str, Any] = {}
        for bodies in per_kind.values():
            for name, spec in _optional_fields(bodies.create).items():
                fields.setdefault(name, spec)
        fields["kind"] = (str | None, Field(default=None, description="The element's kind."))
        # One flat model on the way out (fields a kind does not take are null), so views can add
        # to it like to any other kind's public model.
        shown = {n: f for n, f in fields.items() if n not in ("visibility", "kind")}
        self.public = create_model(
            "TrainElementPublic", __base__=(ItemMeta, _Flat), kind=(ElementKind, ...), **shown,
            __doc__="A stored train element (fields its kind does not take are null).",
        )
        # Every field any kind takes, for tables and files listing the kind's columns (validation
        # goes through `create`, told apart by kind).
        self.spec = create_model("TrainElementFields", __base__=_Flat, kind=(ElementKind, ...), **shown)
        self.update = create_model(
            "TrainElementUpdate", __base__=Strict, **fields,
            __doc__="Changes to a train element (JSON merge patch: null resets a field to its "
            "default); the result must suit its kind.",
        )
        self.list = create_model(
            "TrainElementList", __base__=ListMeta, items=(list[self.public], ...),
            __doc__="One page of train elements.",
        )


TELESCOPE = EquipmentSchemas(Telescope, "telescope")
CAMERA = EquipmentSchemas(Camera, "camera")
TRAIN_ELEMENT = TrainElementSchemas()
#: The old name of the train elements' bodies (one release).
MODIFIER = TRAIN_ELEMENT
MOUNT = EquipmentSchemas(Mount, "mount", upgrade=lambda cls, data: upgrade_old_mount(data))
SITE = EquipmentSchemas(Site, "site")


# --- rigs -----------------------------------------------------------------------------------------

class RigSlots(Strict):
    """A rig whose component slots are inline or ``{"id": N}``."""

    name: Name
    telescope: slot(Telescope)
    modifier: slot(Modifier) | None = Field(
        default=None, deprecated=True,
        description="Deprecated (read for one release): the old single optical element, stored "
        "as a one-element `train`.",
    )
    train: list[slot(TrainElement)] = Field(
        default_factory=list, max_length=MAX_TRAIN_ELEMENTS,
        description="Elements between the telescope and the camera, telescope side first, each "
        'inline or {"id": N} of a stored train element.',
    )
    camera: slot(Camera) | None = Field(
        default=None, description="Needed unless the train ends in an eyepiece."
    )
    binning: int = Field(
        default=1, ge=1, le=MAX_BINNING,
        description="Binning the camera is read at: b × b pixels summed into one (1: none). "
        "Only with a camera.",
    )
    mount: slot(Mount) | None = None
    accessories: list[Accessory] = Field(default_factory=list, max_length=50)
    geometry: Geometry | None = None


class RigCreate(RigSlots):
    visibility: Visible = Visibility.private

    _name_has_no_nul = field_validator("name")(refuse_nul)


RigUpdate = create_model(
    "RigUpdate", __base__=Strict, **_optional_fields(RigCreate),
    __doc__="Changes to a rig (JSON merge patch: null resets a field to its default).",
)


class CopiedPart(BaseModel):
    """A part the rig holds as a copy, because its owner retired the item or made it private."""

    slot: str
    kind: str = Field(description="Kind of the item the copy was taken from, e.g. 'telescopes'.")
    id: int = Field(description="Id of the item the copy was taken from.")
    reason: str = Field(description="'retired' or 'made private'.")
    taken_at: datetime


class RigPublic(ItemMeta, RigSlots):
    model_config = ConfigDict(extra="ignore")

    resolved: Rig = Field(description="The rig with every stored component filled in (as stored, "
                          "when `invalid`).")
    copied_parts: list[CopiedPart] = Field(
        default_factory=list, description="Parts kept as a copy of a retired or now-private item."
    )
    uses_retired_equipment: bool = Field(default=False, description="A part is a copy of retired equipment.")


class RigList(ListMeta):
    items: list[RigPublic]


#: A rig's single-item slots (the train is a list of them, see api.equipment.rules).
RIG_SLOTS = ("telescope", "camera", "mount")


# --- accounts -------------------------------------------------------------------------------------

class AccountPublic(BaseModel):
    name: str = Field(pattern=HANDLE_PATTERN, description="URL-safe handle, e.g. 'lakeside-astro'.")
    kind: AccountKind
    display_name: str
    location: str
    contact_url: str
    created_at: datetime
    default_site_id: int | None = Field(
        default=None, description="The public site the account's club page and comparisons use by default."
    )


class Me(AccountPublic):
    key_scope: KeyScope = Field(description="Scope of the key used for this request.")


# --- calculators ----------------------------------------------------------------------------------

class OutputPublic(BaseModel):
    name: str = Field(description="Output name, the key in results (a contract).")
    label: str = Field(description="Short name for a person, e.g. 'Pixel scale'; shown with the unit.")
    unit: str = Field(description="pint-readable unit; '' when dimensionless.")
    description: str = Field(description="What the figure is, with its formula.")
    kind: str = Field(description="number, text or boolean.")
    integer: bool = Field(description="A count: whole numbers.")
    nullable: bool = Field(description="May be null where an optional input is missing.")
    relative: bool = Field(description="Depends on the baseline rig.")


class Origin(BaseModel):
    builtin: bool
    distribution: str = Field(description="Python distribution that provides the calculator.")
    version: str


class CalculatorPublic(BaseModel):
    name: str
    version: str
    summary: str
    outputs: list[OutputPublic]
    params_schema: dict[str, Any] = Field(description="JSON Schema of the calculator's params.")
    sources: list[str]
    cautions: list[str]
    origin: Origin


class CalculatorList(BaseModel):
    items: list[CalculatorPublic]


# --- comparisons ----------------------------------------------------------------------------------

def _rig_tag(value: Any) -> str:
    if isinstance(value, Ref) or (isinstance(value, dict) and set(value) == {"id"}):
        return "stored"
    return "inline"


RigEntry = Annotated[
    Annotated[Ref, Tag("stored")] | Annotated[RigSlots, Tag("inline")],
    Discriminator(_rig_tag),
]


class ComparisonRequest(Strict):
    rigs: list[RigEntry] = Field(min_length=1, description="Inline rigs or {\"id\": N} of stored rigs.")
    calculators: list[Annotated[str, Field(min_length=1, max_length=63)]] | None = Field(
        default=None, max_length=200, description="Calculator names; default: all."
    )
    baseline: int = Field(default=0, ge=0, description="Index into rigs of the rig others are relative to.")
    params: dict[str, dict[str, Any]] = Field(
        default_factory=dict, description="Params per calculator name."
    )
    site: slot(Site) | None = Field(
        default=None, description='An observing site, inline or {"id": N} of a stored one you may read: '
        "its conditions fill every calculator param of the same meaning that `params` does not state.",
    )



class Health(BaseModel):
    status: str = "ok"
    version: str
