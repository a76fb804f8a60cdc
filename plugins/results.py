"""Result models of a comparison: the JSON shape clients rely on (a contract)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from pydantic import BaseModel, Field
from pydantic_core import to_json

from calculators.site import SiteUsed

Value = float | str | bool | None


class OutputValues(BaseModel):
    label: str = Field(default="", description="Short name for a person, e.g. 'Pixel scale'.")
    unit: str = Field(description="Unit of every value (pint-readable; '' when dimensionless).")
    values: list[Value] = Field(description="One value per rig, in request order; null where undefined.")
    null_reasons: list[str | None] | None = Field(
        default=None,
        description="Why a value is null: null when every value is defined, else one entry per rig "
        "(as long as `values`), a sentence where the value is null and null where it is not.",
    )


class RowError(BaseModel):
    rig: int = Field(description="Index of the rig in `rigs`.")
    reason: str


class CalculatorResult(BaseModel):
    version: str
    outputs: dict[str, OutputValues]
    cautions: list[str] = Field(default_factory=list)
    error: str | None = Field(default=None, description="Why this calculator gave no result.")
    row_errors: list[RowError] = Field(
        default_factory=list,
        description="Rigs whose values are null because the calculation overflowed or was undefined "
        "for their inputs only; the other rigs' values stand.",
    )


class RigRef(BaseModel):
    id: int | None = Field(default=None, description="Stored rig id, when the rig was given by id.")
    name: str = Field(description="The rig's name.")
    cautions: list[str] = Field(
        default_factory=list,
        description="Hazards of this rig in particular, in words: a payload over the mount's rating, an "
        "item heavier than a safe single lift (see calculators.rig_cautions). Show them prominently.",
    )


class SkippedRig(BaseModel):
    index: int = Field(description="Position of the rig in the request.")
    id: int | None = Field(default=None, description="Stored rig id.")
    name: str | None = None
    reasons: list[str] = Field(description="Why it was not computed, e.g. a stored field that no longer validates.")


class Comparison(BaseModel):
    rigs: list[RigRef] = Field(description="The rigs computed, in request order (skipped ones left out).")
    baseline: int = Field(description="Index into `rigs` of the rig relative figures refer to.")
    results: dict[str, CalculatorResult]
    skipped: list[SkippedRig] = Field(
        default_factory=list,
        description="Stored rigs that could not be computed (their stored spec no longer validates), "
        "each with the reasons; repair them with PATCH or PUT.",
    )
    site: SiteUsed | None = Field(
        default=None, description="The observing site whose conditions filled the params (null: none)."
    )


def comparison_json(
    tree: Mapping[str, Any], skipped: Sequence[SkippedRig] = (), *, validate: bool = False
) -> bytes:
    """The JSON of the :class:`Comparison` that ``tree`` (from :func:`plugins.compare.comparison_tree`)
    and ``skipped`` make, byte for byte as ``model_dump_json`` writes it.

    A tree from built-in calculators, with no site and nothing skipped, is written as it is: its
    values are already of the models' types and its keys in the models' order, so only the defaults
    the models add are filled in (``row_errors``, ``skipped``), and validating it again (it was
    built by our own code) would cost as much as serialising it. Anything else — ``validate=True``
    (a third-party calculator's values), a site, skipped rigs — goes through the model.
    tests/plugins/test_results.py checks that both ways agree byte for byte on random rigs.
    """
    if validate or skipped or tree["site"] is not None:
        model = Comparison.model_validate(tree)
        model.skipped = list(skipped)
        return model.model_dump_json().encode()
    results = {
        name: result if "row_errors" in result else {**result, "row_errors": []}
        for name, result in tree["results"].items()
    }
    return to_json({"rigs": tree["rigs"], "baseline": tree["baseline"], "results": results,
                    "skipped": [], "site": None})
