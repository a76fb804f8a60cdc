"""What the club page shows, as plain data for its template: tables, pictures and cautions.

Built from the same ``ClubComparison`` the JSON API returns, so the page and ``/v1/clubs/{name}/comparison``
always agree. Cells keep the exact value (``data-value``) beside the rounded text a person reads.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from api.clubs import pictures
from api.clubs.schemas import ClubComparison, ClubEquipment
from calculators.builtin.catalogue import CREDIT, lookup
from plugins.results import CalculatorResult

# Units as a reader expects them in a header (pint spelling -> print spelling).
UNIT_TEXT = {
    "mm^2": "mm²", "arcsec": "″", "arcmin": "′", "deg": "°", "kg*m^2": "kg·m²", "N*m": "N·m",
    "m^2*deg^2": "m²·deg²", "m^2*arcsec^2": "m²·arcsec²", "um": "µm", "1/s": "e⁻/s",
}


@dataclass(frozen=True)
class Column:
    calculator: str
    output: str
    heading: str
    unit: str | None = None  # None: the unit the API reports for the output


# The comparison table: the figures most people compare first. Every figure is in the full table.
COLUMNS = (
    Column("speed", "effective_focal_length_mm", "Focal length"),
    Column("speed", "focal_ratio", "Focal ratio", ""),
    Column("light_grasp", "clear_area_mm2", "Clear area"),
    Column("light_grasp", "area_ratio", "Light grasp", "× baseline"),
    Column("speed", "time_factor_per_pixel", "Time per pixel", "× baseline"),
    Column("speed", "time_factor_per_arcsec2", "Time per sky area", "× baseline"),
    Column("sampling", "pixel_scale_arcsec", "Pixel scale", "″/pixel"),
    Column("sampling", "field_width_arcmin", "Field width"),
    Column("sampling", "field_height_arcmin", "Field height"),
    Column("sampling", "sampling_verdict", "Sampling"),
    Column("payload", "payload_kg", "Payload"),
    Column("payload", "capacity_fraction", "Mount load", "× rating"),
    Column("cost", "total_price", "Price"),
)


def unit_text(unit: str) -> str:
    return UNIT_TEXT.get(unit, unit)


def header(heading: str, unit: str) -> str:
    return f"{heading} [{unit}]" if unit else heading


def number_text(value: Any) -> str:
    """What a reader sees: three or four significant figures, yes/no, or a dash for no value."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, str):
        return value
    if not math.isfinite(value):
        return "—"
    size = abs(value)
    if size >= 100:
        return f"{value:.0f}"
    if size >= 10:
        return f"{value:.1f}"
    if size >= 1 or size == 0:
        return f"{value:.2f}"
    return f"{value:#.3g}"


def data_value(value: Any) -> str:
    """The exact value for the ``data-value`` attribute (JSON spelling)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    return value if isinstance(value, str) else repr(float(value))


@dataclass
class Cell:
    text: str
    value: str
    output: str

    @property
    def kind(self) -> str:
        """'text' for words (left-aligned), 'number' otherwise."""
        return "number" if self.text == "—" or self.value in {"true", "false"} or _numeric(self.value) else "text"


def _numeric(value: str) -> bool:
    try:
        float(value)
    except ValueError:
        return False
    return True


@dataclass
class Row:
    rig_id: int | None
    name: str
    baseline: bool
    cells: list[Cell]


@dataclass
class Table:
    headers: list[str]
    rows: list[Row]
    notes: list[str] = field(default_factory=list)


def _ok(result: CalculatorResult | None) -> bool:
    return result is not None and result.error is None


def comparison_table(comparison: ClubComparison) -> Table:
    """The curated columns, one row per rig, the unit in each header; failed calculators noted."""
    columns = [c for c in COLUMNS if _ok(comparison.results.get(c.calculator))
               and c.output in comparison.results[c.calculator].outputs]
    headers = []
    for c in columns:
        reported = comparison.results[c.calculator].outputs[c.output].unit
        headers.append(header(c.heading, c.unit if c.unit is not None else unit_text(reported)))
    rows = []
    for i, rig in enumerate(comparison.rigs):
        cells = []
        for c in columns:
            value = comparison.results[c.calculator].outputs[c.output].values[i]
            cells.append(Cell(number_text(value), data_value(value), f"{c.calculator}.{c.output}"))
        rows.append(Row(rig.id, rig.name, i == comparison.baseline, cells))
    notes = [f"{name}: {result.error}" for name, result in comparison.results.items() if result.error]
    return Table(headers, rows, notes)


@dataclass
class FigureGroup:
    calculator: str
    version: str
    rows: list[tuple[str, list[Cell]]]
    error: str | None


def all_figures(comparison: ClubComparison) -> list[FigureGroup]:
    """Every output of every calculator: one small table per calculator, a row per output."""
    groups = []
    for name, result in comparison.results.items():
        rows = []
        for output, data in result.outputs.items():
            cells = [Cell(number_text(v), data_value(v), f"{name}.{output}") for v in data.values]
            rows.append((header(output, unit_text(data.unit)), cells))
        groups.append(FigureGroup(name, result.version, rows, result.error))
    return groups


def cautions(comparison: ClubComparison) -> list[str]:
    """The calculators' own cautions, each once."""
    return list(dict.fromkeys(c for result in comparison.results.values() for c in result.cautions))


def _values(comparison: ClubComparison, calculator: str, output: str) -> list[Any] | None:
    result = comparison.results.get(calculator)
    if not _ok(result) or output not in result.outputs:
        return None
    return result.outputs[output].values


def fields_picture(comparison: ClubComparison, ident: str = "fields") -> str | None:
    """The fields picture, from target_fit (or the sampling calculator's field when it is missing)."""
    if not comparison.rigs:
        return None
    found = lookup(comparison.target)
    n = len(comparison.rigs)
    width = _values(comparison, "target_fit", "field_width_arcmin")
    height = _values(comparison, "target_fit", "field_height_arcmin")
    if width is None or height is None:
        width = _values(comparison, "sampling", "field_width_arcmin")
        height = _values(comparison, "sampling", "field_height_arcmin")
    if width is None or height is None:
        return None
    fits = _values(comparison, "target_fit", "fits_in_field") or [None] * n
    panels = _values(comparison, "target_fit", "panels") or [None] * n
    frames = [pictures.Frame(rig.name, width[i], height[i], fits[i], panels[i])
              for i, rig in enumerate(comparison.rigs)]
    target = pictures.SkyObject(found.label, found.major_arcmin, found.minor_arcmin, CREDIT)
    return pictures.fields_svg(frames, target, ident=ident)


SERIES = (
    ("light_grasp", "area_ratio", "Light grasp", "clear aperture area ÷ the baseline's: longer gathers more"),
    ("speed", "time_factor_per_pixel", "Exposure time per pixel",
     "for the same signal in each pixel, ÷ the baseline's: shorter is faster"),
    ("speed", "time_factor_per_arcsec2", "Exposure time per unit sky area",
     "for the same signal from the same patch of sky, ÷ the baseline's: shorter is faster"),
)


def bars_picture(comparison: ClubComparison, ident: str = "bars") -> str | None:
    series = []
    for calculator, output, heading, note in SERIES:
        values = _values(comparison, calculator, output)
        if values is not None:
            series.append(pictures.Series(heading, note, values))
    if not series or not comparison.rigs:
        return None
    return pictures.bars_svg([r.name for r in comparison.rigs], series, comparison.baseline, ident=ident)


# --- equipment and rigs ---------------------------------------------------------------------------

def _price(item: Any) -> str:
    price = getattr(item, "price", None)
    # A no-break space keeps the amount and its currency on one line.
    return f"{price.amount:.0f}\u00a0{price.currency}" if price is not None else "—"


def _mass(item: Any) -> str:
    return number_text(item.mass_kg)


EQUIPMENT_TABLES = (
    ("telescopes", "Telescopes",
     ["Name", "Design", "Aperture [mm]", "Focal length [mm]", "Central obstruction [mm]", "Mass [kg]", "Price"],
     lambda t: [t.name or "—", t.design.value, number_text(t.aperture_mm), number_text(t.focal_length_mm),
                number_text(t.obstruction_mm), _mass(t), _price(t)]),
    ("modifiers", "Focal reducers, correctors and flatteners",
     ["Name", "Kind", "Focal length factor [×]", "Mass [kg]", "Price"],
     lambda m: [m.name or "—", m.kind.value, number_text(m.factor), _mass(m), _price(m)]),
    ("cameras", "Cameras",
     ["Name", "Pixel size [µm]", "Width [pixels]", "Height [pixels]", "Mass [kg]", "Price"],
     lambda c: [c.name or "—", number_text(c.pixel_size_um), str(c.width_px), str(c.height_px), _mass(c),
                _price(c)]),
    ("mounts", "Mounts",
     ["Name", "Type", "Rated payload [kg]", "Mass [kg]", "Price"],
     lambda m: [m.name or "—", m.type.value, number_text(m.capacity_kg), _mass(m), _price(m)]),
)


@dataclass
class SimpleTable:
    key: str
    caption: str
    headers: list[str]
    rows: list[list[str]]


def equipment_tables(equipment: ClubEquipment) -> list[SimpleTable]:
    return [
        SimpleTable(key, caption, headers, [cells(item) for item in getattr(equipment, key)])
        for key, caption, headers, cells in EQUIPMENT_TABLES
        if getattr(equipment, key)
    ]


def _component(part: Any) -> str:
    return "—" if part is None else (part.name or "(unnamed)")


def rigs_table(rigs: list[Any]) -> SimpleTable:
    headers = ["Rig", "Telescope", "Reducer or corrector", "Camera", "Mount", "Accessories"]
    rows = [
        [rig.name, _component(rig.resolved.telescope), _component(rig.resolved.modifier),
         _component(rig.resolved.camera), _component(rig.resolved.mount),
         ", ".join(a.name for a in rig.resolved.accessories) or "—"]
        for rig in rigs
    ]
    return SimpleTable("rigs", "Rigs", headers, rows)
