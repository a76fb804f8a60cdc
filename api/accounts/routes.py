"""`/v1/accounts/me`: the account behind the key (a quick way to check a key works)."""

from fastapi import APIRouter

from api.deps import Reader
from api.http import problems
from api.schemas import Me
from api.storage.store import aware

router = APIRouter(prefix="/v1/accounts", tags=["accounts"])


@router.get("/me", response_model=Me, operation_id="get_me", summary="Who am I?",
            responses=problems.responses(401))
async def me(principal: Reader) -> Me:
    account = principal.account
    return Me(
        name=account.name, kind=account.kind, display_name=account.display_name, location=account.location,
        contact_url=account.contact_url, created_at=aware(account.created_at), key_scope=principal.scope,
        default_site_id=account.default_site_id,
    )
