"""What the user already owns: parts marked ``owned``, so a sweep or a comparison can price only
what is left to buy (the ``cost`` calculator's ``purchase_price``).

Whether a part is owned is a fact about the person asking, not about the item, so it is no field of
the equipment schemas (a stored telescope does not say who has one). A request marks it instead:

* an inline candidate in an evaluation takes ``"owned": true`` (default false): its model is the
  equipment's model plus that one field (:func:`candidate_model`, :data:`CandidateTrainElement`);
* the service marks stored items (see README "Purchase evaluations" and api/evaluations/request.py)
  by giving the resolved part the same candidate model (:func:`as_owned`).

Everything downstream reads :func:`is_owned`, which is false for a plain model: nothing changes for
a caller who marks nothing.

>>> from calculators.schemas import Telescope
>>> scope = candidate_model(Telescope).model_validate(
...     {"aperture_mm": 80, "focal_length_mm": 480, "owned": True})
>>> is_owned(scope), isinstance(scope, Telescope), is_owned(Telescope(aperture_mm=80, focal_length_mm=480))
(True, True, False)
"""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping, Sequence
from typing import Annotated, Any, Union

from pydantic import BaseModel, BeforeValidator, Discriminator, Field, StrictBool, Tag, create_model

from calculators.train_elements import ELEMENT_MODELS, TAG_PREFIX, element_tag, old_modifier_fields

OWNED_DESCRIPTION = (
    "You own it already: its price counts in `cost.total_price` but not in `cost.purchase_price` "
    "(what is left to buy). Default false."
)


@functools.cache
def candidate_model(model: type[BaseModel]) -> type[BaseModel]:
    """``model`` with an ``owned`` field (a strict boolean, default false): a subclass, so the
    result is still a ``model`` wherever one is expected."""
    return create_model(
        f"{model.__name__}Candidate", __base__=model, __module__=__name__,
        __doc__=(model.__doc__ or model.__name__) + "\n\nAs a candidate: with `owned`.",
        owned=(StrictBool, Field(default=False, description=OWNED_DESCRIPTION)),
    )


#: A train element of any kind, with ``owned`` (told apart by ``kind`` like the plain union).
CandidateTrainElement = Annotated[
    Union[tuple(  # noqa: UP007  (a tuple of members needs the subscript form)
        Annotated[candidate_model(m), Tag(TAG_PREFIX + kind.value)] for kind, m in ELEMENT_MODELS.items()
    )],
    Discriminator(
        element_tag, custom_error_type="invalid_kind",
        custom_error_message="kind: must be one of " + ", ".join(k.value for k in ELEMENT_MODELS)
        + " (or extender, another name for barlow)",
    ),
    BeforeValidator(old_modifier_fields),
]


def is_owned(item: Any) -> bool:
    """Whether a part is marked owned (false for None and for a plain, unmarked model).

    Read from the instance's ``__dict__`` (where pydantic keeps field values): ``getattr`` with a
    default on a model without the field goes through pydantic's ``__getattr__`` and a raised
    AttributeError, which made this check a quarter of a comparison's cost on many rigs.
    """
    fields = getattr(item, "__dict__", None)
    return fields is not None and fields.get("owned") is True


def purchase_sum(items: Sequence) -> float:
    """Summed price of the parts not marked owned (NaN when none of them is priced), added in the
    same order as their whole price is, so it is that very number when nothing is owned."""
    priced = [i.price.amount for i in items if i.price is not None and not is_owned(i)]
    return sum(priced) if priced else math.nan  # one NaN object, as the other folded values


def as_owned(item: BaseModel, owned: bool = True) -> BaseModel:
    """The same part marked ``owned`` (a copy; the item itself is left alone)."""
    if is_owned(item) == owned:
        return item
    base = type(item).__base__ if "owned" in type(item).model_fields else type(item)
    values = {name: getattr(item, name) for name in base.model_fields}
    return candidate_model(base).model_construct(
        _fields_set={*item.model_fields_set, "owned"}, **values, owned=owned)


def owned_parts(rig: BaseModel, parts: Mapping[str, bool | Sequence[bool]]) -> BaseModel:
    """A copy of ``rig`` with the parts ``parts`` flags true marked owned (the others left as they
    are): ``telescope``, ``camera``, ``mount`` (one flag each), ``train`` and ``accessories`` (one
    flag per element). The rig itself when no flag is true."""
    update: dict[str, Any] = {}
    for slot in ("telescope", "camera", "mount"):
        item = getattr(rig, slot)
        if item is not None and parts.get(slot) is True:
            update[slot] = as_owned(item)
    for slot in ("train", "accessories"):
        flags = list(parts.get(slot) or ())
        if any(flags):
            update[slot] = [as_owned(item) if flag else item
                            for item, flag in zip(getattr(rig, slot), flags)]
    return rig.model_copy(update=update) if update else rig
