"""Turning a comparison request into calculator input: stored rigs and component ids resolved, the
request's calculator names, baseline and params checked so each error names its field."""

from __future__ import annotations

from collections.abc import Sequence

from pydantic import ValidationError
from sqlalchemy import Engine
from sqlmodel import Session, select

from api import schemas
from api.accounts.keys import Principal
from api.equipment.rules import SlotRequest, body_slots, full_rig, has_refs, resolve_slots, stored_rig_specs
from api.equipment.readable import reasons
from api.http.problems import ApiProblem, FieldError
from api.storage.models import RigRow
from api.storage.store import readable_by
from calculators.ownership import owned_parts
from calculators.schemas import Rig
from plugins.registry import Registry
from plugins.results import SkippedRig


def invalid(errors: Sequence[FieldError]) -> ApiProblem:
    return ApiProblem(
        422, "; ".join(f"{e.field}: {e.message}" for e in errors[:5]),
        title="Invalid comparison", type="/problems/invalid-comparison", errors=errors,
    )


def check_request(body: schemas.ComparisonRequest, registry: Registry, max_rigs: int) -> list[str]:
    """The calculator names to run; 422 naming the field for anything compare() would refuse."""
    errors: list[FieldError] = []
    if len(body.rigs) > max_rigs:
        errors.append(FieldError(field="rigs", message=f"at most {max_rigs} rigs per comparison, got {len(body.rigs)}"))
    if body.baseline >= len(body.rigs):
        errors.append(FieldError(
            field="baseline", message=f"{body.baseline} is not an index into the {len(body.rigs)} rig(s)"
        ))
    available = registry.calculators
    names = list(dict.fromkeys(body.calculators)) if body.calculators is not None else list(available)
    if body.calculators is not None and not body.calculators:
        errors.append(FieldError(field="calculators", message="name at least one calculator, or leave it out"))
    for i, name in enumerate(body.calculators or ()):
        if name not in available:
            errors.append(FieldError(
                field=f"calculators.{i}", message=f"no calculator named {name!r}; available: {', '.join(available)}"
            ))
    for name in body.params:
        if name not in names:
            errors.append(FieldError(field=f"params.{name}", message=f"{name!r} is not among the calculators run"))
    if errors:
        raise invalid(errors)
    return names


def needs_database(body: schemas.ComparisonRequest) -> bool:
    for i, entry in enumerate(body.rigs):
        if isinstance(entry, schemas.Ref):
            return True
        if has_refs(body_slots(entry, ("rigs", i))):
            return True
    return False


def inline_rigs(body: schemas.ComparisonRequest) -> list[Rig]:
    """Rigs given whole in the request (no database)."""
    return [full_rig(entry, body_slots(entry, ("rigs", i)), ("rigs", i)) for i, entry in enumerate(body.rigs)]


def resolve_rigs(
    engine: Engine, principal: Principal | None, body: schemas.ComparisonRequest
) -> tuple[list[Rig], list[int | None], list[SkippedRig]]:
    """Rigs and their stored ids, reading only what the caller may read (one query per table), and
    the stored rigs left out because their stored spec no longer validates (422 when that leaves
    none, or takes the baseline)."""
    me = principal.account.id if principal is not None else None
    owners: dict[tuple[str, int], int] = {}
    mine: set[tuple[str, int]] = set()
    with Session(engine) as session:
        wanted = {e.id for e in body.rigs if isinstance(e, schemas.Ref)}
        stored = {}
        if wanted:
            rows = session.exec(select(RigRow).where(RigRow.id.in_(wanted), readable_by(RigRow, principal))).all()
            specs = stored_rig_specs(session, rows, owners=owners)
            stored = {row.id: (row, spec) for row, spec in zip(rows, specs)}
        errors = [
            FieldError(field=f"rigs.{i}.id", message=f"no rig with id {e.id} that you can read")
            for i, e in enumerate(body.rigs)
            if isinstance(e, schemas.Ref) and e.id not in stored
        ]
        if errors:
            raise invalid(errors)
        inline = [(i, e) for i, e in enumerate(body.rigs) if not isinstance(e, schemas.Ref)]
        given = [body_slots(e, ("rigs", i)) for i, e in inline]
        slots = resolve_slots(
            session, principal, [SlotRequest(g, loc=("rigs", i)) for (i, _), g in zip(inline, given)],
            mine=mine,
        )
    rigs: list[Rig | None] = [None] * len(body.rigs)
    ids: list[int | None] = [None] * len(body.rigs)
    for (i, entry), resolved, parts in zip(inline, slots, given):
        rig = full_rig(entry, resolved, ("rigs", i))
        rigs[i] = owned_parts(rig, ownership(parts, lambda slot, ref: (slot, ref["id"]) in mine,
                                             inline_owned=False))
    skipped: list[SkippedRig] = []
    for i, entry in enumerate(body.rigs):
        if isinstance(entry, schemas.Ref):
            row, spec = stored[entry.id]
            try:
                rig = Rig.model_validate(spec)
                yours = me is not None and row.owner_id == me
                rigs[i] = owned_parts(rig, ownership(
                    row.spec, lambda slot, ref: me is not None and owners.get((slot, ref["id"])) == me,
                    inline_owned=yours))
            except ValidationError as exc:
                skipped.append(SkippedRig(index=i, id=entry.id, name=row.name, reasons=[
                    f"{e.field}: {e.message}" for e in reasons(exc)]))
            ids[i] = entry.id
    if skipped:
        gone = {s.index for s in skipped}
        if body.baseline in gone or len(gone) == len(body.rigs):
            where = body.baseline if body.baseline in gone else skipped[0].index
            raise invalid([FieldError(field=f"rigs.{where}.id", message=(
                f"stored rig {ids[where]} no longer validates, so it cannot be "
                f"{'the baseline' if where == body.baseline else 'compared'} (repair it with PATCH or PUT): "
                + "; ".join(next(s.reasons for s in skipped if s.index == where))))])
        rigs = [r for i, r in enumerate(rigs) if i not in gone]
        ids = [x for i, x in enumerate(ids) if i not in gone]
    return rigs, ids, skipped


def ownership(parts: dict, owned_ref, inline_owned: bool) -> dict:
    """Which parts of a rig the caller owns, as :func:`calculators.ownership.owned_parts` takes
    them: a stored item referenced (``{"id": N}``) when ``owned_ref(slot, ref)`` says so (it is
    stored under the caller's account), every other part and the accessories when
    ``inline_owned`` (the caller's own stored rig)."""
    def flag(slot: str, value) -> bool:
        ref = value.model_dump() if isinstance(value, schemas.Ref) else value
        if isinstance(ref, dict) and set(ref) == {"id"}:
            return bool(owned_ref(slot, ref))
        return inline_owned
    out: dict = {slot: flag(slot, parts.get(slot)) for slot in ("telescope", "camera", "mount")}
    out["train"] = [flag("train", v) for v in parts.get("train") or []]
    out["accessories"] = [inline_owned] * len(parts.get("accessories") or [])
    return out


def baseline_after_skips(baseline: int, skipped: list[SkippedRig]) -> int:
    """The baseline's index among the rigs computed."""
    return baseline - sum(s.index < baseline for s in skipped)
