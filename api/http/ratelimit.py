"""Rate limits on writes (per key and per client address), on computing requests (per key, and per
address for callers without a key, which is stricter) and on failed authentication (per address).

Counters live where ``RIGBENCH_RATE_LIMIT_STORAGE`` says, through the ``limits`` library: ``memory://``
keeps them in this process (right for one server process), ``redis://host:port`` in a Redis that every
server process shares (needed when several processes serve one database, or each process would allow
the whole rate). A refused request is a 429 problem with ``Retry-After`` in seconds.

Failed authentication is counted per client address: once an address has used up its allowance, its
next unknown keys get a 429 instead of a 401, but a valid key is always accepted (many people may
share one address behind a NAT; guessing a key is hopeless anyway, the limit only slows scanners). If the shared
store cannot be reached, requests are let through (and a warning is logged): the limits protect the
service, they must not take it down.
"""

from __future__ import annotations

import logging
import math
import time
from dataclasses import dataclass

from fastapi import Request
from limits import RateLimitItem, parse
from limits.aio.strategies import SlidingWindowCounterRateLimiter
from limits.storage import storage_from_string

from api.http.problems import ApiProblem
from api.settings import Settings

log = logging.getLogger("rigbench.api")


def parse_limit(text: str) -> RateLimitItem | None:
    """``"120/minute"`` as a limit; an empty string means no limit. ValueError names a bad one."""
    text = text.strip()
    if not text:
        return None
    try:
        return parse(text)
    except ValueError:
        raise ValueError(f"{text!r} is not a rate such as '120/minute' or '10/second'") from None


def async_storage_uri(uri: str) -> str:
    """The ``limits`` asyncio variant of a storage URI (``redis://…`` → ``async+redis://…``)."""
    return uri if uri.startswith("async+") else f"async+{uri}"


@dataclass
class RateLimits:
    """The service's limits and the store their counters live in (built lazily, on the serving loop)."""

    writes_per_key: RateLimitItem | None
    writes_per_address: RateLimitItem | None
    failed_auth_per_address: RateLimitItem | None
    storage_uri: str
    compute_per_key: RateLimitItem | None = None
    compute_anonymous: RateLimitItem | None = None
    _limiter: SlidingWindowCounterRateLimiter | None = None

    @classmethod
    def from_settings(cls, settings: Settings) -> RateLimits:
        return cls(
            writes_per_key=parse_limit(settings.rate_limit_writes_per_key),
            writes_per_address=parse_limit(settings.rate_limit_writes_per_address),
            failed_auth_per_address=parse_limit(settings.rate_limit_failed_auth),
            storage_uri=settings.rate_limit_storage,
            compute_per_key=parse_limit(settings.rate_limit_compute_per_key),
            compute_anonymous=parse_limit(settings.rate_limit_compute_anonymous),
        )

    def limiter(self) -> SlidingWindowCounterRateLimiter:
        if self._limiter is None:
            uri = async_storage_uri(self.storage_uri)
            # The asyncio Redis client of the `redis` package (rigbench's `redis` extra).
            options = {"implementation": "redispy"} if "redis" in uri.split("://")[0] else {}
            self._limiter = SlidingWindowCounterRateLimiter(storage_from_string(uri, **options))
        return self._limiter

    async def _hit(self, item: RateLimitItem | None, *identifiers: str) -> float | None:
        """Count one request; the seconds to wait when the limit is used up, else None."""
        if item is None:
            return None
        limiter = self.limiter()
        try:
            if await limiter.hit(item, *identifiers):
                return None
            stats = await limiter.get_window_stats(item, *identifiers)
        except Exception as exc:  # the shared store is down: let the request through
            log.warning("rate limit store unavailable (%s); request not limited", type(exc).__name__)
            return None
        return max(1.0, stats.reset_time - time.time())

    async def _used_up(self, item: RateLimitItem | None, *identifiers: str) -> float | None:
        if item is None:
            return None
        limiter = self.limiter()
        try:
            if await limiter.test(item, *identifiers):
                return None
            stats = await limiter.get_window_stats(item, *identifiers)
        except Exception as exc:
            log.warning("rate limit store unavailable (%s); request not limited", type(exc).__name__)
            return None
        return max(1.0, stats.reset_time - time.time())

    async def count_failed_auth(self, address: str) -> None:
        """Count one unknown or revoked key from this address; 429 once its allowance is used up."""
        wait = await self._hit(self.failed_auth_per_address, "failed-auth", address)
        if wait is not None:
            raise too_many(wait, "too many requests with an unknown or revoked key from this address")

    async def count_compute(self, key_id: int | None, address: str) -> None:
        """Count one computing request: per key with a key, per address without (stricter)."""
        if key_id is not None:
            wait, which = await self._hit(self.compute_per_key, "compute-key", str(key_id)), "this key"
        else:
            wait, which = await self._hit(self.compute_anonymous, "compute-address", address), "this address"
        if wait is not None:
            raise too_many(wait, f"too many computing requests from {which}"
                           + ("" if key_id is not None else " without a key"))

    async def count_write(self, key_id: int | None, address: str) -> None:
        """Count one write for the key and for the address; 429 when either is used up."""
        waits = [
            await self._hit(self.writes_per_key, "writes-key", str(key_id)) if key_id is not None else None,
            await self._hit(self.writes_per_address, "writes-address", address),
        ]
        refused = [w for w in waits if w is not None]
        if refused:
            which = "this key" if waits[0] is not None else "this address"
            raise too_many(max(refused), f"too many changes from {which}")


def shared_between_processes(storage_uri: str) -> bool:
    """Whether counters in this store are seen by every server process (memory:// is per process)."""
    return not storage_uri.strip().lower().startswith(("memory://", "async+memory://"))


def too_many(wait_s: float, reason: str) -> ApiProblem:
    seconds = math.ceil(wait_s)
    return ApiProblem(
        429, f"{reason}; try again in {seconds} s", title="Too Many Requests", type="/problems/rate-limited",
        headers={"Retry-After": str(seconds)},
    )


def client_address(request: Request) -> str:
    """The client's address as api.http.client_address worked it out (trusted proxies applied)."""
    found = request.scope.get("state", {}).get("client_address")
    if found:
        return found
    return request.client.host if request.client else "unknown"


def rate_limits(request: Request) -> RateLimits:
    limits = getattr(request.app.state, "rate_limits", None)
    if limits is None:
        limits = request.app.state.rate_limits = RateLimits.from_settings(request.app.state.settings)
    return limits
