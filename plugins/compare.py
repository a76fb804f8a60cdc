"""``compare``: the Python entry point for scripts and notebooks, and the engine behind the service."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from calculators.batch import RigBatch
from calculators.errors import RigbenchError
from calculators.rig_cautions import rig_cautions
from calculators.schemas import Rig
from calculators.site import Site, fill_params
from plugins.null_reasons import Missing, explain
from plugins.registry import Registry, load_registry
from plugins.results import Comparison
from plugins.runner import parse_params, run, to_json_values


class BadComparison(RigbenchError, ValueError):
    status = 422
    title = "Invalid comparison"


def compare(
    rigs: Sequence[Rig | Mapping[str, Any]],
    calculators: Sequence[str] | None = None,
    baseline: int = 0,
    params: Mapping[str, Mapping[str, Any]] | None = None,
    *,
    registry: Registry | None = None,
    ids: Sequence[int | None] | None = None,
    site: Site | Mapping[str, Any] | None = None,
    site_id: int | None = None,
) -> Comparison:
    """Compare rigs with the named calculators (default: every loaded one).

    ``site`` (an observing site) fills every calculator param of a matching name that ``params``
    does not state (see :func:`calculators.site.fill_params`); the answer's ``site`` says what it filled.

    >>> from plugins import compare
    >>> rig = {"name": "8-inch", "telescope": {"aperture_mm": "8 in", "focal_length_mm": 1000},
    ...        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}}
    >>> compare([rig], ["sampling"]).results["sampling"].outputs["pixel_scale_arcsec"].values
    [0.7838...]
    """
    return Comparison.model_validate(comparison_tree(
        rigs, calculators, baseline, params, registry=registry, ids=ids, site=site, site_id=site_id,
    ))


def comparison_tree(
    rigs: Sequence[Rig | Mapping[str, Any]],
    calculators: Sequence[str] | None = None,
    baseline: int = 0,
    params: Mapping[str, Mapping[str, Any]] | None = None,
    *,
    registry: Registry | None = None,
    ids: Sequence[int | None] | None = None,
    site: Site | Mapping[str, Any] | None = None,
    site_id: int | None = None,
) -> dict[str, Any]:
    """What :func:`compare` answers, as the plain tree of dicts and lists it validates into a
    :class:`~plugins.results.Comparison` (the same arguments, the same refusals).

    Every value is already of the type the model would make of it (an integer output's values are
    floats, as validation turns them), so :func:`plugins.results.comparison_json` can write the
    answer of built-in calculators without validating it again.
    """
    registry = registry or load_registry()
    models = [r if isinstance(r, Rig) else Rig.model_validate(r) for r in rigs]
    if not models:
        raise BadComparison("rigs: give at least one rig")
    if not 0 <= baseline < len(models):
        raise BadComparison(f"baseline: {baseline} is not an index into the {len(models)} rigs")
    names = list(calculators) if calculators is not None else list(registry.calculators)
    if not names:
        raise BadComparison("calculators: name at least one calculator")
    params = dict(params or {})
    loaded = registry.calculators  # built once: the property makes a new dict on every access
    chosen = {name: loaded[name] if name in loaded else registry.get(name) for name in names}
    for name in params:
        if name not in chosen:
            raise BadComparison(f"params: {name!r} is not among the requested calculators")
    used = None
    if site is not None:
        site = site if isinstance(site, Site) else Site.model_validate(site)
        conditions = site.conditions()
        params, filled = fill_params(chosen, params, conditions)
        used = {"id": site_id, "name": site.name, "values": conditions, "filled": filled}
    parsed = {name: parse_params(calc, params.get(name)) for name, calc in chosen.items()}
    batch = RigBatch.from_rigs(models, baseline=baseline)
    results = {}
    missing = Missing(batch)
    for name, calc in chosen.items():
        outcome = run(calc, batch, parsed[name])
        units = outcome.units
        labels = {o.name: o.shown_label for o in calc.outputs}
        values = {out: _json_values(v) for out, v in outcome.values.items()}
        reasons = explain(calc, batch, parsed[name], values, missing)
        results[name] = {
            "version": calc.version,
            "outputs": {
                out: {"label": labels.get(out, out), "unit": units[out], "values": v,
                      "null_reasons": reasons.get(out)}
                for out, v in values.items()
            },
            "cautions": list(calc.cautions),
            "error": outcome.error,
        }
        if outcome.row_errors:
            results[name]["row_errors"] = [
                {"rig": row, "reason": f"{', '.join(outputs)}: not a finite number for this rig's "
                                       "inputs (an overflow or an undefined operation); shown as null"}
                for row, outputs in sorted(outcome.row_errors.items())
            ]
    ids = list(ids) if ids is not None else [None] * len(models)
    # A tree validated at once (in pydantic's compiled core) by compare(), or written as it is by
    # comparison_json(): for a few rigs, building some forty small models cost more than their
    # arithmetic.
    return {
        "rigs": [{"id": i, "name": m.name, "cautions": c}
                 for i, m, c in zip(ids, models, rig_cautions(batch))],
        "baseline": baseline,
        "results": results,
        "site": used,
    }


def _json_values(values: np.ndarray) -> list:
    """:func:`~plugins.runner.to_json_values`, integers as floats (what the result model makes of them)."""
    if values.dtype.kind in "iu":  # a run's values are arrays (plugins.runner checks them)
        return [float(v) for v in values.ravel().tolist()]
    return to_json_values(values)
