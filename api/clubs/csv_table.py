"""The club views as CSV for spreadsheets: clubs, equipment and rigs (comparisons use api.comparisons.csv_table)."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

from pydantic import BaseModel

from api.clubs.queries import EQUIPMENT
from api.clubs.schemas import ClubEquipment, ClubPublic
from api.comparisons.csv_table import records_csv
from api.schemas import CAMERA, MOUNT, RIG_SLOTS, TELESCOPE, Ref
from calculators.train_elements import ELEMENT_MODELS

SPECS = {"telescopes": [TELESCOPE.spec], "modifiers": list(ELEMENT_MODELS.values()),
         "cameras": [CAMERA.spec], "mounts": [MOUNT.spec]}

CLUB_COLUMNS = ["name", "display_name", "location", "contact_url", "created_at"]


def clubs_csv(clubs: Iterable[ClubPublic]) -> str:
    rows = [[c.name, c.display_name, c.location, c.contact_url, c.created_at.isoformat()] for c in clubs]
    return records_csv(CLUB_COLUMNS, rows)


def _flatten(data: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    """Nested objects as dotted columns: {"price": {"amount": 1}} -> {"price.amount": 1}."""
    flat: dict[str, Any] = {}
    for key, value in data.items():
        if isinstance(value, dict):
            flat.update(_flatten(value, f"{prefix}{key}."))
        else:
            flat[f"{prefix}{key}"] = value
    return flat


def _spec_columns(spec: type[BaseModel]) -> list[str]:
    """The columns a kind of equipment can fill, in the order its schema declares them."""
    columns = []
    for name, info in spec.model_fields.items():
        nested = [a for a in getattr(info.annotation, "__args__", (info.annotation,))
                  if isinstance(a, type) and issubclass(a, BaseModel)]
        if nested:
            columns += [f"{name}.{sub}" for sub in nested[0].model_fields]
        elif name != "name":
            columns.append(name)
    return columns


def equipment_csv(equipment: ClubEquipment) -> str:
    """One row per item; the spec columns of all kinds side by side (blank where a kind has none)."""
    columns: list[str] = []
    for path, _resource in EQUIPMENT:
        for spec in SPECS[path]:
            columns += [c for c in _spec_columns(spec) if c not in columns]
    rows = []
    for path, resource in EQUIPMENT:
        for item in getattr(equipment, "train_elements" if path == "modifiers" else path):
            flat = _flatten(item.model_dump(mode="json"))
            flat = {k: "; ".join(map(str, v)) if isinstance(v, list) else v for k, v in flat.items()}
            rows.append([resource.label, item.id, item.name, item.availability.value, item.due,
                         *(flat.get(c) for c in columns)])
    # "equipment", not "kind": a train element has a field of that name.
    return records_csv(["equipment", "id", "name", "availability", "due", *columns], rows)


RIG_COLUMNS = [
    "id", "name",
    *(f"{slot}{suffix}" for slot in RIG_SLOTS for suffix in ("_id", "")),
    "train_ids", "train",
    "accessories", "geometry.payload_arm_mm", "geometry.counterweight_kg",
    "fit",  # the compatibility verdict in words (api.clubs.fit); empty when not computed
]


def _slot_cells(rig: Any, slot: str) -> list[Any]:
    given, resolved = getattr(rig, slot), getattr(rig.resolved, slot)
    stored_id = given.id if isinstance(given, Ref) else None
    name = "" if resolved is None else (resolved.name or "(unnamed)")
    return [stored_id, name]


def rigs_csv(rigs: Sequence[Any], fits: Sequence[str | None] = ()) -> str:
    """One row per rig (``RigPublic``): its components by id and name, accessories, geometry and,
    from ``fits`` (one per rig, api.clubs.fit), its compatibility verdict in words."""
    rows = []
    for i, rig in enumerate(rigs):
        geometry = rig.resolved.geometry
        rows.append([
            rig.id, rig.name, *(cell for slot in RIG_SLOTS for cell in _slot_cells(rig, slot)),
            "; ".join("" if not isinstance(e, Ref) else str(e.id) for e in rig.train),
            "; ".join(e.name or e.kind.value for e in rig.resolved.train),
            "; ".join(a.name for a in rig.resolved.accessories),
            geometry.payload_arm_mm if geometry else None, geometry.counterweight_kg if geometry else None,
            fits[i] if i < len(fits) else None,
        ])
    return records_csv(RIG_COLUMNS, rows)
