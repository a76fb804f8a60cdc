"""Benchmark of the purchase report of a 1,000,000-combination evaluation.

The components of tests/bench/evaluation.py (100 telescopes × 50 cameras × 10 modifiers × 20 mounts,
generic and invented), two constraints and two objectives — then, with a target named for the
sheets, a third objective for the parallel-axes chart. Prints, in one run:

* the sweep's own time (``evaluate_spec``, once: it is not the report's cost);
* the report's render time, best and median of several runs: the sample of the feasible cloud, the
  charts, a sheet per pick (with the field calculator over the target) and the page template —
  ``api.evaluations.pages.render``, what ``GET /evaluations/{id}`` does after reading the row;
* the page's size in bytes (the standalone file, style inline, is the larger of the two), and how
  many points the chart draws.

Goals on the 2-core machine: render under 1 s, page under 1 MB. Run:
``python tests/bench/report.py`` (a script, not a test).
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from evaluation import SHAPE, equipment  # noqa: E402

from api.evaluations.pages import render  # noqa: E402
from calculators.evaluation_schemas import EvaluationSpec  # noqa: E402
from calculators.sweep import evaluate_spec  # noqa: E402
from plugins.registry import load_registry  # noqa: E402

REPEATS = 5
OBJECTIVES = {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min"}
CONSTRAINTS = {"sampling.pixel_scale_arcsec": {"min": 0.7, "max": 2.5}, "payload.capacity_fraction": {"max": 0.8},
               "target_fit.panels": {"max": 9}}


def run(objectives: dict, registry, components) -> None:
    spec = EvaluationSpec.model_validate({"objectives": objectives, "constraints": CONSTRAINTS,
                                          "params": {"target_fit": {"target": "M 33"}}, "limit": 20})
    start = time.perf_counter()
    result = evaluate_spec(*components, spec, calculators=registry.calculators, max_front_rows=10_000)
    sweep_s = time.perf_counter() - start
    times, page = [], ""
    for _ in range(REPEATS):
        start = time.perf_counter()
        page = render(spec, components, result, registry, title="Benchmark", standalone=False)
        times.append(time.perf_counter() - start)
    standalone_page = render(spec, components, result, registry, title="Benchmark", standalone=True)
    print(f"objectives: {', '.join(objectives)}")
    print(f"  evaluated {result.evaluated:,}, feasible {result.feasible:,}, front {len(result.front):,}, "
          f"top {len(result.top)}")
    print(f"  sweep (not part of the report): {sweep_s:.2f} s")
    print(f"  report render: best {min(times) * 1000:.0f} ms, median {statistics.median(times) * 1000:.0f} ms "
          f"over {REPEATS} runs (goal < 1000 ms)")
    print(f"  page: {len(page.encode()):,} bytes; standalone file {len(standalone_page.encode()):,} bytes "
          f"(goal < 1,000,000)")
    front, cloud = page.count('data-front="true"'), page.count('<circle r="2.5"')
    picks, sheets = page.count("<circle r=\"7\" data-pick="), page.count('class="sheet"')
    print(f"  points drawn: {front:,} on the front, {cloud:,} from the sample, {picks} picks, {sheets} sheets")

def main() -> None:
    components = equipment()
    registry = load_registry()
    print(f"purchase report of {' × '.join(map(str, SHAPE))} combinations (machine shared with other work)")
    run(OBJECTIVES, registry, components)
    run({**OBJECTIVES, "light_grasp.clear_area_mm2": "max"}, registry, components)
    run({"cost.total_price": "min", "sampling.pixel_scale_arcsec": "max", "payload.capacity_fraction": "min",
         "light_grasp.clear_area_mm2": "max"}, registry, components)
    worst_case()


def worst_case() -> None:
    """The chart alone with a front of 10,000 rows, the most an answer may hold (MAX_FRONT_ROWS)."""
    from api.evaluations.charts import Axis, Point, tradeoff_svg
    from api.evaluations.request import MAX_FRONT_ROWS

    n = MAX_FRONT_ROWS
    front = [Point((i // 1000, i // 100 % 10, i // 10 % 10, i % 10), 1.0 + i / 7.0, 5000.0 - i * 0.37) for i in range(n)]
    start = time.perf_counter()
    svg = tradeoff_svg(Axis("a.x", "x", "s", "min"), Axis("b.y", "y", "EUR", "min"), [], front, front[:20], None,
                       join=True, sampled="")
    took = time.perf_counter() - start
    print(f"worst case: a front of {n:,} rows draws a chart of {len(svg.encode()):,} bytes in {took * 1000:.0f} ms "
          f"({len(svg.encode()) / n:.0f} bytes per front row)")


if __name__ == "__main__":
    main()
