"""Time and peak memory of the six built-in calculators on a 1,000,000-rig batch.

The batch is built straight from numpy arrays, the way a purchase sweep builds it — never from a
million pydantic objects. Two layouts are measured:

* ``sweep``: each component kind along its own axis, 100 telescopes × 100 cameras × 10 modifiers ×
  10 mounts = 1,000,000 rigs; outputs are computed only over the axes they depend on;
* ``flat``: every column has 1,000,000 elements (the worst case: nothing is shared).

Run:  .venv/bin/python tests/bench/core_batch.py [--layout sweep|flat|both] [--repeat 5]
                                               [--allocator tuned|default]

Each layout runs in its own process (so each has its own peak resident memory). Times are the best
of ``--repeat`` runs after one warm-up; the machine's load average is printed with them, as other
work on a shared machine slows every figure, and so is the CPU time of the best run (less sensitive
to other work than the wall clock).

Quantities several calculators share (clear area, effective focal length, sensor size, field solid
angle) are computed once per batch (``calculators.batch.per_batch``); every timed run starts from a
batch with nothing computed yet, so no run profits from an earlier one. Within a run, the first
calculator that needs a shared quantity pays for it. ``--allocator tuned`` (the default, as every
server process does at start-up: ``api.tuning.keep_freed_memory``) lets glibc reuse freed
megabyte-sized blocks instead of page-faulting fresh ones for each numpy temporary; ``both`` also
runs the flat layout with glibc's default allocator, to show what that is worth.

It prints figures; it asserts nothing (speed goals are shown, not tested).
"""

from __future__ import annotations

import argparse
import gc
import os
import resource
import subprocess
import sys
import time
import tracemalloc

import numpy as np

from api.tuning import keep_freed_memory
from calculators.batch import RigBatch
from calculators.schemas import Design, ModifierKind, MountType
from plugins.registry import load_registry
from plugins.runner import parse_params, run

BUILTINS = ("light_grasp", "etendue", "speed", "sampling", "payload", "cost")
SWEEP_SHAPE = (100, 100, 10, 10)
ROWS = 1_000_000


def _priced(rng: np.random.Generator, n: int, low: float, high: float, share: float = 0.8):
    """Prices in one currency for about ``share`` of the items, NaN and "" for the rest."""
    price = rng.uniform(low, high, n)
    unpriced = rng.random(n) > share
    price[unpriced] = np.nan
    currency = np.where(unpriced, "", "EUR").astype("U3")
    return price, currency


def telescope_columns(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    aperture = rng.uniform(60, 400, n)
    price, currency = _priced(rng, n, 300, 8000)
    return {
        "aperture_mm": aperture,
        "focal_length_mm": aperture * rng.uniform(2, 12, n),
        "obstruction_mm": aperture * rng.choice([0.0, 0.25, 0.35], n),
        "telescope_throughput": rng.uniform(0.7, 0.95, n),
        "design": rng.choice([d.value for d in Design], n),
        "telescope_mass_kg": rng.uniform(2, 30, n),
        "tube_length_mm": rng.uniform(300, 1800, n),
        "tube_diameter_mm": aperture * 1.15,
        "spider_vanes": rng.choice([0.0, 3.0, 4.0], n),
        "mirror_thickness_mm": np.full(n, np.nan),
        "telescope_price": price,
        "telescope_currency": currency,
    }


def camera_columns(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    price, currency = _priced(rng, n, 200, 5000)
    return {
        "pixel_size_um": rng.uniform(2.4, 9, n),
        "width_px": rng.integers(1000, 9600, n).astype(float),
        "height_px": rng.integers(800, 6400, n).astype(float),
        "quantum_efficiency": rng.uniform(0.5, 0.9, n),
        "read_noise_e": rng.uniform(1, 10, n),
        "dark_current_e_per_s": rng.uniform(0, 0.1, n),
        "camera_mass_kg": rng.uniform(0.2, 1.5, n),
        "camera_price": price,
        "camera_currency": currency,
    }


def modifier_columns(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    # About a third of the rigs have an empty imaging train: neutral values, as RigBatch fills them.
    none = rng.random(n) < 1 / 3
    kind = rng.choice([k.value for k in ModifierKind], n)
    price, currency = _priced(rng, n, 100, 900)
    price[none], currency[none] = np.nan, ""
    return {
        "train_kinds": np.where(none, "", kind),
        "train_factor": np.where(none, 1.0, rng.uniform(0.6, 1.0, n)),
        "train_throughput": np.where(none, 1.0, rng.uniform(0.95, 0.99, n)),
        "train_mass_kg": np.where(none, 0.0, rng.uniform(0.1, 0.8, n)),
        "train_corrected_field_mm": np.where(none, np.nan, rng.uniform(30, 55, n)),
        "train_price": price,
        "train_currency": currency,
    }


def mount_columns(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    price, currency = _priced(rng, n, 400, 12000)
    return {
        "mount_type": rng.choice([m.value for m in MountType], n),
        "capacity_kg": rng.uniform(5, 60, n),
        "mount_mass_kg": rng.uniform(4, 40, n),
        "mount_price": price,
        "mount_currency": currency,
    }


def sweep_batch(seed: int = 1) -> RigBatch:
    """Each kind along its own axis, as :meth:`RigBatch.from_components` lays them out."""
    rng = np.random.default_rng(seed)
    t, c, m, k = SWEEP_SHAPE
    ndim = len(SWEEP_SHAPE)

    def along(columns, axis):
        shape = [1] * ndim
        shape[axis] = -1
        return {name: values.reshape(shape) for name, values in columns.items()}

    ones = np.ones((1,) * ndim)
    return RigBatch(
        columns={
            **along(telescope_columns(rng, t), 0),
            **along(camera_columns(rng, c), 1),
            **along(modifier_columns(rng, m), 2),
            **along(mount_columns(rng, k), 3),
            "accessories_mass_kg": 0.0 * ones,
            "accessories_price": np.nan * ones,
            "accessories_currency": np.full((1,) * ndim, "", dtype="U3"),
            "payload_arm_mm": np.nan * ones,
            "counterweight_kg": np.nan * ones,
        },
        baseline=(0,) * ndim,
    )


def flat_batch(seed: int = 1) -> RigBatch:
    """One row per rig, every column a full 1,000,000-element array (nothing shared)."""
    rng = np.random.default_rng(seed)
    n = ROWS
    price, currency = _priced(rng, n, 20, 600, share=0.5)
    return RigBatch(
        columns={
            **telescope_columns(rng, n),
            **camera_columns(rng, n),
            **modifier_columns(rng, n),
            **mount_columns(rng, n),
            "accessories_mass_kg": rng.uniform(0, 3, n),
            "accessories_price": price,
            "accessories_currency": currency,
            "payload_arm_mm": rng.uniform(150, 500, n),
            "counterweight_kg": rng.uniform(3, 20, n),
        },
        baseline=(0,),
    )


def column_bytes(batch: RigBatch) -> int:
    return sum(np.asarray(v).nbytes for v in batch.values())


def measure(batch: RigBatch, repeat: int) -> None:
    forget = batch.derived.clear  # each timed run starts with no shared quantity computed
    registry = load_registry()
    calculators = {name: registry.get(name) for name in BUILTINS}
    params = {name: parse_params(calc, None) for name, calc in calculators.items()}

    def compute_all():
        return {name: calc.compute(batch, params[name]) for name, calc in calculators.items()}

    def run_all():
        outcomes = {name: run(calc, batch, params[name]) for name, calc in calculators.items()}
        failed = {name: o.error for name, o in outcomes.items() if o.error}
        if failed:
            sys.exit(f"calculators failed: {failed}")
        return outcomes

    compute_all()  # warm-up: imports, first-touch of pages
    per_calc = {name: [] for name in BUILTINS}
    totals, run_totals, cpu_totals = [], [], []
    for _ in range(repeat):
        forget()
        gc.collect()
        start, cpu = time.perf_counter(), time.process_time()
        kept = []  # outputs live until the run ends, as in a real pass
        for name, calc in calculators.items():
            t0 = time.perf_counter()
            kept.append(calc.compute(batch, params[name]))
            per_calc[name].append(time.perf_counter() - t0)
        totals.append(time.perf_counter() - start)
        cpu_totals.append(time.process_time() - cpu)
        del kept
        forget()
        gc.collect()
        start = time.perf_counter()
        outcomes = run_all()
        run_totals.append(time.perf_counter() - start)
        del outcomes

    forget()
    gc.collect()
    tracemalloc.start()
    results = compute_all()
    _, peak = tracemalloc.get_traced_memory()
    kept = sum(np.asarray(v).nbytes for out in results.values() for v in out.values())
    del results
    tracemalloc.stop()

    print(f"  rigs: {batch.size:,}  shape: {batch.shape}  input columns: {column_bytes(batch) / 1e6:.0f} MB")
    for name in BUILTINS:
        print(f"    {name:<12} best {min(per_calc[name]) * 1e3:7.1f} ms")
    best = int(np.argmin(totals))
    print(f"  all six, compute():          best {totals[best]:.3f} s, median {np.median(totals):.3f} s "
          f"over {repeat} runs (CPU time of the best run {cpu_totals[best]:.3f} s)")
    print(f"  all six, through the runner: best {min(run_totals):.3f} s, median "
          f"{np.median(run_totals):.3f} s (adds shape and finiteness checks)")
    print(f"  peak memory allocated by the six compute() calls (tracemalloc): {peak / 1e6:.0f} MB "
          f"(outputs kept: {kept / 1e6:.0f} MB)")


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--layout", choices=("sweep", "flat", "both"), default="both")
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--allocator", choices=("tuned", "default"), default="tuned",
                        help="tuned: as a server process runs (api.tuning); default: glibc's own")
    args = parser.parse_args(argv)
    if args.layout == "both":
        # One process per run, so that each reports its own peak resident memory.
        for layout, allocator in (("sweep", "tuned"), ("flat", "tuned"), ("flat", "default")):
            subprocess.run([sys.executable, __file__, "--layout", layout, "--repeat", str(args.repeat),
                            "--allocator", allocator], check=True)
        return
    tuned = args.allocator == "tuned" and keep_freed_memory()
    print(f"layout: {args.layout}  (numpy {np.__version__}, python {sys.version.split()[0]}, "
          f"{os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f}; allocator: "
          f"{'freed blocks kept for reuse, as in the server' if tuned else 'glibc default'})")
    batch = sweep_batch() if args.layout == "sweep" else flat_batch()
    measure(batch, args.repeat)
    # ru_maxrss is in KiB on Linux.
    maxrss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"  process peak resident memory (ru_maxrss: interpreter, libraries, batch and outputs): "
          f"{maxrss:.0f} MB")


if __name__ == "__main__":
    main()
