"""`POST /v1/imports` (all or nothing) and `GET /v1/exports` (JSON, CSV per kind, or a ZIP of CSVs)."""

import json
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Query, Request
from pydantic import BaseModel, Field
from starlette.responses import Response

from api.deps import Reader, SessionDep, Writer
from api.http import problems
from api.http.problems import ApiProblem, FieldError
from api.schemas import HANDLE_PATTERN
from api.transfer import exports, imports
from api.transfer import rows as csv_rows

router = APIRouter(tags=["import and export"])

Kind = Annotated[
    Literal["telescopes", "cameras", "modifiers", "mounts"] | None,
    Query(description="The kind of every row; without it, each row names its own in `equipment` "
          "(or `kind`, when the file has no `equipment` column: a modifier's own kind then goes in `modifier_kind`)."),
]
Owner = Annotated[str | None, Query(pattern=HANDLE_PATTERN, description="Whose items: default yourself; a club "
                                    "you are an officer of.")]
SINGULAR = {"telescope": "telescopes", "camera": "cameras", "modifier": "modifiers", "mount": "mounts"}


class ImportResult(BaseModel):
    owner: str
    stored: dict[str, list[int]] = Field(description="Ids of the new items, by kind, in the order of the rows.")
    total: int


class ExportItem(BaseModel):
    model_config = {"extra": "allow"}

    equipment: str = Field(description="telescopes, cameras, modifiers or mounts; the rest is the item's spec.")
    visibility: str


class Export(BaseModel):
    owner: str
    items: list[ExportItem]


IMPORT_BODY = {
    "requestBody": {"required": True, "content": {
        "application/json": {"schema": {"oneOf": [
            {"type": "array", "items": {"type": "object"}, "maxItems": imports.MAX_ROWS},
            {"type": "object", "properties": {"items": {"type": "array", "items": {"type": "object"},
                                                        "maxItems": imports.MAX_ROWS}}, "required": ["items"]},
        ]}},
        "text/csv": {"schema": {"type": "string"}},
    }},
}


def _row_kind(item: dict[str, Any], kind: str | None, column: str | None) -> str:
    if kind is not None:
        item.pop("equipment", None)
        return kind
    named = str(item.pop(column, "") if column else "").strip()
    if column == "kind" and "modifier_kind" in item:
        item["kind"] = item.pop("modifier_kind")
    return SINGULAR.get(named, named)


def _json_rows(raw: bytes, kind: str | None) -> list[tuple[str, str, dict]]:
    try:
        data = json.loads(raw)
    except (UnicodeDecodeError, ValueError):
        raise ApiProblem(400, "the body is not valid JSON", title="Malformed JSON", type="/problems/malformed-json") from None
    where = "items"
    if isinstance(data, dict) and isinstance(data.get("items"), list):
        data = data["items"]
    elif not isinstance(data, list):
        raise imports.invalid([FieldError(field="items", message="send a JSON list of items, or {\"items\": [...]}")])
    else:
        where = "body"
    imports.check_count(len(data), where if where == "items" else "items")
    found = []
    for index, item in enumerate(data):
        if not isinstance(item, dict):
            raise imports.invalid([FieldError(field=f"items.{index}", message="each item is a JSON object")])
        item = dict(item)
        column = None if kind else ("equipment" if "equipment" in item else "kind")
        found.append((f"items.{index}", _row_kind(item, kind, column), item))
    return found


def _csv_rows(raw: bytes, kind: str | None) -> list[tuple[str, str, dict]]:
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise imports.invalid([FieldError(field="body", message="the CSV file must be UTF-8")]) from None
    header, rows = csv_rows.from_csv(text)
    imports.check_count(len(rows), "rows")
    column = None if kind else ("equipment" if "equipment" in header else "kind" if "kind" in header else None)
    if kind is None and column is None:
        raise imports.invalid([FieldError(field="kind", message="give ?kind=telescopes (or cameras, modifiers, mounts) "
                                          "or an `equipment` column")])
    # Row numbers as a spreadsheet shows them: the header is row 1.
    return [(f"rows.{number}", _row_kind(item, kind, column), item) for number, item in rows]


@router.post(
    "/v1/imports", status_code=201, response_model=ImportResult, operation_id="import_equipment",
    summary="Store many items at once, all or nothing (JSON list or CSV)",
    description=f"At most {imports.MAX_ROWS} rows. A row that fails is named by its place "
    "(`items.3.aperture_mm` in JSON, `rows.7.aperture_mm` in CSV, where 7 is the spreadsheet's row "
    "number) and nothing is stored. CSV: one column per field, nested ones dotted (`price.amount`), "
    "empty cells take the default; a leading apostrophe before `=`, `+`, `-` or `@` is taken off "
    "(exports add it so spreadsheets do not run such cells as formulas).",
    openapi_extra=IMPORT_BODY,
    responses={201: {"description": "What was stored."}, **problems.responses(400, 401, 403, 413, 415, 422)},
)
async def import_equipment(request: Request, principal: Writer, session: SessionDep, kind: Kind = None,
                           owner: Owner = None) -> ImportResult:
    media = (request.headers.get("content-type") or "").split(";")[0].strip().lower()
    raw = await request.body()
    if media == "application/json":
        rows = _json_rows(raw, kind)
    elif media in ("text/csv", "application/csv"):
        rows = _csv_rows(raw, kind)
    else:
        raise ApiProblem(415, "send application/json or text/csv", title="Unsupported Media Type")
    from starlette.concurrency import run_in_threadpool

    def work() -> ImportResult:
        account = imports.owner_account(session, principal, owner)
        stored = imports.store_all(session, principal, account, rows)
        return ImportResult(owner=account.name, stored=stored, total=sum(map(len, stored.values())))

    return await run_in_threadpool(work)


@router.get(
    "/v1/exports", response_model=Export, operation_id="export_equipment",
    summary="Export an account's equipment that you may read: JSON, CSV of one kind, or a ZIP of CSVs",
    description="JSON imports back as it is (`POST /v1/imports`); so does each CSV, with `?kind=`. Text "
    "cells a spreadsheet would run as a formula are written with a leading apostrophe (OWASP, CSV "
    "Injection). Retired items are left out.",
    responses={200: {"description": "The export.", "content": {
        "text/csv": {"schema": {"type": "string"}}, "application/zip": {"schema": {"type": "string", "format": "binary"}}}},
        **problems.responses(401, 404, 422)},
)
def export_equipment(
    session: SessionDep, principal: Reader, owner: Owner = None,
    format: Annotated[Literal["json", "csv", "zip"], Query(description="csv needs `kind`.")] = "json",
    kind: Kind = None,
):
    account = exports.owner_named(session, principal, owner)
    if format == "zip":
        return Response(exports.as_zip(session, principal, account), media_type="application/zip",
                        headers={"Content-Disposition": f'attachment; filename="{account.name}-equipment.zip"'})
    if format == "csv":
        if kind is None:
            raise imports.invalid([FieldError(field="kind", message="a CSV holds one kind: give ?kind=telescopes, ...")])
        text = csv_rows.to_csv(kind, exports.items(session, principal, account, kind))
        return Response(text, media_type="text/csv; charset=utf-8",
                        headers={"Content-Disposition": f'attachment; filename="{account.name}-{kind}.csv"'})
    return exports.as_json(session, principal, account)
