"""RFC 9457 problem documents: every error the service returns is ``application/problem+json``.

A problem names the offending fields in ``errors`` with dotted paths into the request
(``rigs.0.telescope.aperture_mm``), so a client can put the message next to the right input.
"""

from __future__ import annotations

import logging
import re
from collections.abc import Iterable, Mapping, Sequence
from http import HTTPStatus
from typing import Any

from fastapi import FastAPI, Request
from fastapi.encoders import jsonable_encoder
from fastapi.exceptions import RequestValidationError
from pydantic import BaseModel, ConfigDict, Field, ValidationError
from sqlalchemy.exc import DataError, IntegrityError, OperationalError
from starlette.exceptions import HTTPException as StarletteHTTPException
from starlette.responses import JSONResponse

from calculators.errors import RigbenchError

log = logging.getLogger("rigbench.api")

MEDIA_TYPE = "application/problem+json"

#: Tags of the "inline object or {"id": N}" unions (see api.schemas); they are not part of a field's path.
UNION_TAGS = frozenset({"stored", "inline"})
#: Prefix of the tags of the train-element union, told apart by kind (calculators.train_elements).
ELEMENT_TAG_PREFIX = "kind="


class FieldError(BaseModel):
    field: str = Field(description="Dotted path of the offending input, e.g. rigs.0.telescope.aperture_mm.")
    message: str


class Problem(BaseModel):
    """An RFC 9457 problem document."""

    model_config = ConfigDict(extra="allow")

    type: str = Field(default="about:blank", description="URI reference naming the kind of problem.")
    title: str
    status: int
    detail: str | None = None
    instance: str | None = Field(default=None, description="The request path that failed.")
    errors: list[FieldError] = Field(default_factory=list)


class ApiProblem(Exception):
    """Raise anywhere in a request to answer with a problem document."""

    def __init__(
        self,
        status: int,
        detail: str,
        *,
        title: str | None = None,
        type: str | None = None,
        errors: Sequence[FieldError | Mapping[str, str]] = (),
        headers: Mapping[str, str] | None = None,
        **extra: Any,
    ):
        super().__init__(detail)
        self.status = status
        self.detail = detail
        self.title = title or HTTPStatus(status).phrase
        self.type = type or "about:blank"
        self.errors = [e if isinstance(e, FieldError) else FieldError(**e) for e in errors]
        self.headers = dict(headers or {})
        self.extra = extra


def field_path(loc: Iterable[Any]) -> str:
    """Dotted path of a pydantic error location, without the 'body' prefix and union tags."""
    parts = [str(p) for p in loc]
    if parts and parts[0] in {"body", "query", "path", "header"}:
        kind, parts = parts[0], parts[1:]
        if kind != "body" and not parts:
            parts = [kind]
    parts = [p for p in parts if p not in UNION_TAGS and not p.startswith(ELEMENT_TAG_PREFIX)]
    return ".".join(parts) or "(body)"


def _message(error: Mapping[str, Any]) -> str:
    message = str(error.get("msg", "invalid"))
    # pydantic prefixes messages raised by validators; the field path already says where.
    return re.sub(r"^(Value|Assertion) error, ", "", message)


def field_errors(errors: Iterable[Mapping[str, Any]]) -> list[FieldError]:
    return [FieldError(field=field_path(e.get("loc", ())), message=_message(e)) for e in errors]


def validation_problem(errors: Iterable[Mapping[str, Any]], detail: str | None = None) -> ApiProblem:
    found = field_errors(errors)
    summary = "; ".join(f"{e.field}: {e.message}" for e in found[:5])
    return ApiProblem(
        422,
        detail or f"the request has {len(found)} invalid field(s): {summary}",
        title="Invalid input",
        type="/problems/invalid-input",
        errors=found,
    )


def from_validation_error(error: ValidationError, prefix: Sequence[Any] = ()) -> ApiProblem:
    """A pydantic error raised by our own code (not by FastAPI's body parsing) as a 422 problem."""
    raw = error.errors(include_url=False, include_context=False, include_input=False)
    return validation_problem([{**e, "loc": (*prefix, *e["loc"])} for e in raw])


def _slug(title: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", title.lower()).strip("-")


def render(request: Request, problem: ApiProblem) -> JSONResponse:
    body = Problem(
        type=problem.type,
        title=problem.title,
        status=problem.status,
        detail=problem.detail,
        instance=request.url.path,
        errors=problem.errors,
        **problem.extra,
    )
    return JSONResponse(
        jsonable_encoder(body, exclude_none=True),
        status_code=problem.status,
        media_type=MEDIA_TYPE,
        headers=problem.headers,
    )


async def _on_api_problem(request: Request, exc: ApiProblem) -> JSONResponse:
    return render(request, exc)


async def _on_request_validation(request: Request, exc: RequestValidationError) -> JSONResponse:
    errors = list(exc.errors())
    if any(e.get("type") == "json_invalid" for e in errors):
        where = next(e for e in errors if e.get("type") == "json_invalid")
        position = where.get("loc", ("body", "?"))[-1]
        detail = f"the body is not valid JSON (error near character {position})"
        ctx = where.get("ctx") or {}
        if ctx.get("error"):
            detail += f": {ctx['error']}"
        return render(
            request,
            ApiProblem(400, detail, title="Malformed JSON", type="/problems/malformed-json",
                       errors=[FieldError(field="(body)", message="not valid JSON")]),
        )
    content_type = request.headers.get("content-type", "").split(";")[0].strip().lower()
    json_like = content_type == "application/json" or content_type.endswith("+json")
    if not json_like and any(tuple(e.get("loc", ())) == ("body",) for e in errors):
        return render(
            request,
            ApiProblem(415, f"send the body as JSON with 'Content-Type: application/json' "
                       f"(got {content_type or 'no content type'!r})",
                       errors=[FieldError(field="(body)", message="expected a JSON body")]),
        )
    return render(request, validation_problem(errors))


# FastAPI's words when the body is not even readable as JSON text (bad UTF-8, nesting past the
# parser's recursion limit): said here as a malformed-JSON problem like any other unparsable body.
UNREADABLE_BODY = "There was an error parsing the body"


async def _on_http_exception(request: Request, exc: StarletteHTTPException) -> JSONResponse:
    if exc.status_code == 400 and exc.detail == UNREADABLE_BODY:
        return render(request, ApiProblem(
            400, "the body cannot be read as JSON: it is not valid UTF-8, or it nests arrays and objects "
            "too deeply", title="Malformed JSON", type="/problems/malformed-json",
            errors=[FieldError(field="(body)", message="not valid JSON")]))
    detail = exc.detail if isinstance(exc.detail, str) else HTTPStatus(exc.status_code).phrase
    return render(request, ApiProblem(exc.status_code, detail, headers=getattr(exc, "headers", None)))


async def _on_rigbench_error(request: Request, exc: RigbenchError) -> JSONResponse:
    # InvalidParams (plugins.runner) carries pydantic's error list with full locations.
    raw = getattr(exc, "errors", None)
    errors = field_errors(raw) if isinstance(raw, list) else []
    title = getattr(exc, "title", "Bad request")
    return render(
        request,
        ApiProblem(getattr(exc, "status", 400), str(exc), title=title, type=f"/problems/{_slug(title)}",
                   errors=errors),
    )


async def _on_database_unavailable(request: Request, exc: Exception) -> JSONResponse:
    # The database is down, unreachable or locked past the busy timeout: worth retrying later.
    log.error("database unavailable on %s %s: %s", request.method, request.url.path, type(exc).__name__)
    return render(
        request,
        ApiProblem(503, "the database is unavailable; try again shortly", headers={"Retry-After": "5"}),
    )


async def _on_integrity_error(request: Request, exc: Exception) -> JSONResponse:
    # A constraint refused a write that raced another one (e.g. a rig created against equipment
    # that was being deleted). Nothing was written; the client can read again and retry.
    log.warning("integrity error on %s %s: %s", request.method, request.url.path, type(exc).__name__)
    return render(request, ApiProblem(409, "the change conflicts with another change made at the same time; "
                                           "read the items again and retry"))


async def _on_data_error(request: Request, exc: Exception) -> JSONResponse:
    # The database refused a value our schemas let through (a safety net: the schemas should catch
    # it first, naming the field). Nothing was written.
    log.warning("data error on %s %s: %s", request.method, request.url.path, type(exc).__name__)
    return render(request, ApiProblem(422, "a value in the request cannot be stored by the database",
                                      title="Invalid input", type="/problems/invalid-input"))


async def _on_unexpected(request: Request, exc: Exception) -> JSONResponse:
    # Logged with its traceback for the operator; the client gets no internals.
    log.exception("unhandled error on %s %s", request.method, request.url.path)
    return render(request, ApiProblem(500, "an unexpected error occurred; it has been logged"))


def install(app: FastAPI) -> None:
    app.add_exception_handler(ApiProblem, _on_api_problem)
    app.add_exception_handler(RequestValidationError, _on_request_validation)
    app.add_exception_handler(StarletteHTTPException, _on_http_exception)
    app.add_exception_handler(RigbenchError, _on_rigbench_error)
    app.add_exception_handler(OperationalError, _on_database_unavailable)
    app.add_exception_handler(IntegrityError, _on_integrity_error)
    app.add_exception_handler(DataError, _on_data_error)
    app.add_exception_handler(Exception, _on_unexpected)


def responses(*statuses: int) -> dict[int | str, dict[str, Any]]:
    """OpenAPI ``responses=`` entries declaring problem documents for these statuses."""
    # No "model": FastAPI would also list application/json. The Problem schema is added to the
    # document's components by api.app.custom_openapi.
    return {
        status: {
            "description": HTTPStatus(status).phrase,
            "content": {MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}},
        }
        for status in statuses
    }
