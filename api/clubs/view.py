"""What the club page shows, as plain data for its template: tables, pictures and cautions.

Built from the same ``ClubComparison`` the JSON API returns, so the page and ``/v1/clubs/{name}/comparison``
always agree. Cells keep the exact value (``data-value``) beside the rounded text a person reads.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from api.clubs import fit, pictures
from api.display import data_value, header, number_text, unit_text
from api.clubs.schemas import ClubComparison, ClubEquipment
from calculators.builtin.catalogue import CREDIT, lookup
from plugins.results import CalculatorResult

@dataclass(frozen=True)
class Column:
    calculator: str
    output: str
    unit: str | None = None  # None: the unit the API reports for the output


# The comparison table: the figures most people compare first, headed by their labels. Every figure
# is in the full table.
COLUMNS = (
    # First, whether the rig can be built at all: in words (api.clubs.fit), the cell's data-value
    # keeping the calculator's verdict.
    Column("compatibility", "verdict"),
    Column("speed", "effective_focal_length_mm"),
    Column("speed", "focal_ratio"),
    Column("light_grasp", "clear_area_mm2"),
    Column("light_grasp", "area_ratio", "× baseline"),
    Column("speed", "time_factor_per_pixel", "× baseline"),
    Column("speed", "time_factor_per_arcsec2", "× baseline"),
    Column("sampling", "pixel_scale_arcsec"),
    Column("sampling", "field_width_arcmin"),
    Column("sampling", "field_height_arcmin"),
    Column("sampling", "sampling_verdict"),
    Column("payload", "payload_kg"),
    Column("payload", "capacity_fraction", "× rating"),
    Column("cost", "total_price"),
)


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
    cautions: list[str] = field(default_factory=list)


@dataclass
class Table:
    headers: list[str]
    rows: list[Row]
    notes: list[str] = field(default_factory=list)


def _ok(result: CalculatorResult | None) -> bool:
    return result is not None and result.error is None


def comparison_table(comparison: ClubComparison, fits: Sequence[str | None] = ()) -> Table:
    """The curated columns, one row per rig, the unit in each header; failed calculators noted.

    ``fits``: each rig's compatibility verdict in words (api.clubs.fit), shown in the verdict's cell."""
    columns = [c for c in COLUMNS if _ok(comparison.results.get(c.calculator))
               and c.output in comparison.results[c.calculator].outputs]
    headers = []
    for c in columns:
        data = comparison.results[c.calculator].outputs[c.output]
        headers.append(header(data.label or c.output, c.unit if c.unit is not None else unit_text(data.unit)))
    rows = []
    for i, rig in enumerate(comparison.rigs):
        cells = []
        for c in columns:
            value = comparison.results[c.calculator].outputs[c.output].values[i]
            text = number_text(value)
            if (c.calculator, c.output) == (fit.CALCULATOR, "verdict") and i < len(fits) and fits[i]:
                text = fits[i]
            cells.append(Cell(text, data_value(value), f"{c.calculator}.{c.output}"))
        rows.append(Row(rig.id, rig.name, i == comparison.baseline, cells, list(rig.cautions)))
    notes = [f"{name}: {result.error}" for name, result in comparison.results.items() if result.error]
    return Table(headers, rows, notes)


@dataclass
class Figure:
    """One row of a calculator's full table: the label a person reads, the key a script reads."""

    heading: str
    key: str
    cells: list[Cell]


@dataclass
class FigureGroup:
    calculator: str
    version: str
    rows: list[Figure]
    error: str | None


def all_figures(comparison: ClubComparison, counts: Collection[str] = ()) -> list[FigureGroup]:
    """Every output of every calculator: one small table per calculator, a row per output, headed
    by its label and unit; ``counts`` ("<calculator>.<output>") are shown as whole numbers."""
    groups = []
    for name, result in comparison.results.items():
        rows = []
        for output, data in result.outputs.items():
            key = f"{name}.{output}"
            integer = key in counts
            cells = [Cell(number_text(v, integer=integer), data_value(v), key) for v in data.values]
            rows.append(Figure(header(data.label or output, unit_text(data.unit)), key, cells))
        groups.append(FigureGroup(name, result.version, rows, result.error))
    return groups


def counts(registry: Any) -> set[str]:
    """The outputs (``"<calculator>.<output>"``) the loaded calculators declare as counts."""
    return {f"{name}.{o.name}" for name, calc in registry.calculators.items() for o in calc.outputs if o.integer}


def rig_cautions(comparison: ClubComparison) -> list[tuple[str, str]]:
    """Each rig's own cautions (an overloaded mount, a heavy lift) as (rig name, text)."""
    return [(rig.name, text) for rig in comparison.rigs for text in rig.cautions]


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
    # A visual rig (an eyepiece, no camera) has no camera field to draw: it is left out of the picture.
    eyepiece_field = _values(comparison, "visual", "true_field_arcmin") or [None] * n
    frames = [pictures.Frame(rig.name, width[i], height[i], fits[i], panels[i])
              for i, rig in enumerate(comparison.rigs)
              if not (width[i] is None and eyepiece_field[i] is not None)]
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
    ("train_elements", "Imaging train: reducers, correctors, filters, spacers, eyepieces",
     ["Name", "Kind", "Focal length factor [×]", "Image circle [mm]", "Backfocus [mm]", "Mass [kg]",
      "Price"],
     lambda e: [e.name or "—", e.kind.value, number_text(e.factor or 1.0), number_text(e.image_circle_mm),
                number_text(e.backfocus_mm), _mass(e), _price(e)]),
    ("cameras", "Cameras",
     ["Name", "Pixel size [µm]", "Width [px]", "Height [px]", "Mass [kg]", "Price"],
     lambda c: [c.name or "—", number_text(c.pixel_size_um), str(c.width_px), str(c.height_px), _mass(c),
                _price(c)]),
    ("mounts", "Mounts",
     ["Name", "Type", "Drive", "Rated payload [kg]", "Mass [kg]", "Price"],
     lambda m: [m.name or "—", m.type.value, m.drive.value if m.drive else "—", number_text(m.capacity_kg),
                _mass(m), _price(m)]),
)


@dataclass
class SimpleTable:
    key: str
    caption: str
    headers: list[str]
    rows: list[list[str]]


def availability_text(item: Any) -> str:
    """"Available", "On loan until 2026-12-09" (with the borrower for those who may see it), "Retired"."""
    if item.availability.value == "on loan":
        who = f" ({item.borrower})" if getattr(item, "borrower", None) else ""
        late = ", overdue" if getattr(item, "overdue", None) else ""
        # Non-breaking hyphens keep the date on one line in a narrow column.
        return f"On loan until {item.due.isoformat().replace('-', chr(0x2011))}{who}{late}"
    return item.availability.value.capitalize()


def equipment_tables(equipment: ClubEquipment) -> list[SimpleTable]:
    return [
        SimpleTable(key, caption, [*headers, "Availability"],
                    [[*cells(item), availability_text(item)] for item in getattr(equipment, key)])
        for key, caption, headers, cells in EQUIPMENT_TABLES
        if getattr(equipment, key)
    ]


def _component(part: Any) -> str:
    return "—" if part is None else (part.name or "(unnamed)")


def rigs_table(rigs: list[Any], fits: Mapping[int, str | None] | None = None) -> SimpleTable:
    """What each rig is made of and, from ``fits`` (rig id -> words, api.clubs.fit), whether it fits."""
    fits = fits or {}
    headers = ["Rig", "Telescope", "Imaging train", "Camera", "Mount", "Accessories", "Fit"]
    rows = [
        [rig.name, _component(rig.resolved.telescope),
         " → ".join(e.name or e.kind.value for e in rig.resolved.train) or "—",
         _component(rig.resolved.camera), _component(rig.resolved.mount),
         ", ".join(a.name for a in rig.resolved.accessories) or "—", fits.get(rig.id) or "—"]
        for rig in rigs
    ]
    return SimpleTable("rigs", "Rigs", headers, rows)
