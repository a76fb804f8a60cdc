"""Per-call cost of the plugin runner on a small comparison batch (4 rigs), the load benchmark's case.

Prints, in microseconds per call (best of several repeats):

* a built-in's bare ``compute`` and the same call through ``plugins.runner.run`` (inline, with the
  output checks): their difference is the runner's overhead per built-in calculator;
* the same calculator run as a third-party plugin would be (worker thread under a time budget);
* ``to_json_values`` on one 4-value output, and a whole ``compare`` of 4 rigs.

Run:  .venv/bin/python tests/bench/plugin_runner.py

It prints figures; it asserts nothing (speed goals are shown, not tested).
"""

from __future__ import annotations

import timeit

from calculators.batch import RigBatch
from calculators.builtin.light_grasp import LightGrasp
from calculators.schemas import Rig
from plugins.compare import compare
from plugins.registry import load_registry
from plugins.runner import parse_params, run, set_time_budget, to_json_values

RIGS = [
    Rig.model_validate({
        "name": f"{aperture} mm f/5",
        "telescope": {"aperture_mm": aperture, "focal_length_mm": 5 * aperture, "obstruction_mm": aperture / 4},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000},
    })
    for aperture in (80, 130, 200, 300)
]


def best_us(stmt, number: int) -> float:
    return min(timeit.repeat(stmt, number=number, repeat=7)) / number * 1e6


def main() -> None:
    batch = RigBatch.from_rigs(RIGS)
    inline = LightGrasp()
    params = parse_params(inline, None)
    guarded = LightGrasp()
    set_time_budget(guarded, 2.0)
    values = run(inline, batch, params).values["clear_area_mm2"]
    registry = load_registry()

    bare = best_us(lambda: inline.compute(batch, params), 20_000)
    through_run = best_us(lambda: run(inline, batch, params), 20_000)
    threaded = best_us(lambda: run(guarded, batch, params), 2_000)
    no_params = best_us(lambda: parse_params(inline, None), 20_000)
    json_values = best_us(lambda: to_json_values(values), 50_000)
    one = best_us(lambda: compare(RIGS, ["light_grasp"], registry=registry), 5_000)
    print(f"light_grasp compute alone (4 rigs)          {bare:8.1f} us")
    print(f"  through run(), inline (built-in)          {through_run:8.1f} us"
          f"  (runner overhead {through_run - bare:.1f} us)")
    print(f"  through run(), worker thread (plugin)     {threaded:8.1f} us"
          f"  (isolation cost {threaded - through_run:.1f} us)")
    print(f"parse_params with no params                 {no_params:8.1f} us")
    print(f"to_json_values, 4 values                    {json_values:8.1f} us")
    print(f"compare(), 4 rigs, light_grasp              {one:8.1f} us")
    if "dew" in registry.calculators:
        both = best_us(lambda: compare(RIGS, ["light_grasp", "dew"], registry=registry), 2_000)
        print(f"compare(), 4 rigs, light_grasp + dew plugin {both:8.1f} us")


if __name__ == "__main__":
    main()
