"""The site of a request: inline or ``{"id": N}``, a club's default, and query overrides of its values."""

from __future__ import annotations

from collections.abc import Mapping

from pydantic import ValidationError
from sqlalchemy import Engine
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem, FieldError, from_validation_error
from api.schemas import Ref
from api.storage.models import Account, SiteRow, Visibility
from api.storage.store import readable_by
from calculators.site import PARAM_NAMES, Site


def invalid(field: str, message: str) -> ApiProblem:
    return ApiProblem(422, f"{field}: {message}", title="Invalid input", type="/problems/invalid-input",
                      errors=[FieldError(field=field, message=message)])


def stored_site(session: Session, principal: Principal | None, site_id: int, field: str = "site.id") -> Site:
    """A stored site the caller may read; 422 naming ``field`` otherwise."""
    row = session.exec(select(SiteRow).where(SiteRow.id == site_id, readable_by(SiteRow, principal))).first()
    if row is None:
        raise invalid(field, f"no site with id {site_id} that you can read")
    return Site.model_validate(row.spec)


def resolve_site(
    session: Session | None, principal: Principal | None, value: Site | Ref | None
) -> tuple[Site | None, int | None]:
    """The request's site and its stored id (None for an inline site or none)."""
    if value is None or isinstance(value, Site):
        return value, None
    return stored_site(session, principal, value.id), value.id


def read_site(engine: Engine, principal: Principal | None, value: Site | Ref | None) -> tuple[Site | None, int | None]:
    """:func:`resolve_site` in a session of its own (for async routes, run it in the threadpool)."""
    with Session(engine) as session:
        return resolve_site(session, principal, value)


def default_site(session: Session, account: Account) -> tuple[Site | None, int | None]:
    """An account's default site, if it is set and public (a club page shows only public items)."""
    if account.default_site_id is None:
        return None, None
    row = session.exec(select(SiteRow).where(
        SiteRow.id == account.default_site_id, SiteRow.visibility == Visibility.public.value
    )).first()
    if row is None:
        return None, None
    return Site.model_validate(row.spec), row.id


#: Query parameters that override a site's values (the site's fields, by name).
OVERRIDES = tuple(PARAM_NAMES)


def with_overrides(site: Site | None, query: Mapping[str, str], known: tuple[str, ...]) -> Site | None:
    """``site`` with the query's overrides applied; 422 for a query parameter that is neither one of
    ``known`` nor a site value, and for an override out of range.

    Without a site, overrides make an unnamed one ("query overrides")."""
    unknown = [k for k in query if k not in known and k not in OVERRIDES]
    if unknown:
        raise invalid(unknown[0][:60], "unknown query parameter; this view takes "
                      + ", ".join((*known, *OVERRIDES)))
    # A blank value is an empty field of the page's form: not an override.
    given = {k: query[k] for k in OVERRIDES if k in query and query[k].strip()}
    if not given:
        return site
    base = site.model_dump() if site is not None else {"name": "query overrides"}
    try:
        return Site.model_validate({**base, **given})
    except ValidationError as exc:
        raise from_validation_error(exc) from None
