"""Where one request's time goes: the ASGI app called in-process, stage by stage (no network, no server).

The app (``create_app``, a fresh SQLite file, request log on and written to a file) is driven
straight through its ASGI interface, one request after another, so the figures are the app's own cost
without the HTTP parser, the socket or a load generator. Two passes per route:

1. plain: microseconds per request, end to end through the whole app;
2. canned: the comparison again, its lane answering the bytes it answered before and computing
   nothing — the true cost of the way in and out, with no stopwatch inside;
3. timed: the same requests with a stopwatch around each stage, reported per request. The stopwatches
   cost about a microsecond each, so this pass is slower than the plain one, and what they cost
   outside their own spans is left in the comparison's "middleware" line (the whole minus the lane):
   it reads about twice what the canned pass shows the way in and out to cost (measured with the
   garbage collector off too, so it is not the collector's doing).

Stages (inclusive; an indented stage is part of the one above it, "other" is what the listed parts
leave of their parent):

* middleware: everything outside the router (server-error handling, request log, body size limit,
  the exception middleware);
* the router: route matching, reading and decoding the body, dependency solving with the body's
  validation, the route function, sending the answer;
* in the route function: the request checks, the rigs built from the body, the answer's tree
  (``plugins.compare.comparison_tree``, shown as ``compare()``: params, the batch, the calculators,
  arrays to JSON values, null reasons, the rigs' own cautions) and serialisation
  (``plugins.results.comparison_json``, which for built-in calculators writes the tree without
  validating it again; "result validation" appears only where something still validates it).

Run alone:  .venv/bin/python tests/bench/request_costs.py [--requests 2000]
(load.py prints the same breakdown after its load figures).
"""

from __future__ import annotations

import argparse
import asyncio
import contextlib
import functools
import gc
import inspect
import sys
import tempfile
import time
from collections import defaultdict
from collections.abc import Callable
from pathlib import Path
from types import SimpleNamespace
from typing import Any

ROOT = Path(__file__).resolve().parents[2]

# CPU time of this thread: the machine may be shared, and time spent waiting for a core while other
# processes run is not the app's cost. Everything here runs in one thread (inline comparisons never
# leave the event loop).
CLOCK = time.thread_time
sys.path.insert(0, str(ROOT))


def _scope(method: str, path: str, body: bytes) -> dict[str, Any]:
    headers = [(b"host", b"127.0.0.1:8000"), (b"accept", b"application/json")]
    if body:
        headers += [(b"content-type", b"application/json"), (b"content-length", str(len(body)).encode())]
    return {
        "type": "http", "asgi": {"version": "3.0", "spec_version": "2.3"}, "http_version": "1.1",
        "method": method, "scheme": "http", "path": path, "raw_path": path.encode(), "query_string": b"",
        "root_path": "", "headers": headers, "client": ("127.0.0.1", 50000), "server": ("127.0.0.1", 8000),
    }


async def call(app, method: str, path: str, body: bytes = b"") -> tuple[int, bytes]:
    """One request through the ASGI app; its status and body."""
    scope = _scope(method, path, body)
    sent = False

    async def receive() -> dict[str, Any]:
        nonlocal sent
        if sent:
            return {"type": "http.disconnect"}
        sent = True
        return {"type": "http.request", "body": body, "more_body": False}

    answer: dict[str, Any] = {"body": b""}

    async def send(message: dict[str, Any]) -> None:
        if message["type"] == "http.response.start":
            answer["status"] = message["status"]
        elif message["type"] == "http.response.body":
            answer["body"] += message.get("body", b"")

    await app(scope, receive, send)
    return answer["status"], answer["body"]


class Stopwatches:
    """Accumulated seconds and calls per stage; wraps functions in place and puts them back."""

    def __init__(self) -> None:
        self.seconds: dict[str, float] = defaultdict(float)
        self.calls: dict[str, int] = defaultdict(int)
        self._undo: list[Callable[[], None]] = []

    def _sync(self, stage: str, function: Callable) -> Callable:
        seconds, calls, clock = self.seconds, self.calls, CLOCK

        @functools.wraps(function)  # keeps the signature (the comparison lane checks the route's)
        def timed(*args, **kwargs):
            start = clock()
            try:
                return function(*args, **kwargs)
            finally:
                seconds[stage] += clock() - start
                calls[stage] += 1
        return timed

    def _async(self, stage: str, function: Callable) -> Callable:
        seconds, calls, clock = self.seconds, self.calls, CLOCK

        @functools.wraps(function)
        async def timed(*args, **kwargs):
            start = clock()
            try:
                return await function(*args, **kwargs)
            finally:
                seconds[stage] += clock() - start
                calls[stage] += 1
        return timed

    def wrap(self, owner: Any, attribute: str, stage: str, *, is_async: bool = False) -> None:
        own = not isinstance(owner, type) or attribute in owner.__dict__
        original = inspect.getattr_static(owner, attribute) if isinstance(owner, type) else getattr(owner, attribute)
        if isinstance(original, classmethod):
            bound = getattr(owner, attribute)
            replacement = classmethod(lambda cls, *a, **k: timed(*a, **k))
            timed = self._sync(stage, bound)
        else:
            replacement = self._async(stage, original) if is_async else self._sync(stage, original)
        setattr(owner, attribute, replacement)
        self._undo.append(lambda: setattr(owner, attribute, original) if own else delattr(owner, attribute))

    def restore(self) -> None:
        while self._undo:
            self._undo.pop()()

    def reset(self) -> None:
        self.seconds.clear()
        self.calls.clear()


def _router_link(app) -> tuple[Any, str]:
    """The middleware object whose ``app`` attribute is the router (the innermost link of the stack)."""
    node = app.middleware_stack
    while getattr(node, "app", None) is not None and node.app is not app.router:
        node = node.app
    if getattr(node, "app", None) is not app.router:
        raise RuntimeError("could not find the router inside the middleware stack")
    return node, "app"


def instrument(app, watches: Stopwatches) -> None:
    import fastapi.dependencies.utils as fastapi_deps
    import fastapi.routing as fastapi_routing

    import importlib

    from calculators.batch import RigBatch
    from plugins.results import Comparison

    # By module path: `plugins.compare` the attribute is the function that `plugins` re-exports.
    comparisons = importlib.import_module("api.comparisons.routes")
    compare_module = importlib.import_module("plugins.compare")
    lane = importlib.import_module("api.comparisons.fast_lane")
    from api.schemas import ComparisonRequest

    link, attribute = _router_link(app)
    watches.wrap(link, attribute, "router", is_async=True)
    watches.wrap(lane, "_answer", "lane", is_async=True)
    watches.wrap(ComparisonRequest, "model_validate", "body validation")
    watches.wrap(comparisons, "create_comparison", "route function", is_async=True)
    watches.wrap(fastapi_routing, "solve_dependencies", "dependencies", is_async=True)
    watches.wrap(fastapi_deps, "request_body_to_args", "body validation", is_async=True)
    watches.wrap(fastapi_routing, "run_endpoint_function", "route function", is_async=True)
    watches.wrap(comparisons, "check_request", "request checks")
    watches.wrap(comparisons, "inline_rigs", "rigs from the body")
    # The route builds the answer's tree (plugins.compare.comparison_tree) and writes it
    # (plugins.results.comparison_json: without validating it again for built-in calculators).
    tree = "comparison_tree" if hasattr(comparisons, "comparison_tree") else "compare"
    watches.wrap(comparisons, tree, "compare()")
    watches.wrap(compare_module, "parse_params", "params")
    watches.wrap(RigBatch, "from_rigs", "batch")
    watches.wrap(compare_module, "run", "calculators")
    watches.wrap(compare_module, "to_json_values", "arrays to JSON values")
    if hasattr(compare_module, "explain"):
        watches.wrap(compare_module, "explain", "null reasons")
    if hasattr(compare_module, "rig_cautions"):
        watches.wrap(compare_module, "rig_cautions", "rig cautions")
    shim = SimpleNamespace(model_validate=Comparison.model_validate)
    watches.wrap(shim, "model_validate", "result validation")
    original_comparison = compare_module.Comparison
    compare_module.Comparison = shim
    watches._undo.append(lambda: setattr(compare_module, "Comparison", original_comparison))
    if hasattr(comparisons, "comparison_json"):
        watches.wrap(comparisons, "comparison_json", "serialisation")
    else:
        watches.wrap(Comparison, "model_dump_json", "serialisation")


#: (stage, parents) in the order printed: the first parent present is the stage's; "other" rows are
#: computed. An anonymous JSON comparison takes the lane (api.comparisons.fast_lane), not the router.
TREE = [
    ("middleware", ()), ("lane", ()), ("router", ()),
    ("dependencies", ("router",)), ("body validation", ("lane", "dependencies")),
    ("route function", ("lane", "router")),
    ("request checks", ("route function",)), ("rigs from the body", ("route function",)),
    ("compare()", ("route function",)),
    ("params", ("compare()",)), ("batch", ("compare()",)), ("calculators", ("compare()",)),
    ("arrays to JSON values", ("compare()",)), ("null reasons", ("compare()",)),
    ("rig cautions", ("compare()",)),
    ("result validation", ("compare()",)),
    ("serialisation", ("route function",)),
]


TREE_PARENTS = dict(TREE)


async def _measure(app, method: str, path: str, body: bytes, count: int) -> tuple[float, float, float]:
    """Seconds per request over ``count`` requests (the first must answer 2xx): CPU time, mean and
    in the best chunk of 100 (other work on the machine only ever slows a chunk), and wall clock."""
    status, answer = await call(app, method, path, body)
    if not 200 <= status < 300:
        raise SystemExit(f"{method} {path} answered {status}: {answer[:300]!r}")
    chunk = min(100, count)
    best, total, wall = float("inf"), 0.0, time.perf_counter()
    for _ in range(max(1, count // chunk)):
        start = CLOCK()
        for _ in range(chunk):
            await call(app, method, path, body)
        spent = CLOCK() - start
        best, total = min(best, spent / chunk), total + spent
    runs = max(1, count // chunk) * chunk
    return total / runs, best, (time.perf_counter() - wall) / runs


async def _canned(app, body: bytes, count: int) -> tuple[float, float, float]:
    """The same POST with the comparison lane answering the bytes it answered before, computing
    nothing: what the way in and out costs (middleware, the lane's checks, sending the answer), with
    no stopwatch inside to distort it."""
    from starlette.responses import Response

    from api.comparisons import fast_lane

    _status, answer = await call(app, "POST", "/v1/comparisons", body)
    original = fast_lane._answer

    async def canned(request, raw: bytes) -> Response:
        return Response(answer, media_type="application/json")

    fast_lane._answer = canned
    try:
        return await _measure(app, "POST", "/v1/comparisons", body, count)
    finally:
        fast_lane._answer = original


async def _run(body: bytes, count: int, log_path: Path, settings) -> dict[str, Any]:
    from api.app import create_app

    app = create_app(settings)
    figures: dict[str, Any] = {}
    with open(log_path, "w") as log, contextlib.redirect_stderr(log):
        async with app.router.lifespan_context(app):
            for _ in range(200):  # warm-up: first-call caches, the middleware stack, imports
                await call(app, "GET", "/healthz")
                await call(app, "POST", "/v1/comparisons", body)
            gc.collect()
            figures["healthz"] = await _measure(app, "GET", "/healthz", b"", count)
            figures["compare"] = await _measure(app, "POST", "/v1/comparisons", body, count)
            figures["canned"] = await _canned(app, body, count)
            watches = Stopwatches()
            instrument(app, watches)
            try:
                for route, method, path, payload in (("healthz", "GET", "/healthz", b""),
                                                     ("compare", "POST", "/v1/comparisons", body)):
                    watches.reset()
                    start = CLOCK()
                    for _ in range(count):
                        await call(app, method, path, payload)
                    whole = CLOCK() - start
                    stages = dict(watches.seconds)
                    stages["middleware"] = whole - stages.get("router", 0.0) - stages.get("lane", 0.0)
                    figures[f"{route}_timed"] = whole / count
                    figures[f"{route}_stages"] = {k: v / count for k, v in stages.items()}
            finally:
                watches.restore()
    return figures


def breakdown(body: bytes, count: int = 2000) -> dict[str, Any]:
    """Run both passes on a fresh app in a temporary folder; the figures, in seconds per request."""
    from api.settings import Settings

    with tempfile.TemporaryDirectory(prefix="rigbench-costs-") as tmp:
        settings = Settings(data_dir=Path(tmp), database_url="", request_log=True)
        return asyncio.run(_run(body, count, Path(tmp) / "requests.log", settings))


def report(figures: dict[str, Any], count: int) -> None:
    us = 1e6
    (health, health_best, health_wall) = figures["healthz"]
    (comparison, comparison_best, comparison_wall) = figures["compare"]
    print(f"in-process cost per request (the ASGI app called directly, {count} requests each, no network; "
          "CPU time of the serving thread, mean and best chunk of 100):")
    print(f"  GET /healthz          {health * us:7.0f} us  best {health_best * us:5.0f} us  "
          f"(wall clock {health_wall * us:.0f} us)")
    print(f"  POST /v1/comparisons  {comparison * us:7.0f} us  best {comparison_best * us:5.0f} us  "
          f"(wall clock {comparison_wall * us:.0f} us)")
    print(f"  comparisons cost {(comparison - health) * us:.0f} us more than /healthz (best chunks: "
          f"{(comparison_best - health_best) * us:.0f} us); /healthz / comparison {health / comparison:.1%} "
          f"(best chunks {health_best / comparison_best:.1%})")
    canned = figures["canned"][0]
    print(f"  the same POST answered with its earlier answer's bytes, computing nothing: {canned * us:.0f} us "
          f"(middleware, the lane's checks, sending the answer); so the comparison's own work (body "
          f"validation, rigs, compute, serialisation) is {(comparison - canned) * us:.0f} us")
    labels = {"router": "routing, body read and JSON decoding, answer",
              "lane": "body read and JSON decoding",
              "dependencies": "dependency solving (caller, key)",
              "route function": "other (the response object)",
              "compare()": "other (checks, the result tree)"}
    for route, title in (("healthz", "GET /healthz"), ("compare", "POST /v1/comparisons")):
        stages = figures[f"{route}_stages"]
        print(f"  {title}, stage by stage (stopwatches on: {figures[f'{route}_timed'] * us:.0f} us per request):")
        depth = {None: 0}

        def row(level: int, label: str, seconds: float) -> None:
            print(f"    {'  ' * level}{label:<{52 - 2 * level}} {seconds * us:7.1f} us")

        parent_of = {stage: next((p for p in parents if p in stages), None) for stage, parents in TREE}
        for stage, _ in TREE:
            if stage not in stages or (parent_of[stage] is None and TREE_PARENTS[stage]):
                continue
            depth[stage] = depth[parent_of[stage]] + 1
            row(depth[stage] - 1, stage, stages[stage])
            children = [s for s, _ in TREE if parent_of[s] == stage and s in stages]
            if children:
                row(depth[stage], labels.get(stage, "other"),
                    stages[stage] - sum(stages[c] for c in children))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--requests", type=int, default=2000)
    args = parser.parse_args()
    sys.path.insert(0, str(Path(__file__).parent))
    from load import comparison_body

    report(breakdown(comparison_body(), args.requests), args.requests)


if __name__ == "__main__":
    main()
