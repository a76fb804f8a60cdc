"""`POST /v1/{kind}/{id}/retire` and `GET /v1/{kind}/{id}/history`, for every kind of stored item.

Retiring is how an owner (or an officer of the owning club) takes an item out of use without deleting
it: it leaves every list and cannot go into new rigs or loans; the rigs that used it keep a copy of its
spec as it was (api.equipment.copies). A retired item keeps its history and can still be read by id.
"""

from typing import Annotated

from fastapi import APIRouter, Query, Response
from sqlalchemy import update

from api.deps import Caller, ItemId, SessionDep, SettingsDep, Writer
from api.equipment import copies
from api.equipment.rules import CAMERAS, MODIFIERS, MOUNTS, RIGS, TELESCOPES, TRAIN_ELEMENTS, Resource
from api.http import problems
from api.http.etags import etag
from api.http.problems import ApiProblem
from api.schemas import MAX_ID
from api.storage import history
from api.storage.history_schemas import HistoryList, history_page
from api.storage.models import utcnow
from api.storage.store import begin_write, fetch_owned, fetch_readable, lock_rows

RESOURCES = (TELESCOPES, CAMERAS, TRAIN_ELEMENTS, MODIFIERS, MOUNTS, RIGS)


def retire_router(resource: Resource) -> APIRouter:
    router = APIRouter(prefix=f"/v1/{resource.path}", tags=resource.tags)
    Public, label, table = resource.public, resource.label, resource.table

    @router.post(
        "/{item_id}/retire", response_model=Public, operation_id=f"retire_{label.replace(' ', '_')}",
        summary=f"Retire a {label} you own (rigs that use it keep a copy)",
        description="It leaves every list and cannot be used in new rigs or lent. Rigs of any account "
        "that used it keep computing from a copy of its spec taken now, marked as using retired "
        "equipment. Retiring a retired item changes nothing.",
        responses={200: {"description": f"The retired {label}."}, **problems.responses(401, 403, 404, 409, 422)},
    )
    def retire(item_id: ItemId, principal: Writer, session: SessionDep, response: Response):
        begin_write(session)  # SQLite: the write lock from the first read on
        row, owner = fetch_owned(session, table, item_id, principal, label)
        # Locked FOR UPDATE before the rigs are read: a rig being stored with it waits for this
        # transaction and then finds it retired (api.equipment.rules.resolve_slots locks FOR SHARE).
        row = lock_rows(session, table, [item_id])[item_id]
        if row.retired_at is None:
            now, version = utcnow(), row.version
            result = session.execute(
                update(table).where(table.id == item_id, table.version == version)
                .values(retired_at=now, version=table.version + 1, updated_at=now)
            )
            if result.rowcount != 1:
                session.rollback()
                raise ApiProblem(409, f"{label} {item_id} changed while it was being retired; try again")
            copied = []
            if resource is not RIGS:
                rigs = copies.rigs_using(session, table, item_id, lock=True)
                copied = copies.copy_into(session, resource.path, row, rigs, copies.RETIRED, principal)
            history.record(session, kind=resource.path, item_id=item_id, owner_id=row.owner_id,
                           version=version + 1, action="retire", actor=principal.account,
                           changed={"retired_at": {"from": None, "to": now.isoformat()},
                                    **({"copied_into_rigs": copied} if copied else {})})
            session.commit()
        row, owner = fetch_readable(session, table, item_id, principal, label)
        response.headers["ETag"] = etag(row.version)
        [public] = resource.present(session, [(row, owner)])
        return public

    @router.get(
        "/{item_id}/history", response_model=HistoryList, operation_id=f"get_{label.replace(' ', '_')}_history",
        summary=f"Every change to a {label} you can read: who, when, which version, which fields",
        responses=problems.responses(401, 404, 422),
    )
    def item_history(
        item_id: ItemId, session: SessionDep, caller: Caller, settings: SettingsDep,
        limit: Annotated[int, Query(ge=1, le=10_000)] = 50, offset: Annotated[int, Query(ge=0, le=MAX_ID)] = 0,
    ) -> HistoryList:
        fetch_readable(session, table, item_id, caller, label)
        return history_page(session, resource.path, item_id, limit, offset, settings.max_page_size)

    return router


router = APIRouter()
for _resource in RESOURCES:
    router.include_router(retire_router(_resource))
