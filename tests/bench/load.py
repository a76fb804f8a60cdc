"""Load benchmark: ``POST /v1/comparisons`` next to ``GET /healthz`` on one server, same run.

What it does, all on the loopback interface:

1. starts ``rigbench serve --workers N`` (uvicorn with uvloop and httptools; N worker processes behind
   one socket) on a fresh SQLite file, request logs written to a file as in production;
2. starts a load generator in another process holding ``--connections`` keep-alive connections, each
   sending its next request as soon as the previous answer is read: ``wrk`` (Debian package ``wrk``,
   written in C) when it is on the PATH, else an asyncio HTTP/1.1 client in Python (``--generator``).
   On a 2-core machine the generator shares the cores with the server: the Python client costs
   several times wrk's CPU per request, which the server's second worker then lacks, so the worker
   comparison is only fair with wrk;
3. runs a warm-up, then ``GET /healthz`` and ``POST /v1/comparisons`` (4 inline rigs, the six core
   calculators: light_grasp, etendue, speed, sampling, payload, cost), each bounded by a request
   count and a time limit, and prints requests per second, p50/p99/max latency, the number of
   non-2xx answers, the server's CPU time per request (all its processes) and the ratio of the two
   rates; with several worker counts (``--workers 1,2``) each gets its own server, in turn, and the
   comparison rates are compared;
4. last, with every server stopped, where one request's time goes: the app called in-process,
   stage by stage (``request_costs.py``).

Goals (issue 15, on a 2-core machine): with one worker and 32 connections, comparisons at >= 50 % of
the health check's rate, p99 <= 3 x p50, no non-2xx; two workers >= 1.6 x one worker's comparisons.
It prints figures; it asserts nothing (speed goals are shown, not tested). On a machine shared with
other work every rate falls; the ratios measured in one run, and the CPU time per request, suffer less.

Run:  .venv/bin/python tests/bench/load.py [--connections 32] [--requests 6000] [--seconds 20]
                                           [--workers 1,2] [--breakdown-requests 2000]
                                           [--generator auto|wrk|python]
(wrk takes no request count: with it every run lasts ``--seconds``.)
"""

from __future__ import annotations

import argparse
import asyncio
import json
import multiprocessing
import os
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
CORE_CALCULATORS = ["light_grasp", "etendue", "speed", "sampling", "payload", "cost"]


def comparison_body(calculators: str = "core") -> bytes:
    """Four generic inline rigs (invented specs), every field the six core calculators read; with
    ``calculators="all"`` the body names none, so every loaded calculator runs."""
    rigs = []
    for aperture, ratio, pixel, price in ((80, 6, 3.8, 900), (130, 5, 3.8, 1400), (200, 4, 3.0, 2600),
                                          (300, 4, 4.5, 5200)):
        rigs.append({
            "name": f"{aperture} mm f/{ratio}",
            "telescope": {"aperture_mm": aperture, "focal_length_mm": aperture * ratio,
                          "obstruction_mm": 0 if aperture < 100 else aperture * 0.3,
                          "mass_kg": aperture / 20, "price": {"amount": price, "currency": "EUR"}},
            "camera": {"pixel_size_um": pixel, "width_px": 6000, "height_px": 4000, "mass_kg": 0.7,
                       "price": {"amount": 1500, "currency": "EUR"}},
            "mount": {"type": "german-equatorial", "capacity_kg": 25,
                      "price": {"amount": 2000, "currency": "EUR"}},
        })
    if calculators == "all":
        return json.dumps({"rigs": rigs}).encode()
    return json.dumps({"rigs": rigs, "calculators": CORE_CALCULATORS}).encode()


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


# --- the load generator (runs in its own process) ----------------------------------------------------

async def _connection(port: int, request: bytes, deadline: float, budget: list[int],
                      latencies: list[float], statuses: dict[int, int]) -> None:
    reader, writer = await asyncio.open_connection(HOST, port)
    try:
        while budget[0] > 0 and time.perf_counter() < deadline:
            budget[0] -= 1
            start = time.perf_counter()
            writer.write(request)
            head = await reader.readuntil(b"\r\n\r\n")
            status = int(head[9:12])
            length = 0
            for line in head.split(b"\r\n"):
                if line[:15].lower() == b"content-length:":
                    length = int(line[15:])
            await reader.readexactly(length)
            latencies.append(time.perf_counter() - start)
            statuses[status] = statuses.get(status, 0) + 1
    finally:
        writer.close()


async def _drive(port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    latencies: list[float] = []
    statuses: dict[int, int] = {}
    budget = [count]
    start = time.perf_counter()
    await asyncio.gather(*(
        _connection(port, request, start + seconds, budget, latencies, statuses) for _ in range(connections)
    ))
    elapsed = time.perf_counter() - start
    return {"elapsed": elapsed, "latencies": latencies, "statuses": statuses}


def _generator(port: int, request: bytes, connections: int, count: int, seconds: float, out) -> None:
    try:
        import uvloop

        uvloop.install()
    except ImportError:
        pass
    out.send(asyncio.run(_drive(port, request, connections, count, seconds)))


def _python_load(port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    receive, send = multiprocessing.Pipe(duplex=False)
    process = multiprocessing.Process(target=_generator, args=(port, request, connections, count, seconds, send))
    process.start()
    result = receive.recv()
    process.join()
    lat = sorted(result["latencies"])
    n = len(lat)
    non_2xx = sum(v for k, v in result["statuses"].items() if not 200 <= k < 300)
    return {"requests": n, "elapsed": result["elapsed"], "p50_s": statistics.median(lat),
            "p99_s": lat[min(n - 1, int(n * 0.99))], "max_s": lat[-1], "non_2xx": non_2xx}


# wrk's script: the request as given (method, path, headers, body), and at the end one JSON line with
# the figures. wrk counts answers with a status of 400 or more in errors.status; 3xx would pass as
# success, and none of the two routes answers one.
WRK_SCRIPT = """
local f = io.open(os.getenv("RIGBENCH_LOAD_REQUEST"), "rb"); local raw = f:read("*a"); f:close()
local head, body = raw:match("^(.-)\\r\\n\\r\\n(.*)$")
local first = true
for line in head:gmatch("[^\\r\\n]+") do
  if first then
    wrk.method, wrk.path = line:match("^(%S+) (%S+)"); first = false
  else
    local name, value = line:match("^([^:]+):%s*(.*)$")
    if name:lower() ~= "host" and name:lower() ~= "content-length" then wrk.headers[name] = value end
  end
end
if #body > 0 then wrk.body = body end
function done(summary, latency, requests)
  local e = summary.errors
  io.write(string.format(
    'RIGBENCH {"requests": %d, "elapsed_us": %d, "p50_us": %d, "p99_us": %d, "max_us": %d, ' ..
    '"status_errors": %d, "socket_errors": %d}\\n',
    summary.requests, summary.duration, latency:percentile(50), latency:percentile(99), latency.max,
    e.status, e.connect + e.read + e.write + e.timeout))
end
"""


def _wrk_load(port: int, request: bytes, connections: int, seconds: float) -> dict:
    with tempfile.TemporaryDirectory(prefix="rigbench-wrk-") as tmp:
        script, raw = Path(tmp) / "request.lua", Path(tmp) / "request.http"
        script.write_text(WRK_SCRIPT)
        raw.write_bytes(request)
        out = subprocess.run(
            ["wrk", "-t1", f"-c{connections}", f"-d{max(1, round(seconds))}s", "-s", str(script),
             f"http://{HOST}:{port}/"],
            env={**os.environ, "RIGBENCH_LOAD_REQUEST": str(raw)}, capture_output=True, text=True, check=True,
        ).stdout
    line = next(line for line in out.splitlines() if line.startswith("RIGBENCH "))
    f = json.loads(line.removeprefix("RIGBENCH "))
    return {"requests": f["requests"], "elapsed": f["elapsed_us"] / 1e6, "p50_s": f["p50_us"] / 1e6,
            "p99_s": f["p99_us"] / 1e6, "max_s": f["max_us"] / 1e6,
            "non_2xx": f["status_errors"] + f["socket_errors"]}


GENERATOR = "python"  # set by main(): "wrk" or "python"


def load(port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    """Run the load generator in a separate process: requests, elapsed seconds, p50/p99/max latency
    in seconds and the count of non-2xx answers (with wrk also failed connections)."""
    if GENERATOR == "wrk":
        return _wrk_load(port, request, connections, seconds)
    return _python_load(port, request, connections, count, seconds)


def http_request(method: str, path: str, body: bytes = b"") -> bytes:
    head = f"{method} {path} HTTP/1.1\r\nHost: {HOST}\r\nAccept: application/json\r\n"
    if body:
        head += f"Content-Type: application/json\r\nContent-Length: {len(body)}\r\n"
    return head.encode() + b"\r\n" + body


def _process_tree(pid: int) -> list[int]:
    pids, queue = [], [pid]
    while queue:
        current = queue.pop()
        pids.append(current)
        for task in Path(f"/proc/{current}/task").iterdir():
            children = (task / "children").read_text().split()
            queue.extend(int(child) for child in children)
    return pids


def cpu_seconds(pid: int) -> float:
    """User + system CPU time so far of a process and its children (Linux /proc): the server's workers.

    Robust to other load on the machine, unlike the wall clock.
    """
    total = 0
    for member in _process_tree(pid):
        try:
            fields = Path(f"/proc/{member}/stat").read_text().rsplit(")", 1)[1].split()
        except FileNotFoundError:
            continue
        total += int(fields[11]) + int(fields[12])
    return total / os.sysconf("SC_CLK_TCK")


def measured(pid: int, port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    before = cpu_seconds(pid)
    figures = load(port, request, connections, count, seconds)
    figures["server_cpu_s"] = cpu_seconds(pid) - before
    return figures


def summary(name: str, figures: dict) -> dict:
    n, non_2xx = figures["requests"], figures["non_2xx"]
    row = {
        "name": name, "requests": n, "rate": n / figures["elapsed"],
        "p50_ms": figures["p50_s"] * 1e3, "p99_ms": figures["p99_s"] * 1e3,
        "max_ms": figures["max_s"] * 1e3, "non_2xx": non_2xx, "cpu_us": figures["server_cpu_s"] / n * 1e6,
    }
    print(f"{name:<22} {row['requests']:>7} req  {row['rate']:>8.0f} req/s  p50 {row['p50_ms']:6.2f} ms"
          f"  p99 {row['p99_ms']:6.2f} ms  max {row['max_ms']:6.1f} ms  non-2xx {non_2xx}"
          f"  server CPU {row['cpu_us']:6.0f} us/req")
    return row


# --- the server -----------------------------------------------------------------------------------

def start_server(port: int, folder: Path, workers: int) -> subprocess.Popen:
    env = {**os.environ, "RIGBENCH_DATA_DIR": str(folder), "RIGBENCH_DATABASE_URL": ""}
    log = open(folder / "server.log", "wb")
    server = subprocess.Popen(
        [sys.executable, "-m", "api.cli", "serve", "--host", HOST, "--port", str(port), "--workers", str(workers),
         "--log-level", "warning"],
        cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    deadline = time.monotonic() + 90
    while time.monotonic() < deadline:
        try:
            # Ready when every worker has answered (each request-log line carries its worker's pid).
            if httpx.get(f"http://{HOST}:{port}/healthz", timeout=1).status_code == 200 and \
                    len(requests_per_worker(folder)) >= workers:
                return server
        except httpx.HTTPError:
            pass
        time.sleep(0.1)
    server.kill()
    raise SystemExit(f"the server did not start; see {folder / 'server.log'}")


def requests_per_worker(folder: Path) -> dict[int, int]:
    counts: dict[int, int] = {}
    for line in (folder / "server.log").read_text(errors="replace").splitlines():
        if line.startswith("{") and '"rigbench.access"' in line:
            pid = json.loads(line).get("pid")
            counts[pid] = counts.get(pid, 0) + 1
    return counts


def serve_and_load(workers: int, args: argparse.Namespace, body: bytes) -> list[dict]:
    port = free_port()
    with tempfile.TemporaryDirectory(prefix="rigbench-load-") as tmp:
        folder = Path(tmp)
        server = start_server(port, folder, workers)
        try:
            answer = httpx.post(f"http://{HOST}:{port}/v1/comparisons", content=body,
                                headers={"Content-Type": "application/json"}, timeout=10)
            answer.raise_for_status()
            if args.calculators == "core":
                assert set(answer.json()["results"]) == set(CORE_CALCULATORS), answer.text
            health = http_request("GET", "/healthz")
            compare = http_request("POST", "/v1/comparisons", body)
            label = f"{workers} worker{'s' if workers > 1 else ''}"
            print(f"{label}: server pid {server.pid}; load average {os.getloadavg()[0]:.2f}")
            load(port, health, args.connections, min(args.requests, 2000), 5)    # warm-up, not reported
            load(port, compare, args.connections, min(args.requests, 1000), 5)
            before = requests_per_worker(folder)
            rows = [
                summary(f"GET /healthz", measured(server.pid, port, health, args.connections, args.requests,
                                                  args.seconds)),
                summary(f"POST /v1/comparisons", measured(server.pid, port, compare, args.connections,
                                                          args.requests, args.seconds)),
            ]
            if workers > 1:
                after = requests_per_worker(folder)
                shares = sorted((after.get(pid, 0) - before.get(pid, 0) for pid in after), reverse=True)
                print(f"  requests per worker during the measured runs: {' / '.join(map(str, shares))}")
        finally:
            server.terminate()
            server.wait(timeout=30)
    for row in rows:
        row["workers"] = workers
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--connections", type=int, default=32)
    parser.add_argument("--requests", type=int, default=6000, help="at most this many requests per endpoint")
    parser.add_argument("--seconds", type=float, default=20.0, help="and at most this long per endpoint")
    parser.add_argument("--workers", default="1", help="worker counts to measure in turn, e.g. 1,2 (default 1)")
    parser.add_argument("--breakdown-requests", type=int, default=2000,
                        help="requests per route for the in-process breakdown; 0: skip it")
    parser.add_argument("--calculators", choices=("core", "all"), default="core",
                        help="the six core calculators (default) or every loaded one")
    parser.add_argument("--generator", choices=("auto", "wrk", "python"), default="auto",
                        help="load generator: wrk when it is installed (default), else the Python client")
    args = parser.parse_args()
    global GENERATOR
    GENERATOR = args.generator if args.generator != "auto" else ("wrk" if shutil.which("wrk") else "python")
    if GENERATOR == "wrk" and not shutil.which("wrk"):
        raise SystemExit("wrk is not installed (apt-get install wrk), or choose --generator python")
    worker_counts = [int(n) for n in args.workers.split(",")]

    body = comparison_body(args.calculators)
    print(f"calculators: {args.calculators}")
    limit = (f"{args.seconds:.0f} s" if GENERATOR == "wrk"
             else f"at most {args.requests} requests or {args.seconds:.0f} s")
    print(f"load.py: generator {GENERATOR}, {args.connections} connections, {limit} "
          f"per endpoint; rigbench serve (uvloop + httptools), {os.cpu_count()} CPUs; load average "
          f"{os.getloadavg()[0]:.2f}")
    results = {n: serve_and_load(n, args, body) for n in worker_counts}
    for n, (health, compare) in results.items():
        p99_ratio = compare["p99_ms"] / compare["p50_ms"]
        print(f"{n} worker{'s' if n > 1 else ''}: comparisons / healthz rate {compare['rate'] / health['rate']:.1%} "
              f"(goal >= 50%); by server CPU per request {health['cpu_us'] / compare['cpu_us']:.1%}; "
              f"comparisons p99 = {p99_ratio:.1f} x p50 (goal <= 3); "
              f"non-2xx {health['non_2xx'] + compare['non_2xx']} (goal 0)")
    if 1 in results:
        one = results[1][1]["rate"]
        for n, (_, compare) in results.items():
            if n > 1:
                print(f"{n} workers / 1 worker, comparisons per second: {compare['rate'] / one:.2f} x "
                      f"(goal >= 1.6 x for 2 workers on this machine)")
    if args.breakdown_requests:
        from request_costs import breakdown, report

        report(breakdown(body, args.breakdown_requests), args.breakdown_requests)


if __name__ == "__main__":
    main()
