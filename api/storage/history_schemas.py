"""The history of one item as the API shows it (``GET …/{id}/history``)."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from pydantic import BaseModel, Field
from sqlmodel import Session

from api.http.problems import ApiProblem
from api.schemas import ListMeta
from api.storage import history
from api.storage.store import aware


class HistoryEntry(BaseModel):
    at: datetime
    actor: str = Field(description="Handle of the account that made the change.")
    action: str = Field(description="create, update, retire, copy, delete, lend, return, ...")
    version: int = Field(description="The item's version after the change.")
    changed: dict[str, Any] = Field(description='The changed fields: {"field": {"from": old, "to": new}}.')


class HistoryList(ListMeta):
    kind: str
    id: int
    items: list[HistoryEntry]


def history_page(session: Session, kind: str, item_id: int, limit: int, offset: int, max_page_size: int) -> HistoryList:
    if limit > max_page_size:
        raise ApiProblem(422, f"limit: at most {max_page_size} per page", title="Invalid input",
                         type="/problems/invalid-input",
                         errors=[{"field": "limit", "message": f"must be at most {max_page_size}"}])
    rows, total = history.for_item(session, kind, item_id, limit, offset)
    return HistoryList(
        kind=kind, id=item_id, total=total, limit=limit, offset=offset,
        items=[HistoryEntry(at=aware(r.at), actor=r.actor, action=r.action, version=r.version, changed=r.changed)
               for r in rows],
    )
