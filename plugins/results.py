"""Result models of a comparison: the JSON shape clients rely on (a contract)."""

from __future__ import annotations

from pydantic import BaseModel, Field

from calculators.site import SiteUsed

Value = float | str | bool | None


class OutputValues(BaseModel):
    unit: str = Field(description="Unit of every value (pint-readable; '' when dimensionless).")
    values: list[Value] = Field(description="One value per rig, in request order; null where undefined.")
    null_reasons: list[str | None] | None = Field(
        default=None,
        description="Why a value is null: null when every value is defined, else one entry per rig "
        "(as long as `values`), a sentence where the value is null and null where it is not.",
    )


class CalculatorResult(BaseModel):
    version: str
    outputs: dict[str, OutputValues]
    cautions: list[str] = Field(default_factory=list)
    error: str | None = Field(default=None, description="Why this calculator gave no result.")


class RigRef(BaseModel):
    id: int | None = Field(default=None, description="Stored rig id, when the rig was given by id.")
    name: str


class Comparison(BaseModel):
    rigs: list[RigRef]
    baseline: int
    results: dict[str, CalculatorResult]
    site: SiteUsed | None = Field(
        default=None, description="The observing site whose conditions filled the params (null: none)."
    )
