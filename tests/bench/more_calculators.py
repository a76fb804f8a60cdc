"""Print time and peak memory of the eight practitioner calculators on a 1,000,000-rig sweep batch.

Run: ``.venv/bin/python tests/bench/more_calculators.py``. The batch is built as a purchase sweep
builds it: 100 telescopes × 100 cameras × 10 modifiers × 10 mounts, each kind along its own axis, so
no Python object exists per combination. Prints figures; asserts nothing (no timed tests).
"""

import time
import tracemalloc

import numpy as np

from calculators.batch import RigBatch
from calculators.schemas import Camera, Modifier, Mount, Telescope
from plugins.registry import load_registry
from plugins.runner import run

NAMES = ("resolution", "coma_field", "mirror_cooldown", "integration_time", "target_fit", "guiding",
         "dome_clearance", "diffraction_spikes")


def components(rng):
    telescopes = [
        Telescope(design=rng.choice(["newtonian", "refractor", "ritchey-chretien"]),
                  aperture_mm=a, focal_length_mm=a * rng.uniform(3, 10), obstruction_mm=0.3 * a,
                  length_mm=a * 5, tube_diameter_mm=a * 1.2, spider_vanes=int(rng.integers(0, 5)),
                  mirror_thickness_mm=a / 8)
        for a in rng.uniform(60, 400, 100)
    ]
    cameras = [
        Camera(pixel_size_um=p, width_px=6000, height_px=4000, quantum_efficiency=0.8, read_noise_e=2,
               dark_current_e_per_s=0.01)
        for p in rng.uniform(2, 9, 100)
    ]
    modifiers = [None] + [Modifier(kind="reducer", factor=f) for f in rng.uniform(0.6, 1.0, 9)]
    mounts = [None] + [Mount(type="german-equatorial", capacity_kg=c) for c in rng.uniform(10, 50, 9)]
    return telescopes, cameras, modifiers, mounts


def main() -> None:
    registry = load_registry()
    calculators = [registry.get(name) for name in NAMES]
    batch = RigBatch.from_components(*components(np.random.default_rng(1)))
    print(f"batch of {batch.size:,} rigs, shape {batch.shape}")
    for calc in calculators:  # warm-up: imports, catalogue look-up
        run(calc, batch, calc.Params())
    tracemalloc.start()
    start = time.perf_counter()
    for calc in calculators:
        t0 = time.perf_counter()
        outcome = run(calc, batch, calc.Params())
        assert outcome.error is None, outcome.error
        print(f"  {calc.name:20s} {time.perf_counter() - t0:8.4f} s")
    elapsed = time.perf_counter() - start
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    print(f"all eight: {elapsed:.3f} s, peak traced memory {peak / 2**20:.1f} MiB")


if __name__ == "__main__":
    main()
