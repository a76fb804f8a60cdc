"""The calculator contract that built-in and third-party calculators share.

A calculator is a class with a few declarations and one method::

    class Speed(Calculator):
        name = "speed"                      # lower_snake_case, unique
        version = "1.0.0"
        summary = "Effective focal ratio and relative exposure times."
        Params = SpeedParams                # a pydantic model whose fields all have defaults
        outputs = (Output("focal_ratio", "", "Effective focal ratio N = f/D.", label="Focal ratio"), ...)
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


# Name endings that spell a unit (the unit itself is shown beside the label).
_UNIT_ENDINGS = {
    "mm", "mm2", "um", "nm", "m", "m2", "kg", "g", "arcsec", "arcmin", "deg", "deg2", "c", "k", "w",
    "n", "nm", "s", "minutes", "px", "e", "kg_m2", "m2_deg2", "m2_arcsec2", "cm2", "cm2_deg2",
}


def derived_label(name: str) -> str:
    """A label from an output's name, for a third-party output that declares none:
    ``"heating_power_w"`` -> ``"Heating power"`` (a trailing unit is dropped, underscores are spaces)."""
    words = name.split("_")
    for cut in (3, 2, 1):
        if len(words) > cut and "_".join(words[-cut:]) in _UNIT_ENDINGS:
            words = words[:-cut]
            break
    text = " ".join(words)
    return text[:1].upper() + text[1:]


@dataclass(frozen=True)
class Output:
    """One declared output of a calculator.

    ``label`` is what a person reads in a table header ("Pixel scale"), shown with the unit beside
    it; built-in calculators must give one, a third-party output without one is shown with a label
    derived from its name (:func:`derived_label`). ``integer`` marks a count (shown without decimals).
    """

    name: str
    unit: str  # pint-readable unit ("mm^2", "arcsec", "kg"); "" when dimensionless
    description: str
    kind: Literal["number", "text", "boolean"] = "number"
    nullable: bool = False  # may be null (NaN) where an optional input is missing
    relative: bool = False  # depends on the baseline rig
    label: str | None = None  # short human label, e.g. "Pixel scale"; None: derived from the name
    integer: bool = False  # a count: whole numbers

    @property
    def shown_label(self) -> str:
        """The declared label, or one derived from the name."""
        return self.label if self.label else derived_label(self.name)
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
