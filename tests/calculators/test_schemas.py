"""Tests of calculators/schemas.py: rig validation, unit strings, cross-field rules, unknown fields."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from pydantic import ValidationError

from calculators.schemas import (
    DEFAULT_MODIFIER_THROUGHPUT,
    DEFAULT_THROUGHPUT,
    Camera,
    Design,
    Modifier,
    ModifierKind,
    Rig,
    Telescope,
)
from plugins.testing import KG_PER_POUND, MM_PER_INCH, in_imperial_units, rig_dicts

TELESCOPE = {"aperture_mm": 200, "focal_length_mm": 1000}
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def rig(**parts) -> dict:
    return {"name": "200 mm f/5 newtonian", "telescope": dict(TELESCOPE), "camera": dict(CAMERA), **parts}


def error_locs(excinfo) -> list[tuple]:
    return [e["loc"] for e in excinfo.value.errors()]


# --- unit strings -----------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("part", "field", "text", "expected"),
    [
        # NIST SP 811 (2008), appendix B.8: 1 in = 25.4 mm, 1 lb = 0.45359237 kg, exactly.
        ("telescope", "aperture_mm", "8 in", 8 * MM_PER_INCH),
        ("telescope", "focal_length_mm", "1.2 m", 1200.0),
        ("telescope", "obstruction_mm", "2.5 in", 2.5 * MM_PER_INCH),
        ("telescope", "mass_kg", "27 lb", 27 * KG_PER_POUND),
        ("telescope", "length_mm", "3 ft", 36 * MM_PER_INCH),
        ("telescope", "tube_diameter_mm", "23 cm", 230.0),
        ("telescope", "mirror_thickness_mm", "1 in", MM_PER_INCH),
        ("camera", "pixel_size_um", "0.0038 mm", 3.8),
        ("camera", "mass_kg", "700 g", 0.7),
    ],
)
def test_length_and_mass_fields_accept_unit_strings(part, field, text, expected):
    data = rig()
    data[part][field] = text
    value = getattr(getattr(Rig.model_validate(data), part), field)
    # 1e-14 relative: pint multiplies binary floats, an error of a few ulp.
    assert value == pytest.approx(expected, rel=1e-14)


def test_mount_geometry_modifier_and_accessory_masses_accept_unit_strings():
    data = rig(
        modifier={"kind": "reducer", "factor": 0.8, "mass_kg": "300 g", "corrected_field_mm": "44 mm"},
        mount={"capacity_kg": "44 lb", "mass_kg": "20 kg"},
        accessories=[{"name": "guide scope", "mass_kg": "1 lb"}],
        geometry={"payload_arm_mm": "1 ft", "counterweight_kg": "10 lb"},
    )
    model = Rig.model_validate(data)
    assert model.modifier.mass_kg == pytest.approx(0.3, rel=1e-14)
    assert model.mount.capacity_kg == pytest.approx(44 * KG_PER_POUND, rel=1e-14)
    assert model.accessories[0].mass_kg == pytest.approx(KG_PER_POUND, rel=1e-14)
    assert model.geometry.payload_arm_mm == pytest.approx(12 * MM_PER_INCH, rel=1e-14)
    assert model.geometry.counterweight_kg == pytest.approx(10 * KG_PER_POUND, rel=1e-14)


@given(rig_dicts())
@settings(deadline=None)
def test_unit_strings_give_the_same_rig_as_canonical_numbers(data):
    canonical = Rig.model_validate(data)
    imperial = Rig.model_validate(in_imperial_units(data))
    for part in ("telescope", "camera", "modifier", "mount", "geometry"):
        a, b = getattr(canonical, part), getattr(imperial, part)
        if a is None:
            assert b is None
            continue
        converted = b.model_dump()
        for name, value in a.model_dump().items():
            if isinstance(value, float):
                # inches and pounds round-trip through binary floats: a few ulp (1e-13 relative)
                assert converted[name] == pytest.approx(value, rel=1e-13), f"{part}.{name}"
            else:
                assert converted[name] == value, f"{part}.{name}"


# --- refusals naming the field ------------------------------------------------------------------

@pytest.mark.parametrize(
    ("path", "value", "message"),
    [
        (("telescope", "aperture_mm"), "12 kg", "mass, expected a length"),
        (("telescope", "focal_length_mm"), "1000 furlongz", "unknown unit"),
        (("telescope", "aperture_mm"), float("nan"), "finite"),
        (("telescope", "mass_kg"), float("inf"), "finite"),
        (("telescope", "aperture_mm"), -200, "greater than 0"),
        (("telescope", "throughput"), 1.2, "less than or equal to 1"),
        (("telescope", "throughput"), float("nan"), "finite"),
        (("camera", "pixel_size_um"), "3.8 kg", "mass, expected a length"),
        (("camera", "pixel_size_um"), float("nan"), "finite"),
        (("camera", "width_px"), 0, "greater than 0"),
        (("camera", "height_px"), -10, "greater than 0"),
        (("telescope", "design"), "periscope", "Input should be"),
    ],
)
def test_bad_fields_are_refused_by_name(path, value, message):
    data = rig()
    data[path[0]][path[1]] = value
    with pytest.raises(ValidationError, match=message) as info:
        Rig.model_validate(data)
    assert error_locs(info) == [path]


@pytest.mark.parametrize("obstruction", [210, 250, "8 in", "9 in", "1 m"])
def test_obstruction_not_smaller_than_aperture_is_refused(obstruction):
    data = rig()
    data["telescope"].update(aperture_mm="8 in", obstruction_mm=obstruction)
    with pytest.raises(ValidationError, match="must be smaller than aperture_mm") as info:
        Rig.model_validate(data)
    assert error_locs(info) == [("telescope", "obstruction_mm")]


def test_focal_ratio_below_half_is_refused_on_the_focal_length():
    with pytest.raises(ValidationError, match="focal ratio of 0.4") as info:
        Telescope(aperture_mm=200, focal_length_mm=80)
    assert error_locs(info) == [("focal_length_mm",)]


def test_modifier_that_brings_the_focal_ratio_below_half_is_refused():
    data = rig(modifier={"kind": "reducer", "factor": 0.2})
    data["telescope"]["focal_length_mm"] = 400  # f/2 × 0.2 = f/0.4
    with pytest.raises(ValidationError, match="focal ratio of 0.4") as info:
        Rig.model_validate(data)
    assert error_locs(info) == [("modifier",)]


@pytest.mark.parametrize("part", ["telescope", "camera", "modifier", "mount", "accessory", "geometry",
                                  "rig", "price"])
def test_unknown_fields_are_refused_not_dropped(part):
    data = rig(
        modifier={"kind": "corrector", "factor": 1.0},
        mount={"capacity_kg": 20},
        accessories=[{"name": "filter wheel", "mass_kg": 0.5}],
        geometry={"payload_arm_mm": 300, "counterweight_kg": 10},
    )
    data["telescope"]["price"] = {"amount": 800, "currency": "EUR"}
    target = {"rig": data, "accessory": data["accessories"][0],
              "price": data["telescope"]["price"]}.get(part) or data[part]
    target["colour"] = "white"
    with pytest.raises(ValidationError, match="Extra inputs are not permitted") as info:
        Rig.model_validate(data)
    assert error_locs(info)[0][-1] == "colour"


@pytest.mark.parametrize(
    ("price", "message"),
    [({"amount": -1, "currency": "EUR"}, "greater than or equal to 0"),
     ({"amount": 10, "currency": "eur"}, "should match pattern"),
     ({"amount": 10, "currency": "EURO"}, "should match pattern"),
     ({"amount": float("nan"), "currency": "EUR"}, "finite")],
)
def test_bad_prices_are_refused(price, message):
    data = rig()
    data["camera"]["price"] = price
    with pytest.raises(ValidationError, match=message):
        Rig.model_validate(data)


def test_accessories_of_one_rig_share_a_currency():
    data = rig(accessories=[
        {"name": "a", "price": {"amount": 1, "currency": "EUR"}},
        {"name": "b", "price": {"amount": 1, "currency": "USD"}},
    ])
    with pytest.raises(ValidationError, match="share a currency") as info:
        Rig.model_validate(data)
    assert error_locs(info) == [("accessories",)]


# --- defaults -----------------------------------------------------------------------------------

@pytest.mark.parametrize("design", list(Design))
def test_throughput_defaults_per_design_and_a_given_value_wins(design):
    # The defaults themselves are common practice (documented in schemas.py).
    telescope = Telescope(design=design, **TELESCOPE)
    assert telescope.effective_throughput == DEFAULT_THROUGHPUT[design]
    assert Telescope(design=design, throughput=0.5, **TELESCOPE).effective_throughput == 0.5


@pytest.mark.parametrize("kind", list(ModifierKind))
def test_modifier_throughput_defaults_per_kind(kind):
    assert Modifier(kind=kind, factor=1).effective_throughput == DEFAULT_MODIFIER_THROUGHPUT[kind]


def test_an_unobstructed_telescope_has_zero_obstruction_and_every_part_may_be_named():
    assert Telescope(**TELESCOPE).obstruction_mm == 0.0
    assert Camera(name="3.8 µm camera", **CAMERA).name == "3.8 µm camera"
