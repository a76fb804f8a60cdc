"""Benchmark of a purchase evaluation: 100 telescopes × 50 cameras × 10 modifiers × 20 mounts.

1,000,000 combinations, two constraints (pixel scale within a range, payload within a fraction of the
mount's capacity) and two objectives (exposure time for equal signal per sky area, total price).
Prints, in one run:

* the in-process time of ``calculators.sweep.evaluate`` (best and median of several runs);
* the time over HTTP: ``POST /v1/evaluations`` with the same components inline, to ``rigbench serve``
  (uvicorn) running in its own process on 127.0.0.1, timed from the client (request sent to answer
  parsed), with the server's CPU time per request;
* peak memory (tracemalloc peak of numpy and Python allocations during one call, the benchmark
  process's peak resident size, and the server process's);
* the ratio against a bare brute-force numpy kernel that gathers index arrays over the whole product
  (``np.indices``) and computes only the two constrained quantities, the two objectives and the front
  (with the same front function, so the ratio measures the sweep's layout, not the front);
* the ratio against evaluating a sample of combinations one at a time through
  ``plugins.compare.compare``, extrapolated to the whole product.

Goals on the 2-core machine: over HTTP no slower than the brute-force kernel, ≤ 1 GB peak, ≥ 100× the
one-at-a-time path. Run: ``python tests/bench/evaluation.py`` (a script, not a test).
"""

from __future__ import annotations

import json
import os
import resource
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from dataclasses import dataclass
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "calculators"))

from calculators.builtin.light_grasp import clear_area_mm2  # noqa: E402
from calculators.pareto import front_of  # noqa: E402
from calculators.schemas import Camera, Modifier, Mount, Price, Rig, Telescope  # noqa: E402
from calculators.sweep import evaluate  # noqa: E402
from plugins.compare import compare  # noqa: E402
from plugins.registry import CalculatorEntry, Registry, load_registry  # noqa: E402

SHAPE = (100, 50, 10, 20)  # telescopes, cameras, modifiers, mounts
REPEATS = 7
SAMPLE = 300  # combinations sent one at a time through compare()
PIXEL_SCALE = (0.7, 2.5)  # arcsec per pixel, inclusive
CAPACITY_FRACTION = 0.8  # of the mount's rated capacity (a bound chosen for the benchmark)

BUILT_IN = {
    "pixel_scale": "sampling.pixel_scale_arcsec",
    "capacity": "payload.capacity_fraction",
    "time": "speed.time_factor_per_arcsec2",
    "price": "cost.total_price",
}
STAND_IN = {
    "pixel_scale": "optics.pixel_scale_arcsec",
    "capacity": "load.capacity_fraction",
    "time": "optics.time_factor",
    "price": "price.total_price",
}


def eur(amount: float) -> Price:
    return Price(amount=round(float(amount), 2), currency="EUR")


def equipment(seed: int = 2024):
    """Generic candidate equipment (no real products), drawn from plausible ranges."""
    rng = np.random.default_rng(seed)
    telescopes = []
    for i in range(SHAPE[0]):
        aperture = float(rng.choice([60, 72, 80, 100, 115, 130, 150, 200, 250, 300, 356]))
        reflector = aperture >= 130 and i % 3 != 0
        ratio = float(rng.choice([3.8, 4.0, 5.0, 6.0, 7.0, 8.0, 10.0]))
        telescopes.append(Telescope(
            name=f"{aperture:.0f} mm f/{ratio:g} {'newtonian' if reflector else 'refractor'}",
            design="newtonian" if reflector else "refractor",
            aperture_mm=aperture, focal_length_mm=aperture * ratio,
            obstruction_mm=0.3 * aperture if reflector else 0.0,
            mass_kg=round(0.5 + aperture**2 / 8000 * rng.uniform(0.8, 1.3), 1),
            length_mm=aperture * ratio * 1.05, tube_diameter_mm=aperture * 1.2,
            price=eur(aperture**1.6 * rng.uniform(1.5, 3.0)),
        ))
    cameras = [
        Camera(name=f"camera {i}", pixel_size_um=float(rng.choice([2.5, 3.0, 3.8, 4.5, 6.0, 9.0])),
               width_px=int(rng.choice([2000, 3000, 4000, 6000, 9000])),
               height_px=int(rng.choice([1200, 2000, 3000, 4000, 6000])),
               quantum_efficiency=round(rng.uniform(0.5, 0.9), 2),
               mass_kg=round(rng.uniform(0.2, 1.0), 2), price=eur(rng.uniform(250, 4000)))
        for i in range(SHAPE[1])
    ]
    modifiers: list[Modifier | None] = [None] + [
        Modifier(name=f"modifier {i}", kind=kind, factor=factor, mass_kg=round(rng.uniform(0.1, 0.6), 2),
                 price=eur(rng.uniform(150, 900)))
        for i, (kind, factor) in enumerate([
            ("reducer", 0.5), ("reducer", 0.63), ("reducer-flattener", 0.7),
            ("reducer-flattener", 0.8), ("flattener", 1.0), ("corrector", 1.0), ("barlow", 1.5),
            ("barlow", 2.0), ("barlow", 2.5),
        ])
    ]
    mounts = [
        Mount(name=f"mount {i}", type="german-equatorial", capacity_kg=float(capacity),
              mass_kg=round(capacity * 0.9, 1), price=eur(capacity * rng.uniform(60, 120)))
        for i, capacity in enumerate(rng.choice([5, 8, 11, 13, 15, 18, 20, 25, 30, 40, 50],
                                                size=SHAPE[3]))
    ]
    return telescopes, cameras, modifiers, mounts


def calculators_to_use():
    """The built-in calculators when they are installed, else the test stand-ins (with a note)."""
    registry = load_registry()
    loaded = registry.calculators
    if all(key.split(".")[0] in loaded for key in BUILT_IN.values()):
        missing = [k for k in BUILT_IN.values()
                   if k.split(".")[1] not in {o.name for o in loaded[k.split(".")[0]].outputs}]
        if not missing:
            return registry, BUILT_IN, "built-in calculators from the registry"
    from sweep_stand_ins import STAND_INS  # tests/calculators, on the path above

    registry = Registry(entries=[
        CalculatorEntry(name=c.name, distribution="bench", version="0", status="loaded", calculator=c)
        for c in STAND_INS
    ])
    note = ("NOTE: sampling/payload/speed/cost are not all installed here; using the test stand-ins "
            "from tests/calculators/sweep_stand_ins.py (same formulas as the kernel below)")
    return registry, STAND_IN, note


def request(keys):
    constraints = {
        keys["pixel_scale"]: {"min": PIXEL_SCALE[0], "max": PIXEL_SCALE[1]},
        keys["capacity"]: {"max": CAPACITY_FRACTION},
    }
    objectives = {keys["time"]: "min", keys["price"]: "min"}
    return constraints, objectives


def brute_force_kernel(components):
    """Gather every column over the whole product, compute the four quantities, mask, front."""
    telescopes, cameras, modifiers, mounts = components

    def column(items, get, missing=np.nan):
        return np.array([missing if x is None else get(x) for x in items], dtype=float)

    aperture = column(telescopes, lambda t: t.aperture_mm)
    obstruction = column(telescopes, lambda t: t.obstruction_mm)
    focal = column(telescopes, lambda t: t.focal_length_mm)
    tau = column(telescopes, lambda t: t.effective_throughput)
    t_mass = column(telescopes, lambda t: t.mass_kg)
    t_price = column(telescopes, lambda t: t.price.amount)
    pixel = column(cameras, lambda c: c.pixel_size_um)
    c_mass = column(cameras, lambda c: c.mass_kg)
    c_price = column(cameras, lambda c: c.price.amount)
    factor = column(modifiers, lambda m: m.factor, 1.0)
    m_tau = column(modifiers, lambda m: m.effective_throughput, 1.0)
    m_mass = column(modifiers, lambda m: m.mass_kg, 0.0)
    m_price = column(modifiers, lambda m: m.price.amount, 0.0)
    capacity = column(mounts, lambda m: m.capacity_kg)
    l_price = column(mounts, lambda m: m.price.amount)

    start, cpu = time.perf_counter(), time.thread_time()
    t, c, m, l = np.indices(SHAPE).reshape(4, -1)
    focal_eff = focal[t] * factor[m]
    pixel_scale = 180 * 3600 / np.pi * 1e-3 * pixel[c] / focal_eff
    fraction = (t_mass[t] + m_mass[m] + c_mass[c]) / capacity[l]
    signal = clear_area_mm2(aperture[t], obstruction[t]) * tau[t] * m_tau[m]
    time_factor = signal[0] / signal  # baseline: the first combination
    price = t_price[t] + m_price[m] + c_price[c] + l_price[l]
    mask = (pixel_scale >= PIXEL_SCALE[0]) & (pixel_scale <= PIXEL_SCALE[1]) \
        & (fraction <= CAPACITY_FRACTION)
    front = front_of([time_factor[mask], price[mask]])
    return (time.perf_counter() - start, time.thread_time() - cpu), int(mask.sum()), int(front.sum())


@dataclass
class HttpTiming:
    best: float  # wall-clock seconds, client side, request sent to answer parsed
    median: float
    server_cpu: float  # the server process's CPU seconds per request (all threads), averaged
    server_peak_mib: float  # the server process's peak resident size (VmHWM)
    request_kib: float
    answer_kib: float
    answer: dict


def request_body(components, constraints, objectives) -> bytes:
    """The benchmark's request as POST /v1/evaluations takes it, every component inline."""
    def inline(item):
        return None if item is None else item.model_dump(mode="json", exclude_none=True)

    telescopes, cameras, modifiers, mounts = components
    return json.dumps({
        "telescopes": [inline(t) for t in telescopes], "cameras": [inline(c) for c in cameras],
        "modifiers": [inline(m) for m in modifiers], "mounts": [inline(m) for m in mounts],
        "constraints": constraints, "objectives": objectives, "limit": 20,
    }).encode()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _cpu_seconds(pid: int) -> float:
    """User + system CPU time of a process, all its threads (Linux /proc)."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def _peak_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def http_timing(components, constraints, objectives) -> HttpTiming:
    """POST /v1/evaluations to a real server: ``rigbench serve`` (uvicorn) in its own process on
    127.0.0.1, on a fresh SQLite file; best and median of REPEATS requests after two warm-ups."""
    import httpx

    payload = request_body(components, constraints, objectives)
    port = _free_port()
    with tempfile.TemporaryDirectory() as data:
        env = {**os.environ, "RIGBENCH_DATA_DIR": data}
        env.pop("RIGBENCH_DATABASE_URL", None)
        server = subprocess.Popen(
            [sys.executable, "-m", "api.cli", "serve", "--workers", "1", "--port", str(port), "--log-level", "warning"],
            env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
            cwd=Path(__file__).resolve().parents[2],
        )
        try:
            base = f"http://127.0.0.1:{port}"
            deadline = time.monotonic() + 60
            while True:
                try:
                    if httpx.get(f"{base}/healthz").status_code == 200:
                        break
                except httpx.TransportError:
                    pass
                if server.poll() is not None or time.monotonic() > deadline:
                    raise RuntimeError(f"the server did not start: {server.stderr.read()}")
                time.sleep(0.1)
            headers = {"Content-Type": "application/json"}
            with httpx.Client(base_url=base, timeout=120) as client:
                def post():
                    response = client.post("/v1/evaluations", content=payload, headers=headers)
                    if response.status_code != 200:
                        raise RuntimeError(f"{response.status_code}: {response.text[:500]}")
                    return response

                for _ in range(2):  # warm-up: imports, first-use caches, connection
                    post()
                cpu = _cpu_seconds(server.pid)
                times = []
                for _ in range(REPEATS):
                    start = time.perf_counter()
                    response = post()
                    answer = response.json()
                    times.append(time.perf_counter() - start)
                server_cpu = (_cpu_seconds(server.pid) - cpu) / REPEATS
                peak = _peak_mib(server.pid)
        finally:
            server.terminate()
            server.wait(timeout=20)
    return HttpTiming(min(times), statistics.median(times), server_cpu, peak,
                      len(payload) / 1024, len(response.content) / 1024, answer)


def timed(call, repeats=REPEATS):
    """Result, best and median wall-clock seconds, best and mean CPU seconds of this thread
    (steadier than wall-clock time when other processes share the machine)."""
    times, cpu_times = [], []
    for _ in range(repeats):
        start, cpu = time.perf_counter(), time.thread_time()
        out = call()
        times.append(time.perf_counter() - start)
        cpu_times.append(time.thread_time() - cpu)
    return out, min(times), statistics.median(times), min(cpu_times), statistics.fmean(cpu_times)


def main() -> None:
    components = equipment()
    registry, keys, note = calculators_to_use()
    constraints, objectives = request(keys)
    print(f"evaluation benchmark: {' × '.join(map(str, SHAPE))} = {np.prod(SHAPE):,} combinations")
    print(f"calculators: {note}")
    print(f"constraints: {constraints}")
    print(f"objectives:  {objectives}")

    def run():
        return evaluate(*components, objectives=objectives, constraints=constraints, limit=20,
                        calculators=registry.calculators)

    result, best, median, cpu, cpu_mean = timed(run)
    print(f"\nin-process evaluate(): best {best * 1e3:.1f} ms, median {median * 1e3:.1f} ms "
          f"(CPU best {cpu * 1e3:.1f} ms, mean {cpu_mean * 1e3:.1f} ms) over {REPEATS} runs; "
          f"feasible {result.feasible:,}, "
          f"front {len(result.front)} rows")

    chunk_rows = 250_000
    chunked, c_best, c_median, _, _ = timed(lambda: evaluate(
        *components, objectives=objectives, constraints=constraints, limit=20,
        calculators=registry.calculators, chunk_rows=chunk_rows))
    same = chunked.model_dump() == result.model_dump()
    print(f"  in chunks of {chunk_rows:,} (4 chunks, each computed twice): best {c_best * 1e3:.1f} ms,"
          f" median {c_median * 1e3:.1f} ms; {'same result' if same else 'RESULT DIFFERS: a bug'}")

    http = http_timing(components, constraints, objectives)
    same = http.answer == result.model_dump(mode="json")
    print(f"over HTTP (POST /v1/evaluations to uvicorn on 127.0.0.1, its own process): best "
          f"{http.best * 1e3:.1f} ms, median {http.median * 1e3:.1f} ms (server CPU "
          f"{http.server_cpu * 1e3:.1f} ms per request, mean, all threads) over {REPEATS} "
          f"requests; request "
          f"{http.request_kib:.0f} KiB, answer {http.answer_kib:.0f} KiB; "
          f"{'same answer as evaluate()' if same else 'ANSWER DIFFERS from evaluate(): a bug'}")
    print(f"  server peak resident size: {http.server_peak_mib:.0f} MiB")

    tracemalloc.start()
    run()
    _, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    print(f"peak memory of one evaluate(): {traced_peak / 2**20:.0f} MiB traced "
          f"(numpy + Python allocations)")

    kernel_times = [brute_force_kernel(components) for _ in range(REPEATS)]
    kernel_best = min(k[0][0] for k in kernel_times)
    kernel_median = statistics.median(k[0][0] for k in kernel_times)
    kernel_cpu = min(k[0][1] for k in kernel_times)
    kernel_cpu_mean = statistics.fmean(k[0][1] for k in kernel_times)
    _, kernel_feasible, kernel_front = kernel_times[0]
    agree = (kernel_feasible, kernel_front) == (result.feasible, len(result.front))
    if agree:
        verdict = "same as the engine"
    elif keys is BUILT_IN:
        verdict = "differs: the kernel's formulas are the stand-ins', close to the built-ins only"
    else:
        verdict = "DIFFERS from the engine: a bug"
    print(f"brute-force kernel: best {kernel_best * 1e3:.1f} ms, median {kernel_median * 1e3:.1f} ms "
          f"(CPU best {kernel_cpu * 1e3:.1f} ms, mean {kernel_cpu_mean * 1e3:.1f} ms); "
          f"feasible {kernel_feasible:,}, front {kernel_front} "
          f"({verdict})")
    print(f"  ratio kernel / evaluate: {kernel_best / best:.2f}× on best times, "
          f"{kernel_median / median:.2f}× on medians, {kernel_cpu / cpu:.2f}× on CPU time")
    print(f"  ratio kernel / HTTP: {kernel_best / http.best:.2f}× on best times, "
          f"{kernel_median / http.median:.2f}× on medians, "
          f"{kernel_cpu_mean / http.server_cpu:.2f}× on mean CPU time (the server's, all threads)")

    rng = np.random.default_rng(7)
    picks = [tuple(int(rng.integers(n)) for n in SHAPE) for _ in range(SAMPLE)]
    base = Rig(name="baseline", telescope=components[0][0], camera=components[1][0],
               modifier=components[2][0], mount=components[3][0])
    names = sorted({k.split(".")[0] for k in [*constraints, *objectives]})
    rigs = [Rig(name="candidate", telescope=components[0][t], camera=components[1][c],
                modifier=components[2][m], mount=components[3][l]) for t, c, m, l in picks]
    start = time.perf_counter()
    for rig in rigs:
        compare([base, rig], calculators=names, baseline=0, registry=registry)
    per_combination = (time.perf_counter() - start) / SAMPLE
    whole = per_combination * np.prod(SHAPE)
    print(f"one at a time through compare(): {per_combination * 1e6:.0f} µs per combination "
          f"(sample of {SAMPLE}), so about {whole:.0f} s for the whole product")
    print(f"  ratio one-at-a-time / evaluate: {whole / best:,.0f}×")
    print(f"  ratio one-at-a-time / HTTP: {whole / http.best:,.0f}×")

    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    print(f"\nprocess peak resident size (whole run, incl. interpreter and kernel): {rss:.0f} MiB")


if __name__ == "__main__":
    main()
