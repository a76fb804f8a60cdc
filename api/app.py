"""The application factory: ``create_app(settings)`` builds everything a running service needs.

Nothing is built at import time: the engine, the calculator registry and the settings live on
``app.state`` of the app the factory returns, so every test gets its own app and database.
"""

from __future__ import annotations

import logging
import secrets
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from typing import Any

from fastapi import FastAPI
from fastapi.middleware.cors import CORSMiddleware
from starlette.middleware.sessions import SessionMiddleware
from fastapi.openapi.utils import get_openapi
from fastapi_offline import FastAPIOffline
from starlette.concurrency import run_in_threadpool

from api import field_descriptions
from api import tuning
from api.accounts import routes as accounts
from api.clubs import page as club_page
from api.clubs import loan_routes, member_routes, members_page
from api.clubs import routes as clubs
from api.comparisons import routes as comparisons
from api.comparisons.fast_lane import ComparisonFastLane
from api.discovery import calculators
from api.discovery import plugins as plugins_routes
from api.equipment import cameras, mounts, retire, rigs, telescopes, train_elements
from api.evaluations import pages as evaluation_pages
from api.evaluations import routes as evaluations
from api.evaluations import saved_routes as saved_evaluations
from api.http import health, problems, request_log
from api.http.body_limit import BodySizeLimit
from api.http.edge import Edge
from api.http.health import _version
from api.http.ratelimit import RateLimits
from api.settings import Settings
from api.sites import default as default_site
from api.sites import resource as sites
from api.storage import db
from api.transfer import routes as transfer
from plugins.registry import load_registry

log = logging.getLogger("rigbench.api")

DESCRIPTION = """\
Store telescopes, cameras, focal reducers and correctors, mounts and rigs, and compare rigs with
pluggable calculators (light grasp, imaging speed, sampling, field of view, payload, cost).

Reading public items needs no key; writing needs `Authorization: Bearer <key>`. Every error is an
RFC 9457 `application/problem+json` document whose `errors` name the offending fields.

Heavy payloads, counterweights, piers and domes can hurt people: the figures here are estimates, so
follow the manufacturers' ratings, local codes and qualified professionals. Never point a telescope
near the Sun without a proper full-aperture solar filter.
"""

# Hot routes first: the router tries routes in this order.
ROUTERS = (
    health, comparisons, calculators, plugins_routes, accounts, telescopes, cameras, train_elements,
    mounts, rigs, sites, default_site, evaluations, saved_evaluations, evaluation_pages, clubs, club_page,
    # club operations (issue 13)
    retire, member_routes, loan_routes, transfer, members_page,
)


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or Settings()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        tuning.keep_freed_memory()  # numpy temporaries of big sweeps reuse freed blocks (api.tuning)
        if settings.is_sqlite:
            # One file, one process tree: bring the schema up to date on start (`rigbench serve`
            # has already done it before starting its workers, so they only check). On PostgreSQL
            # the operator runs `rigbench db upgrade` once, so several servers never race to migrate.
            db.upgrade_if_behind(app.state.engine)
        elif warning := await run_in_threadpool(db.schema_warning, app.state.engine):
            log.warning(warning)
        tuning.freeze_start_up_objects()  # full collections then skip what start-up built (api.tuning)
        yield
        app.state.engine.dispose()

    # The docs pages load Swagger UI 5 and ReDoc from the installed fastapi-offline package, never a
    # CDN, so /docs works with no internet (Swagger UI 5 renders OpenAPI 3.1; the older 4 cannot).
    app = FastAPIOffline(
        title="rigbench",
        version=_version(),
        description=DESCRIPTION,
        lifespan=lifespan,
        license_info={"name": "MIT", "identifier": "MIT"},
        swagger_ui_parameters={"validatorUrl": None},  # no call to an outside validator
        # One schema per model for requests and answers alike: separate "-Input"/"-Output" variants
        # share a title, so client generators clash on them and drop the rig answers.
        separate_input_output_schemas=False,
    )
    app.state.settings = settings
    app.state.engine = db.make_engine(settings.database_url)
    app.state.registry = load_registry(
        disabled=settings.disabled_plugins, time_budget_s=settings.plugin_time_budget_s
    )
    app.state.rate_limits = RateLimits.from_settings(settings)

    problems.install(app)
    for module in ROUTERS:
        app.include_router(module.router)
    app.include_router(train_elements.old_router)  # /v1/modifiers, deprecated: one release
    # Innermost: anonymous JSON comparisons skip FastAPI's request machinery (api.comparisons.fast_lane).
    app.add_middleware(ComparisonFastLane)
    app.add_middleware(BodySizeLimit, max_bytes=settings.max_body_bytes, timeout_s=settings.body_timeout_s)
    # The members' page sign-in (api.clubs.members_page): a signed, expiring, HTTP-only, same-site cookie.
    app.add_middleware(
        SessionMiddleware, secret_key=settings.session_secret or secrets.token_urlsafe(32),
        session_cookie="rigbench_session", max_age=settings.session_max_age_s, path="/clubs", same_site="lax",
        https_only=settings.session_cookie_secure,
    )
    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=settings.cors_origins,
            allow_methods=["GET", "HEAD", "POST", "PUT", "PATCH", "DELETE"],
            allow_headers=["Authorization", "Content-Type", "If-Match", "If-None-Match", "Accept"],
            expose_headers=["ETag", "Location"],
        )
    # Client address, link origin and HEAD, before anything reads them.
    app.add_middleware(Edge, trusted_proxies=settings.trusted_proxies, public_url=settings.public_url,
                       allowed_hosts=settings.allowed_hosts)
    # Outermost, so even a refused oversized body gets a request id and a log line.
    app.add_middleware(request_log.RequestLog, enabled=settings.request_log)
    if settings.request_log:
        request_log.configure()
    app.openapi = lambda: openapi_document(app)  # type: ignore[method-assign]
    return app


def openapi_document(app: FastAPI) -> dict[str, Any]:
    """FastAPI's document, with every error response declared as a Problem document."""
    if app.openapi_schema:
        return app.openapi_schema
    document = get_openapi(
        title=app.title, version=app.version, description=app.description, routes=app.routes,
        license_info=app.license_info, separate_input_output_schemas=app.separate_input_output_schemas,
    )
    schemas = document.setdefault("components", {}).setdefault("schemas", {})
    problem = problems.Problem.model_json_schema(ref_template="#/components/schemas/{model}")
    schemas.update(problem.pop("$defs", {}))
    schemas["Problem"] = problem
    for path in document.get("paths", {}).values():
        for operation in path.values():
            for status, response in operation.get("responses", {}).items():
                if status.isdigit() and int(status) >= 400:
                    response["content"] = {
                        problems.MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}
                    }
    declare_key_problems(document)
    field_descriptions.fill(document)
    # FastAPI's default validation-error shapes are replaced by Problem everywhere.
    for unused in ("HTTPValidationError", "ValidationError"):
        schemas.pop(unused, None)
    app.openapi_schema = document
    return document


def declare_key_problems(document: dict[str, Any]) -> None:
    """Operations that take a key may answer 429 (rate limits, api.http.ratelimit) and 503 (database down)."""
    retry_after = {"Retry-After": {"description": "Seconds to wait before trying again.", "required": True,
                                   "schema": {"type": "integer"}}}
    content = {problems.MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}}
    for path in document.get("paths", {}).values():
        for operation in path.values():
            if not operation.get("security"):
                continue
            responses = operation.setdefault("responses", {})
            responses.setdefault("429", {"description": "Too Many Requests", "headers": retry_after,
                                         "content": content})
            responses.setdefault("503", {"description": "Service Unavailable", "headers": retry_after,
                                         "content": content})
