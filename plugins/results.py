"""Result models of a comparison: the JSON shape clients rely on (a contract)."""

from __future__ import annotations

from pydantic import BaseModel, Field

Value = float | str | bool | None


class OutputValues(BaseModel):
    label: str = Field(default="", description="Short name for a person, e.g. 'Pixel scale'.")
    unit: str = Field(description="Unit of every value (pint-readable; '' when dimensionless).")
    values: list[Value] = Field(description="One value per rig, in request order; null where undefined.")


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
