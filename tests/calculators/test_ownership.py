"""Tests of calculators/ownership.py: candidates marked ``owned`` and rigs whose parts are marked."""

from __future__ import annotations

import pytest
from pydantic import TypeAdapter, ValidationError

from calculators.ownership import CandidateTrainElement, as_owned, candidate_model, is_owned, owned_parts
from calculators.schemas import Accessory, Camera, Mount, Rig, Telescope
from calculators.train_elements import ELEMENT_MODELS, Reducer

ELEMENT = TypeAdapter(CandidateTrainElement)
SCOPE = {"aperture_mm": 200, "focal_length_mm": 1000}


@pytest.mark.parametrize("model", [Telescope, Camera, Mount, Accessory, *ELEMENT_MODELS.values()])
def test_a_candidate_is_its_model_plus_a_strict_owned_flag_defaulting_to_false(model):
    candidate = candidate_model(model)
    assert issubclass(candidate, model) and candidate_model(model) is candidate
    assert candidate.model_fields["owned"].default is False
    assert set(candidate.model_fields) == {*model.model_fields, "owned"}


@pytest.mark.parametrize("value", ["yes", "true", 1, 0, None, [True]])
def test_owned_must_be_a_boolean(value):
    with pytest.raises(ValidationError) as info:
        candidate_model(Telescope).model_validate({**SCOPE, "owned": value})
    assert [e["loc"] for e in info.value.errors()] == [("owned",)]


def test_a_candidate_train_element_keeps_its_kind_rules_and_error_paths():
    reducer = ELEMENT.validate_python({"kind": "reducer", "factor": 0.8, "owned": True})
    assert isinstance(reducer, Reducer) and is_owned(reducer)
    assert not is_owned(ELEMENT.validate_python({"kind": "spacer", "optical_length_mm": 10}))
    with pytest.raises(ValidationError, match="must be one of"):
        ELEMENT.validate_python({"kind": "lens", "owned": True})
    with pytest.raises(ValidationError) as info:  # a reducer still may not lengthen
        ELEMENT.validate_python({"kind": "reducer", "factor": 1.5, "owned": True})
    assert "factor" in str(info.value)


def test_as_owned_copies_and_keeps_every_value():
    scope = Telescope(**SCOPE, name="200 mm", mass_kg=9)
    owned = as_owned(scope)
    assert is_owned(owned) and not is_owned(scope) and isinstance(owned, Telescope)
    assert owned.model_dump(exclude={"owned"}) == scope.model_dump()
    assert as_owned(owned) is owned and not is_owned(as_owned(owned, False))
    assert not is_owned(None)


def test_owned_parts_marks_only_the_parts_flagged():
    rig = Rig.model_validate({"name": "r", "telescope": SCOPE,
                              "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000},
                              "train": [{"kind": "reducer", "factor": 0.8}, {"kind": "spacer", "optical_length_mm": 10}],
                              "accessories": [{"name": "a"}, {"name": "b"}]})
    assert owned_parts(rig, {"telescope": False, "train": [False, False]}) is rig
    marked = owned_parts(rig, {"telescope": True, "camera": False, "mount": True,
                               "train": [False, True], "accessories": [True, False]})
    assert [is_owned(p) for p in (marked.telescope, marked.camera, *marked.train, *marked.accessories)] \
        == [True, False, False, True, True, False]
    assert marked.mount is None and not is_owned(rig.telescope)  # the rig itself is unchanged
