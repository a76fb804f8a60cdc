"""`/v1/accounts/me/default-site`: the public site an account's club page and comparisons use."""

from fastapi import APIRouter, Response
from pydantic import BaseModel, Field
from sqlalchemy import exists, update
from sqlmodel import select

from api.deps import Reader, SessionDep, Writer
from api.http import problems
from api.schemas import SITE, Ref
from api.sites.conditions import invalid
from api.sites.resource import SITES
from api.storage.models import Account, SiteRow, Visibility

router = APIRouter(prefix="/v1/accounts/me/default-site", tags=["sites"])


class DefaultSite(BaseModel):
    site: SITE.public | None = Field(description="The default site, or null when none is set (or it is no longer public).")


def _present(session, account_id: int) -> DefaultSite:
    account = session.get(Account, account_id, populate_existing=True)
    if account.default_site_id is None:
        return DefaultSite(site=None)
    found = session.exec(select(SiteRow, Account.name).join(Account, SiteRow.owner_id == Account.id).where(
        SiteRow.id == account.default_site_id, SiteRow.visibility == Visibility.public.value)).first()
    return DefaultSite(site=None if found is None else SITES.present(session, [found])[0])


@router.get("", response_model=DefaultSite, operation_id="get_default_site", summary="Your default site",
            responses=problems.responses(401))
def get_default_site(principal: Reader, session: SessionDep) -> DefaultSite:
    return _present(session, principal.account.id)


@router.put("", response_model=DefaultSite, operation_id="set_default_site", summary="Set your default site",
            description="A public site anyone may read (yours or another's): your club page, club comparison "
            "and CSV views use its conditions unless a query overrides them.",
            responses=problems.responses(400, 401, 403, 413, 415, 422))
def set_default_site(body: Ref, principal: Writer, session: SessionDep) -> DefaultSite:
    # One statement: the site must be public at the moment the account points at it.
    public_site = exists().where(SiteRow.id == body.id, SiteRow.visibility == Visibility.public.value)
    result = session.execute(
        update(Account).where(Account.id == principal.account.id, public_site).values(default_site_id=body.id)
    )
    session.commit()
    if result.rowcount != 1:
        raise invalid("id", f"no public site with id {body.id}; a default site must be public")
    return _present(session, principal.account.id)


@router.delete("", status_code=204, operation_id="clear_default_site", summary="Clear your default site",
               responses=problems.responses(401, 403))
def clear_default_site(principal: Writer, session: SessionDep) -> Response:
    session.execute(update(Account).where(Account.id == principal.account.id).values(default_site_id=None))
    session.commit()
    return Response(status_code=204)
