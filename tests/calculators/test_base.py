"""calculators/base.py: the label a third-party output without one is shown with."""

from __future__ import annotations

import pytest

from calculators.base import Output, derived_label


@pytest.mark.parametrize(("name", "label"), [
    ("heating_power_w", "Heating power"),
    ("dew_point_c", "Dew point"),
    ("tube_inertia_kg_m2", "Tube inertia"),
    ("dew_risk", "Dew risk"),
    ("mm", "Mm"),  # nothing is left once the unit is dropped, so the name stays
])
def test_a_label_is_derived_from_the_name_without_its_unit(name, label):
    assert derived_label(name) == label


def test_a_declared_label_wins():
    assert Output("clear_area_mm2", "mm^2", "Area.", label="Clear area").shown_label == "Clear area"
    assert Output("clear_area_mm2", "mm^2", "Area.").shown_label == "Clear area"
