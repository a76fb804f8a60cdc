"""Fake plugins for the registry and runner tests: one that works and many that break on purpose.

Tests reach these classes through hand-made entry points (:func:`entry_point`), never through what
happens to be installed. Each broken calculator differs from :class:`Good` in exactly one way, so a
test that finds it refused (or its result in error) shows that one check at work.
"""

from __future__ import annotations

import threading
from importlib.metadata import EntryPoint

import numpy as np
from pydantic import BaseModel, Field

from calculators.base import Calculator, NoParams, Output
from calculators.schemas import Strict

GROUP = "rigbench.calculators"


class FakeDistribution:
    """The two things the registry reads from an ``importlib.metadata.Distribution``."""

    def __init__(self, name: str, version: str):
        self.metadata = {"Name": name}
        self.version = version


def entry_point(name: str, target: str, dist: str = "acme-bench-tools", version: str = "0.3.1") -> EntryPoint:
    """An entry point of the ``rigbench.calculators`` group, as the distribution ``dist`` would
    advertise it. ``target`` is "module:attribute" (e.g. "plugin_fakes:Good")."""
    ep = EntryPoint(name=name, value=target, group=GROUP)
    # EntryPoint is immutable; _for() is how importlib.metadata itself attaches the distribution.
    return ep._for(FakeDistribution(dist, version))


def builtin(name: str, target: str) -> EntryPoint:
    """An entry point as rigbench's own distribution advertises its built-ins."""
    return entry_point(name, target, dist="rigbench", version="0.1.0")


LIGHT_GRASP = ("light_grasp", "calculators.builtin.light_grasp:LightGrasp")


# --- a calculator that meets the contract ---------------------------------------------------------


class GoodParams(Strict):
    scale: float = Field(default=2.0, gt=0, description="Multiplies the aperture.")


class Good(Calculator):
    """Aperture times a scale factor: trivial on purpose, so tests can predict it exactly."""

    name = "good"
    version = "1.2.0"
    summary = "Aperture times a scale factor."
    Params = GoodParams
    outputs = (Output("scaled_aperture_mm", "mm", "Aperture times the scale param.", label="Scaled aperture"),)
    sources = ("Multiplication.",)

    def compute(self, batch, params):
        return {"scaled_aperture_mm": batch["aperture_mm"] * params.scale}


GOOD_INSTANCE = Good()


# --- contract violations, each refused at load ----------------------------------------------------


class BadName(Good):
    name = "Bad-Name"


class NoVersion(Good):
    version = ""


class BadVersion(Good):
    version = "version one"


class NoSummary(Good):
    summary = "   "


class NoOutputs(Good):
    outputs = ()


class OutputNotDeclared(Good):
    outputs = (("scaled_aperture_mm", "mm", "A tuple, not an Output."),)


class UnknownUnit(Good):
    outputs = (Output("scaled_aperture_mm", "lumens per banana", "Unknown unit."),)


class HugeUnit(Good):
    # pint would try to compute 9**(9**9) and hang: the registry must refuse it before pint sees it
    outputs = (Output("scaled_aperture_mm", "9**9**9 mm", "A unit expression that never ends."),)


class DuplicateOutputs(Good):
    outputs = (
        Output("scaled_aperture_mm", "mm", "First."),
        Output("scaled_aperture_mm", "mm", "Second with the same name."),
    )


class Unlabelled(Good):
    """An output without a label, as plugins written before labels existed declare it."""

    outputs = (Output("scaled_aperture_mm", "mm", "Aperture times the scale param."),)


class EmptyLabel(Good):
    outputs = (Output("scaled_aperture_mm", "mm", "Blank label.", label=" "),)


class RenamedToNothing(Good):
    renamed_outputs = {"aperture_scaled_mm": "no_such_output"}


class RenamedStillDeclared(Good):
    renamed_outputs = {"scaled_aperture_mm": "scaled_aperture_mm"}


class BadOutputKind(Good):
    outputs = (Output("scaled_aperture_mm", "mm", "Unknown kind.", kind="complex"),)


class ParamsNotPydantic(Good):
    class Params:  # a plain class
        scale = 2.0


class ParamsWithoutDefault(Good):
    class Params(BaseModel):
        scale: float


class ParamsBadDefault(Good):
    class Params(BaseModel):
        scale: float = Field(default=-1.0, gt=0, validate_default=True)


class ComputeNotCallable(Good):
    compute = "not a method"


class ComputeNotImplemented(Calculator):
    name = "good"
    version = "1.0.0"
    summary = "Forgot to write compute."
    outputs = (Output("x", "", "Nothing."),)
    sources = ("None.",)


class NoSources(Good):
    sources = ()


class SourcesAString(Good):
    sources = "a string is not a tuple of sources"


class NotACalculator:
    """Has every attribute but does not subclass Calculator."""

    name = "good"
    version = "1.0.0"
    summary = "Duck-typed."
    Params = NoParams
    outputs = (Output("x", "", "Nothing."),)
    sources = ("None.",)

    def compute(self, batch, params):
        return {"x": 0.0}


class NeedsArguments(Good):
    def __init__(self, required):
        self.required = required


class OtherName(Good):
    """Valid, but advertised under an entry-point name that differs from its own."""

    name = "other"


# --- calculators that load but fail at run time ---------------------------------------------------


class Raises(Good):
    name = "raises"

    def compute(self, batch, params):
        raise ZeroDivisionError("deliberate failure in compute")


class ExitsProcess(Good):
    name = "exits"

    def compute(self, batch, params):
        raise SystemExit(3)


class ReturnsNaN(Good):
    name = "returns_nan"

    def compute(self, batch, params):
        return {"scaled_aperture_mm": batch["aperture_mm"] * np.nan}


class ReturnsInfinity(Good):
    name = "returns_infinity"

    def compute(self, batch, params):
        with np.errstate(divide="ignore"):
            return {"scaled_aperture_mm": batch["aperture_mm"] / 0.0}


class NullableNaN(Good):
    """NaN where it declared that an output may be undefined: allowed."""

    name = "nullable_nan"
    outputs = (Output("scaled_aperture_mm", "mm", "May be undefined.", nullable=True),)

    def compute(self, batch, params):
        return {"scaled_aperture_mm": batch["aperture_mm"] * np.nan}


class WrongShape(Good):
    name = "wrong_shape"

    def compute(self, batch, params):
        return {"scaled_aperture_mm": np.zeros(batch.size + 1)}


class MissingOutput(Good):
    name = "missing_output"

    def compute(self, batch, params):
        return {"another_name": batch["aperture_mm"]}


class NotAMapping(Good):
    name = "not_a_mapping"

    def compute(self, batch, params):
        return [batch["aperture_mm"]]


class NonNumeric(Good):
    name = "non_numeric"

    def compute(self, batch, params):
        return {"scaled_aperture_mm": np.full(batch.shape, "large")}


class Ragged(Good):
    name = "ragged"

    def compute(self, batch, params):
        return {"scaled_aperture_mm": [[1.0], [1.0, 2.0]]}


class WritesIntoBatch(Good):
    """Tries to change the shared aperture column in place."""

    name = "writes_into_batch"

    def compute(self, batch, params):
        column = batch["aperture_mm"]
        column *= 1000
        return {"scaled_aperture_mm": column}


class ScalarOutput(Good):
    """An output that depends on params only: a scalar that broadcasts to the batch."""

    name = "scalar_output"

    def compute(self, batch, params):
        return {"scaled_aperture_mm": np.float64(params.scale)}


# A slow compute that the tests can release, so no thread outlives its test for long.
release_slow = threading.Event()


class Slow(Good):
    name = "slow"

    def compute(self, batch, params):
        release_slow.wait(timeout=30)
        return {"scaled_aperture_mm": batch["aperture_mm"] * params.scale}
