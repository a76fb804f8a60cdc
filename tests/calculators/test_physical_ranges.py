"""Physical upper bounds of the rig schemas (calculators/schemas.py, calculators/units.py): an absurd
value is a validation error naming the field, and each bound is in the JSON schema clients read."""

from __future__ import annotations

import pytest
from pydantic import ValidationError

from calculators.schemas import MAX_APERTURE_MM, MAX_FOCAL_LENGTH_MM, Geometry, Mount, Telescope
from calculators.units import MAX_LENGTH_MM, MAX_MASS_KG

SCOPE = {"aperture_mm": 200, "focal_length_mm": 1000}


@pytest.mark.parametrize(("field", "value"), [
    ("aperture_mm", 1e308), ("aperture_mm", MAX_APERTURE_MM * 1.001), ("aperture_mm", "51 m"),
    ("focal_length_mm", MAX_FOCAL_LENGTH_MM * 1.001), ("focal_length_mm", "1e300 km"),
    ("mass_kg", MAX_MASS_KG * 1.001), ("length_mm", "2 km"), ("mirror_thickness_mm", 1e200),
])
def test_a_value_beyond_its_physical_bound_is_refused_by_name(field, value):
    with pytest.raises(ValidationError) as caught:
        Telescope.model_validate({**SCOPE, field: value})
    assert [e["loc"] for e in caught.value.errors()] == [(field,)]


def test_values_at_the_bounds_are_accepted():
    # f/20 at the largest aperture: 50 m x 20 = 1 km, the longest focal length
    scope = Telescope(aperture_mm=MAX_APERTURE_MM, focal_length_mm=MAX_FOCAL_LENGTH_MM, mass_kg=MAX_MASS_KG)
    assert scope.aperture_mm == 50_000 and scope.focal_length_mm == 1_000_000
    assert Mount(capacity_kg="100 t").capacity_kg == MAX_MASS_KG
    assert Geometry(payload_arm_mm="1 km", counterweight_kg=10).payload_arm_mm == MAX_LENGTH_MM


def test_the_bounds_are_documented_in_the_schema():
    properties = Telescope.model_json_schema()["properties"]
    assert properties["aperture_mm"]["le"] == MAX_APERTURE_MM
    assert properties["focal_length_mm"]["le"] == MAX_FOCAL_LENGTH_MM
    assert properties["mass_kg"]["anyOf"][0]["le"] == MAX_MASS_KG
    assert Mount.model_json_schema()["properties"]["capacity_kg"]["le"] == MAX_MASS_KG
