"""Each club rig's compatibility verdict in plain words, for the club page and the rigs CSV.

The verdict is the ``compatibility`` calculator's (calculators/builtin/compatibility.py); this module
only says it for a person, with the figures behind it:

* "fits";
* "fits with 3.1 mm of spacers" (``spacer_mm``);
* "vignettes: image circle 18.9 mm < sensor diagonal 27.4 mm" (the eyepiece's field stop for a
  visual rig; the diagonal is the circle over ``image_circle_to_diagonal``);
* "too long: 4 mm more than the backfocus allows" (``spacer_mm`` < 0);
* "cannot reach focus: 12 mm more outward focus travel needed" (``focus_margin_mm`` < 0);
* "wrong design: focal reducer 0.63x is made for schmidt-cassegrain, not newtonian";
* "focal ratio out of range: f/4 is outside 5–7.5, the range of reducer-flattener 0.8x";
* "not checked: the image circle or backfocus is not stated".

When the calculator is not loaded or gave no result, there is no verdict (``None``: the page shows a
dash, the CSV an empty cell).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from calculators.schemas import Rig
from plugins.compare import compare
from plugins.registry import Registry
from plugins.results import CalculatorResult

CALCULATOR = "compatibility"


def _mm(value: float) -> str:
    """A length to 0.1 mm (to 0.01 mm below 0.1 mm, so a shim never reads "0 mm"), without a
    trailing ".0": 3.13 -> "3.1 mm", 28.0 -> "28 mm", 0.04 -> "0.04 mm"."""
    size = abs(value)
    text = f"{size:.2f}" if 0 < size < 0.095 else f"{size:.1f}".removesuffix(".0")
    return f"{text} mm"


def _ratio(value: float) -> str:
    return f"{value:.1f}".removesuffix(".0")


def _element(element: Any) -> str:
    return element.name or element.kind.value


def _wrong_design(rig: Rig) -> str | None:
    design = rig.telescope.design.value
    for element in rig.train:
        designs = [d.value for d in getattr(element, "designs", None) or []]
        if designs and design not in designs:
            return f"{_element(element)} is made for {' or '.join(designs)}, not {design}"
    return None


def _out_of_range(rig: Rig) -> str | None:
    native = rig.telescope.focal_length_mm / rig.telescope.aperture_mm
    for element in rig.train:
        low, high = getattr(element, "focal_ratio_min", None), getattr(element, "focal_ratio_max", None)
        if (low is not None and native < low) or (high is not None and native > high):
            span = (f"{_ratio(low)}–{_ratio(high)}" if low is not None and high is not None
                    else f"at least f/{_ratio(low)}" if low is not None else f"at most f/{_ratio(high)}")
            return f"f/{_ratio(native)} is outside {span}, the range of {_element(element)}"
    return None


def describe(values: Mapping[str, Any], rig: Rig | None = None) -> str | None:
    """One rig's verdict in words, from its compatibility outputs (``values``: output -> value).

    ``rig`` (the resolved rig) names the element behind a wrong design or focal ratio and says
    whether the circle is compared with a sensor or an eyepiece's field stop.
    """
    verdict = values.get("verdict")
    if verdict is None:
        return None
    if verdict == "not stated":
        return "not checked: the image circle or backfocus is not stated"
    spacer, margin = values.get("spacer_mm"), values.get("focus_margin_mm")
    circle, ratio = values.get("image_circle_mm"), values.get("image_circle_to_diagonal")
    if verdict == "fits with spacers" and spacer is not None:
        return f"fits with {_mm(spacer)} of spacers"
    detail = None
    if verdict == "vignettes" and circle is not None and ratio:
        against = "eyepiece field stop" if rig is not None and rig.camera is None else "sensor diagonal"
        detail = f"image circle {_mm(circle)} < {against} {_mm(circle / ratio)}"
    elif verdict == "too long" and spacer is not None:
        detail = f"{_mm(spacer)} more than the backfocus allows"
    elif verdict == "cannot reach focus" and margin is not None:
        detail = f"{_mm(margin)} more outward focus travel needed"
    elif verdict == "wrong design" and rig is not None:
        detail = _wrong_design(rig)
    elif verdict == "focal ratio out of range" and rig is not None:
        detail = _out_of_range(rig)
    # Otherwise the calculator's own first reason ("" when it fits).
    detail = detail or (values.get("reasons") or "").split("; ")[0]
    return f"{verdict}: {detail}" if detail else str(verdict)


def from_result(result: CalculatorResult | None, rigs: Sequence[Rig | None]) -> list[str | None]:
    """Each rig's verdict in words from a comparison's compatibility result (None: no verdict)."""
    if result is None or result.error is not None or "verdict" not in result.outputs:
        return [None] * len(rigs)
    outputs = result.outputs
    return [describe({name: data.values[i] for name, data in outputs.items()}, rig)
            for i, rig in enumerate(rigs)]


def verdicts(registry: Registry, rigs: Sequence[Rig]) -> list[str | None]:
    """Each rig's verdict in words, running the compatibility calculator on ``rigs`` alone (as
    many rows as the caller's page holds: one batch, one vectorised pass)."""
    if not rigs or CALCULATOR not in registry.calculators:
        return [None] * len(rigs)
    result = compare(list(rigs), [CALCULATOR], registry=registry).results[CALCULATOR]
    return from_result(result, rigs)
