"""Cost bounds: server CPU-seconds and memory that single hostile or careless requests cause.

Each figure is measured on a real ``uvicorn`` process serving ``api.app:create_app`` on 127.0.0.1
(a fresh SQLite file), by reading the server process's CPU time (user + system, all threads, from
``/proc/<pid>/stat``) and resident size (``VmRSS``/``VmHWM`` from ``/proc/<pid>/status``) before
and after; the load comes from this process.

Requests (issue 14):

1. **tied evaluation**: anonymous ``POST /v1/evaluations`` of 100 identical telescopes × 100
   identical cameras × 10 empty modifier slots, three objectives: every one of the 100,000
   combinations is on the Pareto front.
2. **11 objectives**: the same shape with eleven objectives and fully described identical
   components (a body of about 48 KB).
3. **hang-up**: the tied evaluation again, the client hanging up after 0.5 s; the server CPU
   spent in the 5 s after the hang-up shows whether work goes on for nobody. Then an honest heavy
   evaluation (200 × 250 × 10 distinct components, 11 objectives) without a key (its CPU budget
   applies), and with a key allowed more, hung up after 1 s.
4. **club page**: a club with 1,000 public rigs; ``GET /clubs/<name>`` 100 times in a row (CPU per
   view, RSS before, after and at its peak), then 6 views in parallel (RSS peak).

The goal: no single request of at most 64 KB costs more than 2 CPU-seconds. It prints figures;
it asserts nothing (cost goals are shown, not tested).

Run:  .venv/bin/python tests/bench/cost_bounds.py [--views 100] [--skip-11]
The machine is shared: quote figures with the load average this prints.
"""

from __future__ import annotations

import argparse
import json
import os
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
CLUB = "cost-bench-club"
TICKS = os.sysconf("SC_CLK_TCK")
KEY_CPU_S = 120


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def cpu_s(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / TICKS  # utime + stime


def memory_mib(pid: int) -> dict[str, float]:
    out = {}
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        key, _, value = line.partition(":")
        if key in ("VmRSS", "VmHWM"):
            out[key] = int(value.split()[0]) / 1024
    return out


def telescope(full: bool) -> dict:
    body = {"aperture_mm": 200, "focal_length_mm": 1000}
    if full:
        body.update({"name": "200 mm f/5 newtonian", "design": "newtonian", "obstruction_mm": 70,
                     "mass_kg": 9.0, "length_mm": 950, "tube_diameter_mm": 240, "spider_vanes": 4,
                     "mirror_thickness_mm": 25, "price": {"amount": 900, "currency": "EUR"}})
    return body


def camera(full: bool) -> dict:
    body = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}
    if full:
        body.update({"name": "mono camera 3.8 um", "quantum_efficiency": 0.8, "read_noise_e": 1.5,
                     "dark_current_e_per_s": 0.002, "mass_kg": 0.7,
                     "price": {"amount": 1500, "currency": "EUR"}})
    return body


THREE = {"light_grasp.clear_area_mm2": "max", "sampling.pixel_scale_arcsec": "min",
         "speed.time_factor_per_arcsec2": "min"}
ELEVEN = {**THREE, "etendue.etendue_m2_deg2": "max", "etendue.field_solid_angle_deg2": "max",
          "etendue.pixel_etendue_m2_arcsec2": "max", "resolution.dawes_arcsec": "min",
          "resolution.rayleigh_arcsec": "min", "resolution.airy_diameter_um": "min",
          "speed.effective_focal_length_mm": "max", "speed.throughput": "max"}


def distinct_body() -> bytes:
    """200 different telescopes × 250 different cameras × 10 reducers (500,000 combinations), 11
    objectives: no ties, a large front; heavy honest work rather than a trick."""
    scopes = [{"aperture_mm": 60 + i, "focal_length_mm": (60 + i) * (4 + (i % 7) / 2)} for i in range(200)]
    cams = [{"pixel_size_um": 2 + (j % 25) / 5, "width_px": 3000 + 40 * j, "height_px": 2000 + 20 * j}
            for j in range(250)]
    reducers = [None] + [{"kind": "reducer", "factor": 0.5 + m / 20} for m in range(9)]
    body = {"telescopes": scopes, "cameras": cams, "modifiers": reducers, "objectives": ELEVEN}
    return json.dumps(body, separators=(",", ":")).encode()


def tied_body(objectives: dict, full: bool) -> bytes:
    body = {"telescopes": [telescope(full)] * 100, "cameras": [camera(full)] * 100,
            "modifiers": [None] * 10, "objectives": objectives}
    if full:  # described in full, as a form would send it
        return json.dumps(body).encode()
    return json.dumps(body, separators=(",", ":")).encode()


class Server:
    def __init__(self, folder: Path, env: dict[str, str]):
        self.port = free_port()
        self.url = f"http://{HOST}:{self.port}"
        self.log = open(folder / "server.log", "ab")
        environment = {**os.environ, "RIGBENCH_DATA_DIR": str(folder / "data"),
                       "RIGBENCH_RATE_LIMIT_WRITES_PER_KEY": "", "RIGBENCH_RATE_LIMIT_WRITES_PER_ADDRESS": "",
                       "RIGBENCH_REQUEST_LOG": "false", **env}
        self.process = subprocess.Popen(
            [sys.executable, "-m", "uvicorn", "--factory", "api.app:create_app", "--host", HOST,
             "--port", str(self.port), "--no-access-log", "--log-level", "warning"],
            cwd=ROOT, env=environment, stdout=self.log, stderr=subprocess.STDOUT,
        )
        for _ in range(600):
            try:
                if httpx.get(f"{self.url}/healthz", timeout=1).status_code == 200:
                    return
            except httpx.HTTPError:
                time.sleep(0.1)
        raise RuntimeError("server did not start")

    @property
    def pid(self) -> int:
        return self.process.pid

    def stop(self) -> None:
        self.process.terminate()
        self.process.wait(timeout=30)
        self.log.close()


def settle(pid: int, quiet_s: float = 0.5, limit_s: float = 600) -> None:
    """Wait until the server stops burning CPU (work that goes on after an answer is counted)."""
    deadline = time.monotonic() + limit_s
    last = cpu_s(pid)
    while time.monotonic() < deadline:
        time.sleep(quiet_s)
        now = cpu_s(pid)
        if now - last < 0.02:
            return
        last = now


def one_request(server: Server, method: str, path: str, body: bytes | None = None,
                headers: dict | None = None, timeout: float = 900) -> tuple[int, float, float, str]:
    """(status, wall s, server CPU s until the server is idle again, short detail)."""
    settle(server.pid)
    before = cpu_s(server.pid)
    start = time.monotonic()
    answer = httpx.request(method, server.url + path, content=body, timeout=timeout,
                           headers={"Content-Type": "application/json", **(headers or {})})
    wall = time.monotonic() - start
    settle(server.pid)
    detail = answer.headers.get("content-type", "")
    if answer.status_code >= 400:
        try:
            detail = answer.json().get("title", "") + ": " + answer.json().get("detail", "")[:120]
        except ValueError:
            detail = answer.text[:120]
    return answer.status_code, wall, cpu_s(server.pid) - before, detail


def hang_up(server: Server, body: bytes, key: str | None = None, after_s: float = 0.5,
            watch_s: float = 5.0) -> tuple[float, float]:
    """CPU spent while connected, and in the ``watch_s`` after the client hung up."""
    settle(server.pid)
    before = cpu_s(server.pid)
    auth = f"Authorization: Bearer {key}\r\n".encode() if key else b""
    with socket.create_connection((HOST, server.port)) as s:
        s.sendall(b"POST /v1/evaluations HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
                  + auth + f"Content-Length: {len(body)}\r\n\r\n".encode() + body)
        time.sleep(after_s)
    at_hang_up = cpu_s(server.pid)
    time.sleep(watch_s)
    after = cpu_s(server.pid)
    settle(server.pid)
    return at_hang_up - before, after - at_hang_up


def seed_club(folder: Path, n_rigs: int) -> str:
    """A club account with ``n_rigs`` public inline rigs, written straight through the app."""
    os.environ["RIGBENCH_DATA_DIR"] = str(folder / "data")
    sys.path.insert(0, str(ROOT))
    from sqlmodel import Session

    from api.accounts.keys import create_account
    from api.settings import Settings
    from api.storage import db
    from api.storage.models import AccountKind

    settings = Settings()
    engine = db.make_engine(settings.database_url)
    db.upgrade(engine)
    with Session(engine) as session:
        _account, key = create_account(session, CLUB, AccountKind.club)
    engine.dispose()
    return key


def add_rigs(server: Server, key: str, n_rigs: int) -> None:
    headers = {"Authorization": f"Bearer {key}"}
    with httpx.Client(base_url=server.url, headers=headers, timeout=60) as http:
        for i in range(n_rigs):
            aperture = 60 + (i % 300)
            rig = {"name": f"rig {i}", "visibility": "public",
                   "telescope": {"aperture_mm": aperture, "focal_length_mm": aperture * (4 + i % 6),
                                 "mass_kg": 3 + aperture / 40, "price": {"amount": 300 + i, "currency": "EUR"}},
                   "camera": {"pixel_size_um": 2.4 + (i % 7) * 0.5, "width_px": 6000, "height_px": 4000,
                              "mass_kg": 0.7, "price": {"amount": 1000, "currency": "EUR"}},
                   "mount": {"type": "german-equatorial", "capacity_kg": 20 + i % 30,
                             "price": {"amount": 2000, "currency": "EUR"}}}
            answer = http.post("/v1/rigs", json=rig)
            if answer.status_code != 201:
                raise RuntimeError(answer.text)


def club_views(server: Server, views: int, parallel: int) -> dict:
    path = f"/clubs/{CLUB}"
    out: dict = {}
    settle(server.pid)
    start_cpu = cpu_s(server.pid)
    first = httpx.get(server.url + path, timeout=600)
    settle(server.pid)
    out["first_cpu"] = cpu_s(server.pid) - start_cpu
    out["first_status"] = first.status_code
    out["page_kib"] = len(first.content) / 1024
    out["rigs_shown"] = first.text.count("<tr") if first.status_code == 200 else 0
    settle(server.pid)
    out["rss_before"] = memory_mib(server.pid)["VmRSS"]
    before = cpu_s(server.pid)
    statuses = []
    etag = first.headers.get("etag")
    with httpx.Client(base_url=server.url, timeout=600) as http:
        for _ in range(views):
            statuses.append(http.get(path).status_code)
        settle(server.pid)
        out["cpu_per_view"] = (cpu_s(server.pid) - before) / views
        out["rss_after"] = memory_mib(server.pid)["VmRSS"]
        out["statuses"] = sorted(set(statuses))
        if etag:
            before = cpu_s(server.pid)
            revalidated = [http.get(path, headers={"If-None-Match": etag}).status_code for _ in range(views)]
            settle(server.pid)
            out["revalidate"] = (sorted(set(revalidated)), (cpu_s(server.pid) - before) / views)
    barrier = threading.Barrier(parallel)

    def view(_):
        barrier.wait()
        return httpx.get(server.url + path, timeout=600).status_code

    threads = []
    results: list[int] = []
    for i in range(parallel):
        t = threading.Thread(target=lambda i=i: results.append(view(i)))
        t.start()
        threads.append(t)
    for t in threads:
        t.join()
    settle(server.pid)
    out["parallel_statuses"] = sorted(set(results))
    out["rss_peak"] = memory_mib(server.pid)["VmHWM"]
    out["rss_end"] = memory_mib(server.pid)["VmRSS"]
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument("--views", type=int, default=100)
    parser.add_argument("--parallel", type=int, default=6)
    parser.add_argument("--rigs", type=int, default=1000)
    parser.add_argument("--skip-11", action="store_true", help="skip the 11-objective request")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="rigbench-cost-") as tmp:
        folder = Path(tmp)
        key = seed_club(folder, args.rigs)
        # A key may use more CPU here, to show that hanging up stops the work (not the budget).
        server = Server(folder, {"RIGBENCH_REQUEST_CPU_S_WITH_KEY": str(KEY_CPU_S),
                                 "RIGBENCH_REQUEST_DEADLINE_S": "600"})
        try:
            print(f"cost_bounds.py: server pid {server.pid}, 1 uvicorn worker, SQLite; "
                  f"load average {os.getloadavg()[0]:.2f} (2 cores, shared machine)")
            tied = tied_body(THREE, full=False)
            status, wall, cpu, detail = one_request(server, "POST", "/v1/evaluations", tied)
            print(f"tied evaluation ({len(tied) / 1024:.1f} KB, 100×100×10, 3 objectives): "
                  f"{status} in {wall:.2f} s wall, server CPU {cpu:.2f} s  [{detail}]")
            if not args.skip_11:
                eleven = tied_body(ELEVEN, full=True)
                status, wall, cpu, detail = one_request(server, "POST", "/v1/evaluations", eleven)
                print(f"11 objectives ({len(eleven) / 1024:.1f} KB): {status} in {wall:.2f} s wall, "
                      f"server CPU {cpu:.2f} s  [{detail}]")
            during, after = hang_up(server, tied)
            print(f"hang-up after 0.5 s (tied evaluation): server CPU {during:.2f} s while connected, "
                  f"{after:.2f} s in the 5 s after the client left")
            heavy = distinct_body()
            status, wall, cpu, detail = one_request(server, "POST", "/v1/evaluations", heavy)
            print(f"distinct evaluation without a key ({len(heavy) / 1024:.1f} KB, 200×250×10, 11 objectives): "
                  f"{status} in {wall:.2f} s wall, server CPU {cpu:.2f} s  [{detail}]")
            during, after = hang_up(server, heavy, key=key, after_s=1.0)
            print(f"hang-up after 1 s (distinct evaluation, a key allowed {KEY_CPU_S} CPU-s): server CPU "
                  f"{during:.2f} s while connected, {after:.2f} s in the 5 s after the client left")
            add_rigs(server, key, args.rigs)
            club = club_views(server, args.views, args.parallel)
            print(f"club page, {args.rigs} public rigs: first view {club['first_status']}, "
                  f"{club['page_kib']:.0f} KiB, {club['rigs_shown']} table rows, server CPU {club['first_cpu']:.2f} s")
            print(f"  {args.views} views in a row: server CPU {club['cpu_per_view']:.3f} s per view, "
                  f"statuses {club['statuses']}; RSS {club['rss_before']:.0f} -> {club['rss_after']:.0f} MiB")
            if "revalidate" in club:
                statuses, cpu = club["revalidate"]
                print(f"  {args.views} views with If-None-Match: statuses {statuses}, "
                      f"server CPU {cpu * 1000:.1f} ms per view")
            print(f"  {args.parallel} views in parallel: statuses {club['parallel_statuses']}; "
                  f"RSS peak {club['rss_peak']:.0f} MiB, after {club['rss_end']:.0f} MiB")
        finally:
            server.stop()


if __name__ == "__main__":
    main()
