"""Dependencies shared by the routes, as ``Annotated`` aliases (``SessionDep``, ``Caller``, ``Writer``…)."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Annotated

from fastapi import Depends, Path, Request
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from sqlalchemy import Engine
from sqlmodel import Session
from starlette.concurrency import run_in_threadpool

from api.accounts.keys import Principal, authenticate
from api.http.problems import ApiProblem
from api.http.ratelimit import client_address, rate_limits
from api.schemas import MAX_ID
from api.settings import Settings
from plugins.registry import Registry

bearer = HTTPBearer(
    auto_error=False,
    description="An API key made with `rigbench accounts create`: `Authorization: Bearer rb_…`.",
)


# Trivial dependencies are `async def` on purpose: FastAPI runs a plain `def` dependency in the
# threadpool, a hop that costs more than the comparison itself for a few rigs.
async def get_settings(request: Request) -> Settings:
    return request.app.state.settings


async def get_registry(request: Request) -> Registry:
    return request.app.state.registry


async def get_engine(request: Request) -> Engine:
    return request.app.state.engine


def get_session(engine: Annotated[Engine, Depends(get_engine)]) -> Iterator[Session]:
    with Session(engine) as session:
        yield session


def _authenticate(engine: Engine, key: str) -> Principal | None:
    with Session(engine) as session:
        return authenticate(session, key)


async def optional_caller(
    request: Request,
    credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(bearer)],
) -> Principal | None:
    """The caller's account, or None without a key. A key that is given but unknown is a 401.

    Async, and the database is touched only when a key is given, so anonymous comparisons never
    wait for the threadpool or the database.
    """
    if credentials is None:
        if request.headers.get("authorization"):
            # Another scheme (Basic…) or an empty Bearer: answering as if anonymous would hide the
            # caller's own items without a word.
            raise ApiProblem(401, "send the key as 'Authorization: Bearer <key>'",
                             headers={"WWW-Authenticate": 'Bearer error="invalid_request"'})
        return None
    principal = await run_in_threadpool(_authenticate, request.app.state.engine, credentials.credentials)
    if principal is None:
        # Counted, never held against a valid key: many callers may share one address.
        await rate_limits(request).count_failed_auth(client_address(request))
        raise ApiProblem(
            401, "the API key is unknown or revoked", headers={"WWW-Authenticate": 'Bearer error="invalid_token"'}
        )
    request.state.account = principal.account.name  # for the request log (a handle, not a secret)
    return principal


async def require_writer(
    request: Request, caller: Annotated[Principal | None, Depends(optional_caller)]
) -> Principal:
    if caller is None:
        raise ApiProblem(
            401, "this request changes data: send 'Authorization: Bearer <key>'",
            headers={"WWW-Authenticate": "Bearer"},
        )
    if not caller.can_write:
        raise ApiProblem(403, "this key is read-only; use a read-write key to change data")
    await rate_limits(request).count_write(caller.key_id, client_address(request))
    return caller


async def require_reader(caller: Annotated[Principal | None, Depends(optional_caller)]) -> Principal:
    if caller is None:
        raise ApiProblem(401, "send 'Authorization: Bearer <key>'", headers={"WWW-Authenticate": "Bearer"})
    return caller


SettingsDep = Annotated[Settings, Depends(get_settings)]
RegistryDep = Annotated[Registry, Depends(get_registry)]
EngineDep = Annotated[Engine, Depends(get_engine)]
SessionDep = Annotated[Session, Depends(get_session)]
Caller = Annotated[Principal | None, Depends(optional_caller)]
Reader = Annotated[Principal, Depends(require_reader)]
Writer = Annotated[Principal, Depends(require_writer)]
ItemId = Annotated[int, Path(ge=1, le=MAX_ID, description="Item id.")]
