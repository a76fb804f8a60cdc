"""Purchase evaluation: every combination of candidate equipment, filtered by constraints, with the
Pareto front and a ranking on the objectives — without one Python object per combination.

How it works:

1. The component lists become one sweep batch (:meth:`RigBatch.from_components`): telescope columns
   lie along axis 0, cameras along 1, modifiers along 2, mounts along 3. A calculator's output is
   computed over the axes it depends on only (a focal ratio over telescopes × modifiers), and
   broadcasting builds the full product only where an output needs all four kinds.
2. Only the calculators named in the constraints and objectives run, in chunks of whole telescopes
   (at most ``chunk_rows`` combinations each, one telescope at least) to bound memory. A chunk that
   does not hold the baseline telescope gets it prepended, so relative outputs keep their meaning,
   and its row is dropped after computing; results do not depend on the chunk size.
3. Each constraint becomes a boolean mask at its output's own shape; the masks are combined by
   broadcasting. A combination is **feasible** when every constrained output and every objective
   output is a finite number and every constraint holds (bounds are inclusive). A combination
   whose effective focal ratio is below the physical minimum the ``Rig`` schema enforces is not a
   rig, so it is never feasible (it still counts in ``evaluated``).
4. Over the feasible combinations: the exact Pareto front of the objectives
   (:mod:`calculators.pareto`; equal objective values are all on the front), found after an exact
   reduction — where an objective varies along axes no other objective does (the price over
   cameras and mounts, when the exposure time depends on telescope and modifier only), only the
   best value along those axes can be on the front.
5. The ``limit`` best feasible combinations by **score** (lower is better): each objective is
   scaled linearly to 0 at the ideal point (its best feasible value) and 1 at the nadir point (its
   worst value among the front rows), and the scaled values are added; an objective on which all
   front rows agree does not count. Equal scores go to the better objective values in the order
   given, then to the lower indices. The weights are positive, so no combination ranks before one
   that dominates it and the first ``top`` row is always on the front. (Ideal and nadir points are
   the usual normalisation of multi-objective decision making, e.g. Miettinen, *Nonlinear
   Multiobjective Optimization*, 1999 — from memory.) With several chunks this needs the
   whole front first, so the chunks are computed a second time; one chunk is reused.
6. The returned rows' values are computed once more on a small one-row-per-combination batch, the
   same way a comparison of those rigs computes them.

Indices order combinations telescope-major: ``(telescope, camera, modifier, mount)`` compared in
that order.

Example::

    >>> from calculators.builtin.light_grasp import LightGrasp
    >>> from calculators.schemas import Camera, Telescope
    >>> scopes = [Telescope(aperture_mm=a, focal_length_mm=1000) for a in (100, 200, 150)]
    >>> result = evaluate(scopes, [Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)],
    ...                   objectives={"light_grasp.clear_area_mm2": "max"},
    ...                   constraints={"light_grasp.area_ratio": {"max": 3}},
    ...                   calculators={"light_grasp": LightGrasp()})
    >>> result.evaluated, result.feasible, [row.indices.telescope for row in result.front]
    (3, 2, [2])
"""

from calculators.sweep.answer import (
    DEFAULT_CHUNK_ROWS,
    DEFAULT_MAX_COMBINATIONS,
    Progress,
    evaluate,
    evaluate_spec,
)
from calculators.sweep.errors import (
    CalculatorFailed,
    ContradictoryBounds,
    EvaluationError,
    FrontTooLarge,
    InvalidCalculatorParams,
    NotNumeric,
    TooManyCombinations,
    UnknownOutput,
)
from calculators.sweep.plan import OutputKey, resolve_key

__all__ = [
    "DEFAULT_CHUNK_ROWS",
    "DEFAULT_MAX_COMBINATIONS",
    "CalculatorFailed",
    "ContradictoryBounds",
    "EvaluationError",
    "FrontTooLarge",
    "InvalidCalculatorParams",
    "NotNumeric",
    "OutputKey",
    "Progress",
    "TooManyCombinations",
    "UnknownOutput",
    "evaluate",
    "evaluate_spec",
    "resolve_key",
]
