"""What a purchase report shows, from a request, its components and its answer (no web, no database).

The same context serves the page of a saved evaluation (api/evaluations/pages.py) and the file
``rigbench evaluate --report`` writes (api/evaluations/report_file.py):

* the trade-off chart: a deterministic sample of the feasible combinations
  (:mod:`api.evaluations.sample`) on the first two objectives, every front row, the picks and the
  baseline; with three or more objectives also parallel axes over the front;
* a sheet per pick (the first :data:`MAX_PICKS` rows of ``top``): parts with prices and what is
  owned, the purchase price, constraint values against their bounds, the compatibility verdict when
  a ``compatibility`` calculator is loaded, the field over the request's target when it names one
  (``params.target_fit.target``), and the cautions that apply;
* the constraints and objectives in words and the counts.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from markupsafe import Markup

from api.clubs.page import CAUTIONS
from api.evaluations import charts
from api.evaluations.sample import SAMPLE_SIZE, canonical, sample
from api.evaluations.sheets import (
    Entry,
    sheet_extras,
    indices_of,
    pick_sheet,
    bounds_text,
    combination_name,
    label_of,
    unit_of,
)
from calculators.evaluation_schemas import EvaluationResult, EvaluationRow, EvaluationSpec

#: Most rows of ``top`` that get a sheet and a number on the chart.
MAX_PICKS = 20

def _point(row: EvaluationRow, keys: Sequence[str]) -> charts.Point | None:
    x = row.values.get(keys[0])
    y = row.values.get(keys[1]) if len(keys) > 1 else None
    if x is None or (len(keys) > 1 and y is None):
        return None
    return charts.Point(indices_of(row), x, y)


def context(spec: EvaluationSpec, components, result: EvaluationResult, registry, *,
            entries: Sequence[Entry] = ()) -> dict[str, Any]:
    """Everything the report template shows (charts as SVG markup)."""
    calculators = registry.calculators
    # Keys by their current names, as the answer's values have them.
    objectives = {canonical(k, calculators): d for k, d in spec.objectives.items()}
    constraints = {canonical(k, calculators): b for k, b in spec.constraints.items()}
    keys = list(objectives)
    units = result.units
    axes = [charts.Axis(k, label_of(k, calculators), unit_of(k, units, calculators), objectives[k]) for k in keys]
    drawn = sample(components, spec, calculators)
    feasible = int(drawn.feasible.sum())
    cloud = []
    if drawn.size:
        xs = drawn.values[keys[0]]
        ys = drawn.values[keys[1]] if len(keys) > 1 else None
        for j in map(int, drawn.feasible.nonzero()[0]):
            cloud.append(charts.Point(drawn.key(j), float(xs[j]),
                                      None if ys is None else float(ys[j])))
    if drawn.size < drawn.evaluated:
        sampled = (f"{drawn.size:,} of {drawn.evaluated:,} combinations sampled at random (fixed seed); "
                   f"the {feasible:,} feasible among them are drawn")
    else:
        sampled = f"All {drawn.evaluated:,} combinations computed; the {feasible:,} feasible are drawn"
    front = [p for p in (_point(r, keys) for r in result.front) if p is not None]
    picks_rows = result.top[:MAX_PICKS]
    picks = [p for p in (_point(r, keys) for r in picks_rows) if p is not None]
    baseline = _point(result.baseline, keys)
    tradeoff = charts.tradeoff_svg(axes[0], axes[1] if len(axes) > 1 else None, cloud, front, picks,
                                   baseline, join=len(keys) == 2, sampled=sampled)
    parallel = None
    if len(keys) >= 3 and result.front:
        ranks = {indices_of(r): n for n, r in enumerate(picks_rows, 1)}
        rows = result.front
        if len(rows) > charts.MAX_PARALLEL_ROWS:
            step = len(rows) / charts.MAX_PARALLEL_ROWS
            chosen = {int(j * step) for j in range(charts.MAX_PARALLEL_ROWS)}
            rows = [r for j, r in enumerate(rows) if j in chosen or indices_of(r) in ranks]
        lines = [charts.Line(indices_of(r), [r.values[k] for k in keys], ranks.get(indices_of(r)))
                 for r in rows if all(r.values.get(k) is not None for k in keys)]
        parallel = charts.parallel_svg(axes, lines, shown_of=len(result.front))
    by_place = {(e.kind, e.index): e for e in entries}
    extras, used = sheet_extras(components, picks_rows, spec, registry)
    sheets = [pick_sheet(n, row, components, constraints, objectives, result, calculators, by_place, extras, used)
              for n, row in enumerate(picks_rows, 1)]
    constraint_words = [f"{label_of(k, calculators)} ({k}) {bounds_text(b, units.get(k, ''))}"
                        for k, b in constraints.items()]
    objective_words = [f"{label_of(k, calculators)} ({k}) as {'low' if d == 'min' else 'high'} as possible"
                       + (f", in {units[k]}" if units.get(k) else "") for k, d in objectives.items()]
    return {
        "tradeoff": Markup(tradeoff), "parallel": Markup(parallel) if parallel else None,
        "reading": charts.READING, "sampled": sampled, "sample_size": SAMPLE_SIZE,
        "sheets": sheets, "picks_total": len(result.top), "max_picks": MAX_PICKS,
        "constraints": constraint_words, "objectives": objective_words,
        "evaluated": result.evaluated, "feasible": result.feasible, "front": len(result.front),
        "excluded": sum(result.excluded.values()) if getattr(result, "excluded", None) else None,
        "infeasible": result.evaluated - result.feasible,
        "baseline_feasible": result.baseline_feasible,
        "baseline_name": combination_name(components, result.baseline.indices),
        "entries": list(entries), "gone": [e for e in entries if e.status in ("gone", "retired")],
        "changed": [e for e in entries if e.status == "changed"],
        "axes": axes, "no_front": not result.front,
        "general_cautions": CAUTIONS,
        "site": getattr(result, "site", None),
    }


def changes_view(changes, components, calculators, units) -> dict[str, Any]:
    """What a re-run changed, in words for the page (combinations named by their parts)."""
    def named(indices) -> str:
        return "—" if indices is None else combination_name(components, indices)

    return {
        "evaluated": changes.evaluated, "feasible": changes.feasible,
        "best": (named(changes.best_saved), named(changes.best_now)),
        "same_best": changes.best_saved == changes.best_now,
        "added": [named(i) for i in changes.front_added], "removed": [named(i) for i in changes.front_removed],
        "values": [{"combination": named(v.indices), "label": label_of(v.key, calculators),
                    "unit": units.get(v.key, ""), "saved": charts.number_text(v.saved), "now": charts.number_text(v.now)}
                   for v in changes.values[:50]],
        "more_values": max(len(changes.values) - 50, 0),
    }
