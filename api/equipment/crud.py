"""One generic create/read/list/replace/patch/delete router, built per stored resource.

(No ``from __future__ import annotations`` here: FastAPI reads the annotations of the route
functions, which name models that exist only in this builder's scope.)
"""

from typing import Annotated, Any

from fastapi import APIRouter, Query, Request, Response
from pydantic import ValidationError
from sqlalchemy.exc import IntegrityError

from api.deps import Caller, ItemId, SessionDep, SettingsDep, Writer
from api.equipment.readable import json_response
from api.equipment.rules import Resource
from api.http import problems
from api.http.etags import IfMatch, etag, none_match, not_modified, require_match
from api.http.problems import ApiProblem
from api.schemas import HANDLE_PATTERN, MAX_ID
from api.storage.models import Visibility
from api.storage.store import (
    begin_write,
    delete_if_version,
    fetch_owned,
    fetch_readable,
    insert,
    list_items,
    update_if_version,
)

# Without If-Match an update re-reads and retries when another one got in first; this bounds that.
MAX_ATTEMPTS = 20


def crud_router(resource: Resource) -> APIRouter:
    router = APIRouter(prefix=f"/v1/{resource.path}", tags=resource.tags)
    Create, Update, Public, Page = resource.create, resource.update, resource.public, resource.list
    label, table = resource.label, resource.table

    def present_one(session, row, owner) -> Any:
        [public] = resource.present(session, [(row, owner)])
        return public

    def change(session, principal, item_id: int, if_match: str | None, new_body) -> tuple[Any, str]:
        for _ in range(MAX_ATTEMPTS):
            begin_write(session)  # the rules below are checked and the change made in one transaction
            row, owner = fetch_owned(session, table, item_id, principal, label)
            require_match(if_match, row.version, f"{label} {item_id}")
            values = resource.prepare(session, principal, new_body(row))
            resource.before_change(session, principal, row, values)
            if update_if_version(session, table, item_id, row.version, values, commit=False, actor=principal, before=row):
                # Read our own write before committing: the answer shows the version this update
                # made, even when another server's update follows at once. Detached, so the commit
                # does not expire it and a later attribute access cannot load a newer version.
                found = fetch_readable(session, table, item_id, principal, label)
                session.expunge(found[0])
                session.commit()
                return found
            session.commit()
            if if_match is not None:
                # Matched when read, changed by someone else before our write.
                require_match(if_match, row.version + 1, f"{label} {item_id}")
        raise ApiProblem(409, f"{label} {item_id} is being changed by others too often; try again")

    write_errors = problems.responses(400, 401, 403, 404, 409, 412, 413, 415, 422)
    etag_header = {"ETag": {"description": 'The item\'s version as a strong entity tag, e.g. "3".',
                            "schema": {"type": "string"}}}
    with_etag = {200: {"description": f"The {label}.", "headers": etag_header}}

    @router.post(
        "", status_code=201, response_model=Public, operation_id=f"create_{label}",
        summary=f"Store a new {label}",
        responses={
            201: {"description": f"The stored {label}.", "headers": {
                **etag_header,
                "Location": {"description": f"URL of the new {label}.", "schema": {"type": "string"}},
            }},
            **problems.responses(400, 401, 403, 413, 415, 422),
        },
    )
    def create(body: Create, principal: Writer, session: SessionDep, request: Request):
        begin_write(session)
        values = resource.prepare(session, principal, body)
        row = insert(session, table, principal, values)
        headers = {"Location": str(request.url_for(f"get_{label}", item_id=row.id)), "ETag": etag(row.version)}
        return json_response(present_one(session, row, principal.account.name), 201, headers)

    @router.get(
        "", response_model=Page, operation_id=f"list_{resource.path}",
        summary=f"List the {label}s you can read", responses=problems.responses(401, 422),
    )
    def list_(
        session: SessionDep,
        caller: Caller,
        settings: SettingsDep,
        owner: Annotated[str | None, Query(pattern=HANDLE_PATTERN, description="Only this account's.")] = None,
        visibility: Annotated[Visibility | None, Query(description="Only public or only private ones.")] = None,
        limit: Annotated[int, Query(ge=1, le=10_000, description="Page size (at most the server's max_page_size).")] = 50,
        offset: Annotated[int, Query(ge=0, le=MAX_ID)] = 0,
    ):
        if limit > settings.max_page_size:
            raise ApiProblem(
                422, f"limit: at most {settings.max_page_size} per page", title="Invalid input",
                type="/problems/invalid-input",
                errors=[{"field": "limit", "message": f"must be at most {settings.max_page_size}"}],
            )
        rows, total = list_items(
            session, table, caller, owner=owner, visibility=visibility, limit=limit, offset=offset
        )
        return json_response(Page.model_construct(
            items=resource.present(session, rows), total=total, limit=limit, offset=offset))

    @router.get(
        "/{item_id}", response_model=Public, name=f"get_{label}", operation_id=f"get_{label}",
        summary=f"Read one {label}", description="Send If-None-Match with the ETag you hold to get a "
        "304 without a body when the item has not changed.",
        responses={**with_etag, 304: {"description": "Not Modified: your copy (If-None-Match) is current."},
                   **problems.responses(401, 404, 422)},
    )
    def get(item_id: ItemId, session: SessionDep, caller: Caller, request: Request):
        row, owner = fetch_readable(session, table, item_id, caller, label)
        tag = etag(row.version)
        if none_match(request.headers.get("if-none-match"), tag) and resource.parts_unchanged(session, row):
            return not_modified(tag)  # the caller's copy is current: nothing to build or send
        return json_response(present_one(session, row, owner), headers={"ETag": tag})

    @router.put(
        "/{item_id}", response_model=Public, operation_id=f"replace_{label}",
        summary=f"Replace a {label} you own", responses={**with_etag, **write_errors},
    )
    def replace(
        item_id: ItemId, body: Create, principal: Writer, session: SessionDep,
        if_match: IfMatch = None,
    ):
        row, owner = change(session, principal, item_id, if_match, lambda _row: body)
        return json_response(present_one(session, row, owner), headers={"ETag": etag(row.version)})

    @router.patch(
        "/{item_id}", response_model=Public, operation_id=f"patch_{label}",
        summary=f"Change some fields of a {label} you own", responses={**with_etag, **write_errors},
        description="Fields you send replace the stored ones; null resets a field to its default. "
        "Send If-Match with the ETag you read to be sure nobody changed the item in between.",
    )
    def patch(
        item_id: ItemId, body: Update, principal: Writer, session: SessionDep,
        if_match: IfMatch = None,
    ):
        changes = body.model_dump(mode="json", exclude_unset=True)

        def merged(row):
            current = {**row.spec, "visibility": row.visibility}
            for key, value in changes.items():
                if value is None:
                    current.pop(key, None)
                else:
                    current[key] = value
            try:
                return Create.model_validate(current)
            except ValidationError as exc:
                raise problems.from_validation_error(exc) from None

        row, owner = change(session, principal, item_id, if_match, merged)
        return json_response(present_one(session, row, owner), headers={"ETag": etag(row.version)})

    @router.delete(
        "/{item_id}", status_code=204, operation_id=f"delete_{label}", summary=f"Delete a {label} you own",
        responses=problems.responses(401, 403, 404, 409, 412, 422),
    )
    def delete(item_id: ItemId, principal: Writer, session: SessionDep, if_match: IfMatch = None) -> Response:
        begin_write(session)
        row, _owner = fetch_owned(session, table, item_id, principal, label)
        require_match(if_match, row.version, f"{label} {item_id}")
        resource.before_delete(session, principal, row)
        # With a version to hold on to, delete only that version; `*` or no If-Match: any version.
        expected = row.version if if_match is not None and if_match.strip() != "*" else None
        try:
            deleted = delete_if_version(session, table, item_id, expected, actor=principal, before=row)
        except IntegrityError:
            # A rig started using it between our check and the delete: the foreign key said no.
            session.rollback()
            resource.before_delete(session, principal, row)
            raise ApiProblem(409, f"{label} {item_id} is still referenced; try again") from None
        if not deleted and expected is not None:
            raise ApiProblem(412, f"{label} {item_id} changed after version {expected}; fetch it again",
                             title="Precondition Failed")
        return Response(status_code=204)

    return router
