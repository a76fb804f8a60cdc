"""Bounded work per request: a deadline, a CPU budget, cancellation when the client hangs up, and a
cap on the heavy requests one process computes at once.

A heavy route (an evaluation, a comparison computed off the event loop, a club page that is not
cached) runs its work through :func:`run_heavy`:

* it first takes one of ``RIGBENCH_MAX_HEAVY_REQUESTS`` slots of this process, waiting at most
  ``RIGBENCH_HEAVY_QUEUE_S`` for one; a request that gets none is a 503 with ``Retry-After``;
* the work runs in the threadpool with a :class:`Budget` whose ``check()`` it calls between chunks
  (the sweep's chunks, the Pareto front's blocks). ``check()`` raises when the wall-clock deadline
  (``RIGBENCH_REQUEST_DEADLINE_S``, a 503: the server is too busy now) or the CPU budget of the
  calling thread (``RIGBENCH_REQUEST_CPU_S``, or ``RIGBENCH_REQUEST_CPU_S_WITH_KEY`` for a caller
  with a key: a 422, the same request will always cost that much) has passed, or when the client
  has hung up (the work stops; nobody reads the answer).

Python cannot stop a thread from outside: the work stops at its next ``check()``, which the sweep
calls at least once per chunk of at most ``chunk_rows`` combinations.
"""

from __future__ import annotations

import asyncio
import threading
import time
from collections.abc import Callable
from typing import Any, TypeVar

from fastapi import Request
from starlette.concurrency import run_in_threadpool

from api.http.problems import ApiProblem

T = TypeVar("T")

#: How often the client's connection is looked at while the work runs.
DISCONNECT_POLL_S = 0.2


class ClientGone(Exception):
    """The client hung up: the work stops, and no answer is sent."""


class Budget:
    """The limits of one request's work; ``check()`` raises once one of them is passed."""

    def __init__(self, deadline_s: float | None, cpu_s: float | None):
        self.started = time.monotonic()
        self.deadline = None if deadline_s is None else self.started + deadline_s
        self.deadline_s = deadline_s
        self.cpu_s = cpu_s
        self.cancelled = False
        self._cpu_start: dict[int, float] = {}

    def check(self) -> None:
        if self.cancelled:
            raise ClientGone
        if self.deadline is not None and time.monotonic() > self.deadline:
            raise ApiProblem(
                503, f"the request did not finish within the server's deadline of {self.deadline_s:g} s; "
                "try again later, or ask for less", title="Deadline passed", type="/problems/deadline-passed",
                headers={"Retry-After": "10"},
            )
        if self.cpu_s is not None:
            # CPU time of the thread doing the work, counted from its first check.
            now = time.thread_time()
            start = self._cpu_start.setdefault(threading.get_ident(), now)
            if now - start > self.cpu_s:
                raise ApiProblem(
                    422, f"the request needs more than the {self.cpu_s:g} CPU-seconds one request may use; "
                    "shorten the lists of candidates, add constraints, or use a key allowed more",
                    title="Too costly", type="/problems/too-costly",
                )


def budget_for(request: Request, has_key: bool) -> Budget:
    settings = request.app.state.settings
    cpu = settings.request_cpu_s_with_key if has_key else settings.request_cpu_s
    return Budget(settings.request_deadline_s or None, cpu or None)


def _slots(request: Request) -> asyncio.Semaphore:
    state = request.app.state
    slots = getattr(state, "heavy_slots", None)
    if slots is None:
        slots = state.heavy_slots = asyncio.Semaphore(state.settings.max_heavy_requests)
    return slots


async def run_heavy(request: Request, budget: Budget, work: Callable[..., T], *args: Any, **kwargs: Any) -> T:
    """``work(*args, **kwargs)`` in the threadpool under a heavy-request slot, watched for the
    client hanging up; the work must call ``budget.check()`` now and then."""
    settings = request.app.state.settings
    slots = _slots(request)
    try:
        await asyncio.wait_for(slots.acquire(), timeout=settings.heavy_queue_s)
    except TimeoutError:
        raise ApiProblem(
            503, f"the server is computing {settings.max_heavy_requests} heavy request(s) already; try again shortly",
            title="Busy", type="/problems/busy", headers={"Retry-After": "2"},
        ) from None
    watcher = asyncio.create_task(_watch(request, budget))
    try:
        budget.check()  # the deadline counts the wait for a slot too
        return await run_in_threadpool(work, *args, **kwargs)
    except ClientGone:
        # Nobody will read it; said for the request log.
        raise ApiProblem(503, "the client hung up before the answer was ready; the work was stopped",
                         title="Client gone", type="/problems/client-gone") from None
    finally:
        watcher.cancel()
        slots.release()


async def _watch(request: Request, budget: Budget) -> None:
    while not budget.cancelled:
        if await request.is_disconnected():
            budget.cancelled = True
            return
        await asyncio.sleep(DISCONNECT_POLL_S)
