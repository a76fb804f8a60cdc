"""The calculator contract that built-in and third-party calculators share.

A calculator is a class with a few declarations and one method::

    class Speed(Calculator):
        name = "speed"                      # lower_snake_case, unique
        version = "1.0.0"
        summary = "Effective focal ratio and relative exposure times."
        Params = SpeedParams                # a pydantic model whose fields all have defaults
        outputs = (Output("focal_ratio", "", "Effective focal ratio N = f/D."), ...)
        sources = ("Author, Title, year, section",)
        cautions = ()                       # optional, shown with every result
        renamed_outputs = {}                # optional: old output name -> new, still accepted

        def compute(self, batch: RigBatch, params: SpeedParams) -> dict[str, np.ndarray]:
            ...

``compute`` receives a whole :class:`~calculators.batch.RigBatch` and returns one array per declared
output, computed with elementwise numpy operations that broadcast against the batch's columns (never a
Python loop over rigs). It may return an array of any shape that broadcasts to ``batch.shape``: an output
that depends only on the telescope stays ``(T, 1, 1, 1)`` in a sweep.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from collections.abc import Mapping
from typing import ClassVar, Literal

import numpy as np
from pydantic import BaseModel

from calculators.batch import RigBatch
from calculators.schemas import Strict


@dataclass(frozen=True)
class Output:
    """One declared output of a calculator."""

    name: str
    unit: str  # pint-readable unit ("mm^2", "arcsec", "kg"); "" when dimensionless
    description: str
    kind: Literal["number", "text", "boolean"] = "number"
    nullable: bool = False  # may be null (NaN) where an optional input is missing
    relative: bool = False  # depends on the baseline rig
    # Batch columns the output cannot do without: where one is missing (NaN) for a rig, the answer
    # says so as the reason for that rig's null (see plugins.null_reasons).
    needs: tuple[str, ...] = ()


class NoParams(Strict):
    """Params model of a calculator that takes none."""


class Calculator:
    """Base class of every calculator (see the module docstring for the contract)."""

    name: ClassVar[str]
    version: ClassVar[str]
    summary: ClassVar[str]
    outputs: ClassVar[tuple[Output, ...]]
    sources: ClassVar[tuple[str, ...]]
    cautions: ClassVar[tuple[str, ...]] = ()
    #: Outputs renamed in this release, old name -> new name. Requests that name an output (an
    #: evaluation's constraints and objectives) may still use the old name for one release.
    renamed_outputs: ClassVar[Mapping[str, str]] = {}
    Params: ClassVar[type[BaseModel]] = NoParams

    def compute(self, batch: RigBatch, params: BaseModel) -> dict[str, np.ndarray]:
        raise NotImplementedError

    def null_reasons(self, batch: RigBatch, params: BaseModel) -> Mapping[str, np.ndarray]:
        """Why outputs are null, where the calculator knows better than "an input is missing".

        Returns ``{output: text array}`` broadcasting to the batch, "" where it has nothing to say
        (the answer then falls back on the output's ``needs`` and the missing inputs). Called only
        for a comparison in which some output is null. Default: nothing to add.
        """
        return {}

    def output_units(self, batch: RigBatch, params: BaseModel) -> dict[str, str]:
        """Units of the outputs for this batch; override when a unit depends on the input
        (a price is in the rigs' currency)."""
        return {o.name: o.unit for o in self.outputs}
