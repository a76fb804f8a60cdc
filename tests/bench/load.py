"""Load benchmark: ``POST /v1/comparisons`` next to ``GET /healthz`` on one uvicorn server, same run.

What it does, all on the loopback interface:

1. starts ``uvicorn[standard]`` (uvloop, httptools) serving ``api.app:create_app`` in its own process,
   one worker, on a fresh SQLite file, request logs written to a file as in production;
2. starts a load generator in another process: an asyncio HTTP/1.1 client holding ``--connections``
   keep-alive connections, each sending its next request as soon as the previous answer is read;
3. runs a warm-up, then ``GET /healthz`` and ``POST /v1/comparisons`` (4 inline rigs, the six core
   calculators: light_grasp, etendue, speed, sampling, payload, cost), each bounded by a request
   count and a time limit, and prints requests per second, p50/p99/max latency, the number of
   non-2xx answers and the ratio of the two rates.

Goals (issue 8, on a 2-core machine): comparisons at >= 30 % of the health check's rate, p99 <= 25 ms
at 32 connections, no non-2xx. It prints figures; it asserts nothing (speed goals are shown, not tested).

Run:  .venv/bin/python tests/bench/load.py [--connections 32] [--requests 6000] [--seconds 20]
"""

from __future__ import annotations

import argparse
import asyncio
import json
import multiprocessing
import os
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


def comparison_body() -> bytes:
    """Four generic inline rigs (invented specs), every field the six core calculators read."""
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


def load(port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    """Run the generator in a separate process and return its raw figures."""
    receive, send = multiprocessing.Pipe(duplex=False)
    process = multiprocessing.Process(target=_generator, args=(port, request, connections, count, seconds, send))
    process.start()
    result = receive.recv()
    process.join()
    return result


def http_request(method: str, path: str, body: bytes = b"") -> bytes:
    head = f"{method} {path} HTTP/1.1\r\nHost: {HOST}\r\nAccept: application/json\r\n"
    if body:
        head += f"Content-Type: application/json\r\nContent-Length: {len(body)}\r\n"
    return head.encode() + b"\r\n" + body


def cpu_seconds(pid: int) -> float:
    """User + system CPU time of a process so far (Linux /proc), robust to other load on the machine."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def measured(pid: int, port: int, request: bytes, connections: int, count: int, seconds: float) -> dict:
    before = cpu_seconds(pid)
    figures = load(port, request, connections, count, seconds)
    figures["server_cpu_s"] = cpu_seconds(pid) - before
    return figures


def summary(name: str, figures: dict) -> dict:
    lat = sorted(figures["latencies"])
    n = len(lat)
    non_2xx = sum(v for k, v in figures["statuses"].items() if not 200 <= k < 300)
    row = {
        "name": name, "requests": n, "rate": n / figures["elapsed"],
        "p50_ms": statistics.median(lat) * 1e3, "p99_ms": lat[min(n - 1, int(n * 0.99))] * 1e3,
        "max_ms": lat[-1] * 1e3, "non_2xx": non_2xx, "cpu_us": figures["server_cpu_s"] / n * 1e6,
    }
    print(f"{name:<22} {row['requests']:>7} req  {row['rate']:>8.0f} req/s  p50 {row['p50_ms']:6.2f} ms"
          f"  p99 {row['p99_ms']:6.2f} ms  max {row['max_ms']:6.1f} ms  non-2xx {non_2xx}"
          f"  server CPU {row['cpu_us']:6.0f} us/req")
    return row


# --- the server -----------------------------------------------------------------------------------

def start_server(port: int, folder: Path, env_extra: dict[str, str]) -> subprocess.Popen:
    env = {**os.environ, "RIGBENCH_DATA_DIR": str(folder), "RIGBENCH_DATABASE_URL": "", **env_extra}
    log = open(folder / "server.log", "wb")
    server = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "--factory", "api.app:create_app", "--host", HOST, "--port", str(port),
         "--loop", "uvloop", "--http", "httptools", "--no-access-log", "--log-level", "warning"],
        cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            if httpx.get(f"http://{HOST}:{port}/healthz", timeout=1).status_code == 200:
                return server
        except httpx.HTTPError:
            time.sleep(0.2)
    server.kill()
    raise SystemExit(f"the server did not start; see {folder / 'server.log'}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--connections", type=int, default=32)
    parser.add_argument("--requests", type=int, default=6000, help="at most this many requests per endpoint")
    parser.add_argument("--seconds", type=float, default=20.0, help="and at most this long per endpoint")
    args = parser.parse_args()

    body = comparison_body()
    check = httpx.post  # one plain call first: the body must be a valid comparison
    port = free_port()
    with tempfile.TemporaryDirectory(prefix="rigbench-load-") as tmp:
        server = start_server(port, Path(tmp), {})
        try:
            answer = check(f"http://{HOST}:{port}/v1/comparisons", content=body,
                           headers={"Content-Type": "application/json"}, timeout=10)
            answer.raise_for_status()
            assert set(answer.json()["results"]) == set(CORE_CALCULATORS), answer.text
            health = http_request("GET", "/healthz")
            compare = http_request("POST", "/v1/comparisons", body)
            print(f"load.py: {args.connections} connections, at most {args.requests} requests or "
                  f"{args.seconds:.0f} s per endpoint; server pid {server.pid}, uvloop + httptools, 1 worker; "
                  f"load average {os.getloadavg()[0]:.2f}")
            load(port, health, args.connections, min(args.requests, 2000), 5)    # warm-up, not reported
            load(port, compare, args.connections, min(args.requests, 1000), 5)
            rows = [
                summary("GET /healthz", measured(server.pid, port, health, args.connections, args.requests,
                                                 args.seconds)),
                summary("POST /v1/comparisons", measured(server.pid, port, compare, args.connections, args.requests,
                                                         args.seconds)),
            ]
        finally:
            server.terminate()
            server.wait(timeout=30)
    ratio = rows[1]["rate"] / rows[0]["rate"]
    print(f"comparisons / healthz rate: {ratio:.1%}  (goal >= 30%); by server CPU per request: "
          f"{rows[0]['cpu_us'] / rows[1]['cpu_us']:.1%} (less sensitive to other load on the machine)")
    print(f"comparisons p99: {rows[1]['p99_ms']:.2f} ms  (goal <= 25 ms at 32 connections)")
    print(f"non-2xx answers: {rows[0]['non_2xx'] + rows[1]['non_2xx']}  (goal 0)")


if __name__ == "__main__":
    main()
