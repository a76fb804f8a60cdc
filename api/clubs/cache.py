"""Club pages and pictures, built once per club state and served from memory after.

A club's **data version** is a digest of what its page shows: the club's profile and default site,
and for each kind of public item of the club (count, sum of versions, largest id, latest change)
plus the same for the other accounts' public equipment its public rigs reference (and a ten-minute
clock, so that anything else shown is at most that stale). Any create, change or delete
moves one of those, so the version changes exactly when the page may. The ETag of a page or a
picture is a digest of that version, the path, the query and the Host links are built from.

* ``If-None-Match`` with the current ETag: 304, after only the version's few aggregate queries.
* A hit in this process's cache: the stored bytes, no computing.
* Otherwise the page is built under a heavy-request slot and the request budget
  (:mod:`api.http.budget`), counted against the rate limit for computing requests, and kept.

The cache holds at most :data:`MAX_ENTRIES` answers per process (least recently used dropped), so
memory stays flat however many views or distinct queries come in.
"""

from __future__ import annotations

import hashlib
import time
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass

from fastapi import Request
from sqlalchemy import Engine, func
from sqlmodel import Session, select
from starlette.concurrency import run_in_threadpool
from starlette.responses import Response

from api.http.budget import budget_for, run_heavy
from api.http.etags import none_match, not_modified
from api.http.ratelimit import client_address, rate_limits
from api.storage.models import (
    Account,
    AccountKind,
    CameraRow,
    ModifierRow,
    MountRow,
    RigRow,
    SiteRow,
    TelescopeRow,
    Visibility,
)

MAX_ENTRIES = 64
#: The version also moves every so often, so that a change it does not see (a feature that adds to
#: the page later) is shown within this many seconds.
STALE_AT_MOST_S = 600
TABLES = (TelescopeRow, ModifierRow, CameraRow, MountRow, RigRow)


@dataclass(frozen=True)
class Entry:
    body: bytes
    status: int
    media_type: str | None
    headers: tuple[tuple[str, str], ...]


def club_version(engine: Engine, name: str) -> str | None:
    """The club's data version, or None when there is no such club (the page says so, uncached)."""
    with Session(engine) as session:
        club = session.exec(select(Account).where(Account.name == name, Account.kind == AccountKind.club.value)).first()
        if club is None:
            return None
        parts: list[object] = [club.model_dump(), int(time.time() // STALE_AT_MOST_S)]
        if club.default_site_id is not None:  # the site whose conditions the comparison uses
            site = session.get(SiteRow, club.default_site_id)
            parts.append(None if site is None else (site.version, str(site.updated_at)))
        public = Visibility.public.value
        for table in TABLES:
            parts.append(session.exec(
                select(func.count(), func.sum(table.version), func.max(table.id), func.max(table.updated_at))
                .where(table.owner_id == club.id, table.visibility == public)
            ).one())
        for column in RigRow.__table__.foreign_keys:
            referenced = next((t for t in TABLES if t.__tablename__ == column.column.table.name), None)
            if referenced is None:
                continue
            parts.append(session.exec(
                select(func.count(), func.sum(referenced.version), func.max(referenced.updated_at))
                .select_from(RigRow).join(referenced, column.parent == referenced.id)
                .where(RigRow.owner_id == club.id, RigRow.visibility == public)
            ).one())
    return hashlib.sha256(repr(parts).encode()).hexdigest()


def _cache(request: Request) -> OrderedDict[str, Entry]:
    state = request.app.state
    cache = getattr(state, "club_page_cache", None)
    if cache is None:
        cache = state.club_page_cache = OrderedDict()
    return cache


def _tag(version: str, request: Request) -> str:
    query = sorted(request.query_params.multi_items())
    key = repr((version, request.url.path, query, request.headers.get("host"), request.headers.get("accept")))
    return f'"club-{hashlib.sha256(key.encode()).hexdigest()[:32]}"'


async def serve_cached(request: Request, name: str, build: Callable[[], Response]) -> Response:
    """The answer ``build()`` gives for this club page or picture, from the cache when the club is
    unchanged; ``build`` runs in the threadpool."""
    state = request.app.state
    version = await run_in_threadpool(club_version, state.engine, name[:100])
    if version is None:
        return await run_in_threadpool(build)  # no such club: the page says so
    tag = _tag(version, request)
    if none_match(request.headers.get("if-none-match"), tag):
        return not_modified(tag)
    cache = _cache(request)
    entry = cache.get(tag)
    if entry is None:
        await rate_limits(request).count_compute(None, client_address(request))
        response = await run_heavy(request, budget_for(request, False), build)
        headers = tuple((k, v) for k, v in response.headers.items() if k.lower() not in ("content-length", "content-type"))
        entry = Entry(response.body, response.status_code, response.media_type, headers)
        if response.status_code == 200:
            cache[tag] = entry
            while len(cache) > MAX_ENTRIES:
                cache.popitem(last=False)
    else:
        cache.move_to_end(tag)
    answer = Response(entry.body, status_code=entry.status, media_type=entry.media_type, headers=dict(entry.headers))
    if entry.status == 200:
        answer.headers["ETag"] = tag
    return answer
