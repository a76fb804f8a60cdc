"""Stored items that no longer validate are still read, listed and repaired, never a 500.

A spec stored under an older schema (limits tightened since, an old migration, a manual edit, a
bug) may fail today's models. Such an item is presented with ``invalid: true``, the values as
stored and ``invalid_reasons`` naming each field to fix; a PATCH or PUT that fixes them repairs it.
Comparisons skip such a rig with its reasons (api.comparisons.resolve).
"""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ValidationError
from starlette.responses import Response

from api.http.problems import FieldError, field_errors


def reasons(error: ValidationError, prefix: tuple[Any, ...] = ()) -> list[FieldError]:
    raw = error.errors(include_url=False, include_context=False, include_input=False)
    return field_errors([{**e, "loc": (*prefix, *e["loc"])} for e in raw])


def present(public: type[BaseModel], data: dict[str, Any], extra: list[FieldError] = ()) -> BaseModel:
    """``public`` validated from ``data``; when that fails (or ``extra`` reasons are given), the
    stored values as they are, marked ``invalid`` with the reasons."""
    found: list[FieldError] = list(extra)
    if not found:
        try:
            return public.model_validate(data)
        except ValidationError as exc:
            found = reasons(exc)
    known = {k: v for k, v in data.items() if k in public.model_fields}
    return public.model_construct(**known, invalid=True, invalid_reasons=found)


def json_response(model: BaseModel, status_code: int = 200, headers: dict[str, str] | None = None) -> Response:
    """The model as JSON, serialised as it is: an item marked invalid holds values its schema
    would refuse, so it must not be validated once more on the way out."""
    return Response(model.model_dump_json(warnings=False), status_code=status_code,
                    media_type="application/json", headers=headers)
