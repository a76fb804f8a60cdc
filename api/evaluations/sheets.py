"""A sheet per pick of a purchase report, and the words the report uses for outputs, bounds and parts.

A sheet: the pick's parts with their specs and prices (owned parts marked), the price to buy (what is
not owned) and of the whole combination, each objective and constraint against its bound, the
compatibility verdict when a ``compatibility`` calculator is loaded, the field over the request's
target when it names one, and the cautions that apply. Parts may be a list (an imaging train): its
elements are priced and named one by one. A visual combination's eyepiece stands where a camera would
(``components`` may hold the candidate eyepieces after the four axes).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from api.clubs.page import CAUTIONS
from api.evaluations import charts
from api.evaluations.sample import combination_key
from calculators.batch import AXES
from calculators.evaluation_schemas import EvaluationRow, EvaluationSpec
from calculators.ownership import is_owned
from plugins.compare import compare

#: A mount loaded above this fraction of its rated capacity gets its own caution (common practice:
#: stay well inside the rating for imaging).
LOAD_WARNING = 0.8

# Unit suffixes of output names (pixel_scale_arcsec): dropped from the words, the unit is shown apart.
UNIT_WORDS = {"arcsec", "arcmin", "mm", "um", "kg", "deg", "s", "min", "minutes", "nm", "n", "nm", "mm2", "cm2",
              "m", "w", "k", "c", "px", "mag", "arcsec2", "deg2"}

TELESCOPE, MOUNT = AXES.index("telescope"), AXES.index("mount")

KIND_WORDS = {"telescope": "Telescope", "camera": "Camera", "modifier": "Modifier", "train": "Imaging train",
              "mount": "Mount", "eyepiece": "Eyepiece"}


def _items(part) -> list:
    """The priced things a part is: itself, or each element of a train given as a list."""
    if part is None:
        return []
    return list(part) if isinstance(part, (list, tuple)) else [part]


def _price(part):
    """A part's price, or the sum of its elements' (None when one has none or currencies differ)."""
    items = _items(part)
    prices = [getattr(i, "price", None) for i in items]
    if len(items) == 1:
        return prices[0]
    if not items or any(p is None for p in prices) or len({p.currency for p in prices}) > 1:
        return None
    return type(prices[0])(amount=sum(p.amount for p in prices), currency=prices[0].currency)


@dataclass
class Entry:
    """How one stored component stands now (see api.evaluations.saved.StoredEntry)."""

    kind: str
    index: int
    id: int
    status: str
    changed_fields: list[str] = field(default_factory=list)
    name: str | None = None


def label_of(key: str, calculators: Mapping) -> str:
    """Words for an output key: its declared ``label`` when the calculator gives one, else its name."""
    name, _, output = key.partition(".")
    calculator = calculators.get(name)
    for declared in getattr(calculator, "outputs", ()):
        if declared.name == output and getattr(declared, "label", None):
            return declared.label
    parts = output.split("_")
    if len(parts) > 1 and parts[-1] in UNIT_WORDS and parts[-2] != "per":
        parts = parts[:-1]  # the unit is shown beside the label
    words = " ".join(parts)
    return words[:1].upper() + words[1:]


def unit_of(key: str, units: Mapping[str, str], calculators: Mapping) -> str:
    """The unit shown for an output: its own, or "× baseline" for a ratio to the baseline."""
    if units.get(key):
        return units[key]
    name, _, output = key.partition(".")
    for declared in getattr(calculators.get(name), "outputs", ()):
        if declared.name == output and declared.relative:
            return "× baseline"
    return ""


def bounds_text(bounds, unit: str) -> str:
    unit = f" {unit}" if unit else ""
    low, high = bounds.min, bounds.max
    if low is not None and high is not None:
        return f"between {charts.number_text(low)} and {charts.number_text(high)}{unit}"
    if low is not None:
        return f"at least {charts.number_text(low)}{unit}"
    return f"at most {charts.number_text(high)}{unit}"


def price_text(price) -> str:
    return "no price given" if price is None else f"{price.amount:,.2f} {price.currency}"


def _describe(kind: str, part) -> str:
    """The few specs that identify a part, in canonical units."""
    if isinstance(part, (list, tuple)):
        return ", ".join(_describe(getattr(e, "kind", "element"), e) for e in part) or "nothing between telescope and camera"
    if kind == "telescope":
        return f"{part.aperture_mm:g} mm aperture, {part.focal_length_mm:g} mm focal length (f/{part.focal_length_mm / part.aperture_mm:.1f})"
    if kind == "camera":
        return f"{part.width_px} × {part.height_px} px at {part.pixel_size_um:g} µm"
    if kind == "mount":
        return f"{part.type}, rated {part.capacity_kg:g} kg" if getattr(part, "capacity_kg", None) else str(part.type)
    if kind == "eyepiece" or _kind(part) == "eyepiece":  # a candidate, or a train's last element
        return eyepiece_words(part)
    factor = getattr(part, "factor", None)
    words = str(getattr(part, "kind", kind))
    return f"{words} {factor:g}×" if factor is not None else words


def _kind(part) -> str:
    kind = getattr(part, "kind", None)
    return str(getattr(kind, "value", kind))


def eyepiece_words(part) -> str:
    """An eyepiece in plain words: focal length, apparent field, field stop, eye relief."""
    words = [f"eyepiece of {part.focal_length_mm:g} mm focal length"]
    if getattr(part, "apparent_field_deg", None):
        words.append(f"{part.apparent_field_deg:g}° apparent field")
    if getattr(part, "field_stop_mm", None):
        words.append(f"{part.field_stop_mm:g} mm field stop")
    if getattr(part, "eye_relief_mm", None) is not None:
        words.append(f"{part.eye_relief_mm:g} mm eye relief")
    return ", ".join(words)


def _name(kind: str, index: int, part) -> str:
    if isinstance(part, (list, tuple)):
        return " + ".join(getattr(e, "name", None) or str(getattr(e, "kind", "element")) for e in part) or f"{kind} {index + 1}"
    return getattr(part, "name", None) or f"{kind} {index + 1}"


def indices_of(row: EvaluationRow) -> tuple[int, ...]:
    """The row's four indices and its binning factor, or its eyepiece (see ``combination_key``)."""
    ix = row.indices
    return combination_key(*(getattr(ix, kind) for kind in AXES), ix.binning, ix.eyepiece)


def eyepieces_of(components) -> Sequence[Any]:
    return components[4] if len(components) > 4 else ()


def row_parts(components, indices) -> list[tuple[str, int, Any]]:
    """(kind, index, part) of each of a combination's parts, given its ``Indices``; a visual
    combination's eyepiece in the camera's place (none when its train ends in the eyepiece)."""
    out = []
    for axis, kind in enumerate(AXES):
        index = getattr(indices, kind)
        if kind == "camera" and index is None:
            eyepiece = getattr(indices, "eyepiece", None)
            if eyepiece is not None:
                out.append(("eyepiece", eyepiece, eyepieces_of(components)[eyepiece]))
            continue
        out.append((kind, index, components[axis][index]))
    return out


def _parts(components, row: EvaluationRow, entries: Mapping[tuple[str, int], Entry]) -> list[dict]:
    parts = []
    for kind, index, part in row_parts(components, row.indices):
        if not _items(part):
            continue
        entry = entries.get((kind, index))
        parts.append({
            "kind": KIND_WORDS.get(kind, kind.capitalize()), "name": _name(kind, index, part),
            "specs": _describe(kind, part), "price": price_text(_price(part)),
            "owned": all(is_owned(i) for i in _items(part)),
            "stored_id": entry.id if entry else None, "status": entry.status if entry else None,
        })
    return parts


def purchase_prices(components, row: EvaluationRow) -> tuple[str, str]:
    """The price of what is not owned yet, and of the whole combination."""
    buy, total, currencies, missing = 0.0, 0.0, set(), False
    for _kind, _index, part in row_parts(components, row.indices):
        for item in _items(part):
            price = getattr(item, "price", None)
            if price is None:
                missing = True
                continue
            currencies.add(price.currency)
            total += price.amount
            if not is_owned(item):
                buy += price.amount
    if len(currencies) > 1:
        return "prices in several currencies", "prices in several currencies"
    currency = next(iter(currencies), "")
    note = " (some parts have no price)" if missing else ""
    return f"{buy:,.2f} {currency}{note}".strip(), f"{total:,.2f} {currency}{note}".strip()


def _rig(components, row: EvaluationRow, rank: int) -> dict[str, Any]:
    rig: dict[str, Any] = {"name": f"pick {rank}"}
    eyepiece = None
    for kind, _index, part in row_parts(components, row.indices):
        if kind == "eyepiece":
            eyepiece = part
        elif part is not None:
            rig[kind] = list(part) if isinstance(part, tuple) else part
    if eyepiece is not None:  # a visual combination: its eyepiece ends the train
        rig["train"] = [*rig.get("train", ()), eyepiece]
    return rig


def sheet_extras(components, picks: Sequence[EvaluationRow], spec: EvaluationSpec, registry) -> tuple[dict, dict]:
    """Outputs of the sheet calculators (payload, compatibility, target_fit) for every pick."""
    loaded = registry.calculators
    names = [n for n in ("payload", "compatibility") if n in loaded]
    target = getattr(spec, "target", None) or (spec.params.get("target_fit") or {}).get("target")
    if target and "target_fit" in loaded:
        names.append("target_fit")
    if not picks or not names:
        return {}, {}
    params = {n: spec.params[n] for n in names if n in spec.params}
    try:
        result = compare([_rig(components, r, i) for i, r in enumerate(picks, 1)], names,
                         params=params, registry=registry)
    except Exception as exc:  # a report never fails for want of an extra; the sheet says why
        return {"error": str(exc)}, {}
    return {n: r for n, r in result.results.items()}, {n: loaded[n] for n in names}


def _value(results, name: str, output: str, i: int):
    result = results.get(name)
    if result is None or result.error:
        return None
    values = result.outputs.get(output)
    return None if values is None else values.values[i]


def pick_sheet(rank, row, components, bounds_by_key, objectives, result, calculators, entries, extras, used) -> dict:
    i = rank - 1
    units = result.units
    buy, total = purchase_prices(components, row)
    # An output both constrained and optimised is one row: its direction and its bound.
    constraints = [{
        "label": label_of(key, calculators), "key": key, "unit": units.get(key, ""),
        "value": charts.number_text(row.values.get(key)),
        "bounds": bounds_text(bounds, units.get(key, "")), "met": True,
    } for key, bounds in bounds_by_key.items() if key not in objectives]
    objectives = [{
        "label": label_of(key, calculators), "key": key, "unit": unit_of(key, units, calculators),
        "value": charts.number_text(row.values.get(key)), "direction": direction,
        "bounds": bounds_text(bounds_by_key[key], units.get(key, "")) if key in bounds_by_key else None,
    } for key, direction in objectives.items()]
    sheet = {"rank": rank, "indices": charts.indices_text(indices_of(row)), "score": row.score,
             "parts": _parts(components, row, entries), "purchase": buy, "total": total,
             "constraints": constraints, "objectives": objectives,
             "compatibility": None, "field": None, "cautions": [], "extra_error": extras.get("error")}
    compat = extras.get("compatibility")
    if compat is not None:
        sheet["compatibility"] = ([{"label": label_of(f"compatibility.{name}", calculators),
                                    "value": _shown(values.values[i])} for name, values in compat.outputs.items()]
                                  if not compat.error else [{"label": "Not computed", "value": compat.error}])
    fit = extras.get("target_fit")
    if fit is not None and not fit.error:
        width, height = _value(extras, "target_fit", "field_width_arcmin", i), _value(extras, "target_fit", "field_height_arcmin", i)
        fits, panels = _value(extras, "target_fit", "fits_in_field", i), _value(extras, "target_fit", "panels", i)
        sheet["field"] = {
            "target": _value(extras, "target_fit", "target_name", i) or "the target",
            "size": (f"{width:.1f}′ × {height:.1f}′" if width and height else "unknown (no camera size)"),
            "verdict": ("the object fits" if fits else f"{panels:.0f} mosaic panels" if panels else "does not fit"),
        }
    cautions = []
    load = _value(extras, "payload", "capacity_fraction", i)
    if load is not None and load > LOAD_WARNING:
        cautions.append(f"This combination loads its mount to {load:.0%} of its rated capacity: above "
                        f"{LOAD_WARNING:.0%} leaves little margin; the mount maker's rating governs.")
    if components[MOUNT][indices_of(row)[MOUNT]] is not None:
        cautions.append(CAUTIONS[0])
    telescope = components[TELESCOPE][indices_of(row)[TELESCOPE]]
    if (getattr(telescope, "mass_kg", None) or 0) >= 15 or telescope.aperture_mm >= 250:
        cautions.append(CAUTIONS[1])
    cautions.append(CAUTIONS[2])
    for name, calculator in used.items():
        if (name != "payload" or components[MOUNT][indices_of(row)[MOUNT]] is not None):
            cautions += [c for c in calculator.cautions if c not in cautions]
    for texts in result.cautions.values():
        cautions += [c for c in texts if c not in cautions]
    sheet["cautions"] = cautions
    return sheet


def _shown(value) -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        return charts.number_text(float(value))
    return "—" if value is None else str(value)


def components_summary(components) -> list[dict]:
    """Every candidate of each kind, for the page's list of what was compared."""
    out = []
    for axis, kind in enumerate(AXES):
        items = []
        for index, part in enumerate(components[axis]):
            items.append("none" if part is None else f"{_name(kind, index, part)}: {_describe(kind, part)}, "
                         f"{price_text(_price(part))}" + (", owned" if _items(part) and all(
                             is_owned(i) for i in _items(part)) else ""))
        out.append({"kind": KIND_WORDS.get(kind, kind.capitalize()) + "s", "items": items})
    eyepieces = eyepieces_of(components)
    if eyepieces:
        out.append({"kind": "Eyepieces (visual, in a camera's place)", "items": [
            f"{_name('eyepiece', i, e)}: {eyepiece_words(e)}, {price_text(_price(e))}"
            + (", owned" if is_owned(e) else "") for i, e in enumerate(eyepieces)]})
    return out


def combination_name(components, indices) -> str:
    """A combination in words: its parts' names joined with +, as a pick sheet's heading (no mount
    and the empty train are left out)."""
    return " + ".join(_name(kind, index, part) for kind, index, part in row_parts(components, indices)
                      if _items(part))
