"""Equipment as flat rows for CSV, and back: nested fields as dotted columns (``price.amount``).

Export writes text cells a spreadsheet would run as a formula (starting with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return) with a leading apostrophe, as the OWASP "CSV Injection" guidance advises;
import takes such an apostrophe off again, so an exported file imports back to the same text. A cell
that looks like a formula is only ever stored as text.
"""

from __future__ import annotations

import csv
import io
import re
from typing import Any

from pydantic import BaseModel

from api.comparisons.csv_table import records_csv
from api.schemas import CAMERA, MODIFIER, MOUNT, TELESCOPE

KINDS = {"telescopes": TELESCOPE, "cameras": CAMERA, "modifiers": MODIFIER, "mounts": MOUNT}

#: Columns an export adds that an import ignores (so an export imports back as it is).
METADATA = frozenset({"id", "owner", "version", "created_at", "updated_at", "retired_at", "invalid",
                      "invalid_reasons", "availability", "due", "borrower", "overdue"})

_ESCAPED_FORMULA = re.compile(r"^'[=+\-@\t\r]")


def columns(kind: str) -> list[str]:
    """The columns of one kind, in the order its schema declares its fields, then ``visibility``."""
    spec: type[BaseModel] = KINDS[kind].spec
    found = []
    for name, info in spec.model_fields.items():
        nested = [a for a in getattr(info.annotation, "__args__", (info.annotation,))
                  if isinstance(a, type) and issubclass(a, BaseModel)]
        found += [f"{name}.{sub}" for sub in nested[0].model_fields] if nested else [name]
    return [*found, "visibility"]


def flatten(data: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    flat: dict[str, Any] = {}
    for key, value in data.items():
        if isinstance(value, dict):
            flat.update(flatten(value, f"{prefix}{key}."))
        else:
            flat[f"{prefix}{key}"] = value
    return flat


def to_csv(kind: str, items: list[dict[str, Any]]) -> str:
    """One kind's items (spec plus visibility) as CSV, formula-looking text escaped."""
    names = columns(kind)
    rows = [[flatten(item).get(name) for name in names] for item in items]
    return records_csv(names, rows)


def unescape(cell: str) -> str:
    return cell[1:] if _ESCAPED_FORMULA.match(cell) else cell


def from_csv(text: str) -> tuple[list[str], list[tuple[int, dict[str, Any]]]]:
    """The header and each row as (its line number as a spreadsheet shows it, nested values).

    Empty cells are left out (the field takes its default); dotted columns become nested objects.
    """
    reader = csv.reader(io.StringIO(text.lstrip("\ufeff")))
    header = next(reader, None) or []
    header = [h.strip() for h in header]
    rows = []
    for number, cells in enumerate(reader, start=2):
        if not any(c.strip() for c in cells):
            continue
        item: dict[str, Any] = {}
        for name, cell in zip(header, cells):
            if name in METADATA or cell.strip() == "":
                continue
            value = unescape(cell)
            if "." in name:
                outer, inner = name.split(".", 1)
                item.setdefault(outer, {})[inner] = value
            else:
                item[name] = value
        if len(cells) > len(header):
            item["__extra_cells__"] = len(cells) - len(header)
        rows.append((number, item))
    return header, rows
