"""A club's public face: its profile, its public equipment and rigs, and a ready comparison of its rigs.

Everything here reads only what anyone may read (club accounts and public items), so the JSON views,
the CSV views and the HTML page all show the same thing to every visitor, key or no key.
"""

from __future__ import annotations

import re
from typing import Any

from collections.abc import Mapping

from sqlalchemy import func
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.clubs.schemas import ClubComparison, ClubEquipment, ClubPublic
from api.equipment import rules as resources
from api.http.problems import ApiProblem, FieldError
from api.schemas import HANDLE_PATTERN
from api.storage.models import Account, AccountKind, RigRow, Visibility
from api.storage.store import aware, list_items
from api.sites.conditions import OVERRIDES, default_site, with_overrides
from calculators.builtin.catalogue import UnknownObject, lookup
from plugins.compare import compare
from plugins.registry import Registry
from plugins.results import SkippedRig

#: The kinds of equipment, as (URL segment, resource) in the order a page shows them.
EQUIPMENT = (
    ("telescopes", resources.TELESCOPES),
    ("modifiers", resources.MODIFIERS),
    ("cameras", resources.CAMERAS),
    ("mounts", resources.MOUNTS),
)


def invalid(field: str, message: str) -> ApiProblem:
    return ApiProblem(422, f"{field}: {message}", title="Invalid input", type="/problems/invalid-input",
                      errors=[FieldError(field=field, message=message)])


def profile(account: Account) -> ClubPublic:
    return ClubPublic(
        name=account.name, kind=account.kind, display_name=account.display_name, location=account.location,
        contact_url=account.contact_url, created_at=aware(account.created_at),
        default_site_id=account.default_site_id,
    )


def list_clubs(session: Session, limit: int, offset: int) -> tuple[list[ClubPublic], int]:
    is_club = Account.kind == AccountKind.club.value
    total = session.exec(select(func.count()).select_from(Account).where(is_club)).one()
    rows = session.exec(select(Account).where(is_club).order_by(Account.name).limit(limit).offset(offset)).all()
    return [profile(row) for row in rows], int(total)


def find_club(session: Session, name: str) -> Account:
    """The club account with this handle; 404 for anything else (a person's handle included)."""
    account = None
    if re.fullmatch(HANDLE_PATTERN, name):
        account = session.exec(
            select(Account).where(Account.name == name, Account.kind == AccountKind.club.value)
        ).first()
    if account is None:
        raise ApiProblem(404, f"no club named {name[:60]!r}")
    return account


def _public(session: Session, table: Any, club: Account, limit: int, offset: int = 0):
    return list_items(session, table, None, owner=club.name, visibility=Visibility.public,
                      limit=limit, offset=offset)


def equipment(session: Session, club: Account, limit: int, caller: Principal | None = None) -> ClubEquipment:
    """Up to ``limit`` items of each kind, oldest first, with availability (api.clubs.shelf says who sees what)."""
    from api.clubs import shelf
    from api.clubs.schemas import SHELF

    lists, complete = shelf.items(session, club, EQUIPMENT, limit, caller, SHELF)
    return ClubEquipment(club=club.name, complete=complete, **lists)


def rigs(session: Session, club: Account, limit: int, offset: int) -> tuple[list[Any], int]:
    """One page of the club's public rigs (``RigPublic``), oldest first, and how many there are."""
    rows, total = _public(session, RigRow, club, limit, offset)
    return resources.RIGS.present(session, rows), total


def check_target(target: str) -> str:
    """The designation as given, once OpenNGC knows it; 422 naming ``target`` with close matches."""
    try:
        lookup(target)
    except UnknownObject as exc:
        raise invalid("target", str(exc)) from None
    return target.strip()


def comparison(
    session: Session, registry: Registry, club: Account, *, baseline_id: int | None, target: str,
    max_rigs: int, query: Mapping[str, str] | None = None, known: tuple[str, ...] = (),
) -> ClubComparison:
    """Every loaded calculator over the club's first ``max_rigs`` public rigs.

    ``baseline_id`` picks the rig the relative figures refer to (default: the oldest); ``target`` is
    the deep-sky object that ``target_fit`` (when loaded) places in each field. The club's default
    site (when public) fills the calculators' site params; ``query`` may override its values (any
    other parameter than ``known`` ones is refused, never ignored).
    """
    site, site_id = default_site(session, club)
    site = with_overrides(site, query or {}, known)
    if site is not None and site_id is not None and query and any(k in OVERRIDES for k in query):
        site = site.model_copy(update={"name": f"{site.name} (with query overrides)"})
    target = check_target(target)
    listed, total = rigs(session, club, max_rigs, 0)
    # A rig whose stored spec no longer validates is left out, with its reasons.
    skipped = [SkippedRig(index=i, id=rig.id, name=rig.name,
                          reasons=[f"{r.field}: {r.message}" for r in rig.invalid_reasons])
               for i, rig in enumerate(listed) if rig.invalid]
    listed = [rig for rig in listed if not rig.invalid]
    ids = [rig.id for rig in listed]
    if baseline_id is not None and baseline_id not in ids:
        raise invalid("baseline", f"rig {baseline_id} is not one of {club.name!r}'s public rigs "
                                  f"(they are {', '.join(map(str, ids)) or 'none'})")
    if not listed:
        return ClubComparison(rigs=[], baseline=0, results={}, club=club.name, baseline_rig_id=None,
                              target=target, rigs_total=total, skipped=skipped)
    baseline = ids.index(baseline_id) if baseline_id is not None else 0
    names = list(registry.calculators)
    params = {"target_fit": {"target": target}} if "target_fit" in names else {}
    result = compare(
        [rig.resolved for rig in listed], names, baseline, params,
        registry=registry, ids=ids, site=site, site_id=site_id,
    )
    result.skipped = skipped
    return ClubComparison(
        **result.model_dump(), club=club.name, baseline_rig_id=ids[baseline], target=target, rigs_total=total,
    )

