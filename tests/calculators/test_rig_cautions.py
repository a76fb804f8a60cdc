"""calculators/rig_cautions.py: a rig's own hazards, in words, exactly when its figures call for them."""

from __future__ import annotations

import math

import numpy as np
import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st
from calculators.batch import RigBatch
from calculators.rig_cautions import (
    LIFT_GUIDELINE_KG,
    PAYLOAD_PARTS,
    SMALL_BATCH_ROWS,
    cautions_by_arrays,
    cautions_by_rows,
    rig_cautions,
)
from calculators.schemas import Rig
from calculators.train_elements import ElementKind
from plugins.strategies import rig_lists

CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000, "mass_kg": 1.0}


def rig(tube_kg=None, capacity_kg=None, mount_kg=None, counterweight_kg=None, **extra) -> Rig:
    body = {"name": "r", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000, "mass_kg": tube_kg},
            "camera": CAMERA, **extra}
    if capacity_kg is not None:
        body["mount"] = {"capacity_kg": capacity_kg, "mass_kg": mount_kg}
    if counterweight_kg is not None:
        body["geometry"] = {"payload_arm_mm": 300, "counterweight_kg": counterweight_kg}
    return Rig.model_validate(body)


def cautions(*rigs: Rig) -> list[list[str]]:
    return rig_cautions(RigBatch.from_rigs(list(rigs)))


def test_the_lift_guideline_is_the_niosh_load_constant():
    # Waters et al. 1993 / NIOSH Publication 94-110 state the load constant as 23 kg and 51 lb; the
    # two agree to the rounding of the metric figure (51 lb = 23.13 kg, pint's avoirdupois pound).
    assert LIFT_GUIDELINE_KG == 23.0
    assert pint.UnitRegistry().Quantity(51, "lb").to("kg").magnitude == pytest.approx(23.0, abs=0.5)


def test_an_overloaded_mount_is_named_with_its_figures_in_words():
    [found] = cautions(rig(tube_kg=28.6, capacity_kg=18))
    over = [c for c in found if c.startswith("Over the mount's rating")]
    assert over == ["Over the mount's rating: this rig puts 29.6 kg on a mount rated for 18 kg (1.64 times its "
                    "rating). An overloaded mount can slip, tip over or drop the telescope, and its "
                    "counterweight can swing: use a mount rated for the payload, within its maker's rating."]


def test_a_heavy_single_item_names_the_item_and_the_source_of_the_figure():
    [found] = cautions(rig(tube_kg=10, capacity_kg=40, mount_kg=8, counterweight_kg=24.5))
    assert len(found) == 1
    assert found[0].startswith("Heavy lift: the counterweight weighs 24.5 kg, more than the revised NIOSH "
                               "lifting equation's 23 kg")
    assert "two people" in found[0]


def test_exactly_at_the_rating_and_at_the_guideline_no_caution():
    assert cautions(rig(tube_kg=19.0, capacity_kg=20), rig(tube_kg=23.0, capacity_kg=40)) == [[], []]


def test_unknown_masses_give_no_caution_rather_than_a_guess():
    assert cautions(rig(capacity_kg=5), rig()) == [[], []]


def test_the_stated_masses_alone_over_the_rating_are_a_caution_too():
    unknown_camera = rig(tube_kg=12, capacity_kg=10, camera={**CAMERA, "mass_kg": None})
    [[found]] = cautions(unknown_camera)
    assert "puts at least 12.0 kg (the masses stated) on a mount rated for 10 kg (1.20 times" in found


def test_each_rig_gets_its_own_cautions():
    found = cautions(rig(tube_kg=5, capacity_kg=10), rig(tube_kg=25, capacity_kg=10), rig(tube_kg=3))
    assert [len(c) for c in found] == [0, 2, 0]


def train_mass(model: Rig) -> float | None:
    """The train's mass as the batch states it (a drawn modifier is read as a one-element train):
    a filter without a mass weighs nothing, any other element without one leaves it unknown."""
    masses = [e.mass_kg if e.mass_kg is not None or e.kind != ElementKind.filter else 0.0 for e in model.train]
    return None if None in masses else math.fsum(masses)


@given(rig_lists(max_size=5, complete=True), st.floats(1, 60))
def test_cautions_appear_exactly_when_payload_exceeds_rating_or_an_item_the_guideline(rigs, capacity):
    rigs = [r.model_copy(update={"mount": r.mount.model_copy(update={"capacity_kg": capacity})})
            if r.mount else r for r in rigs]
    for model, found in zip(rigs, cautions(*rigs)):
        parts = [model.telescope.mass_kg, model.camera.mass_kg, train_mass(model),
                 sum(a.mass_kg for a in model.accessories)]
        stated = math.fsum(p for p in parts if p is not None)
        over = model.mount is not None and stated > model.mount.capacity_kg
        items = [m for m in (model.telescope.mass_kg, model.camera.mass_kg, train_mass(model),
                             model.mount.mass_kg if model.mount else None,
                             model.geometry.counterweight_kg if model.geometry else None) if m is not None]
        heavy = bool(items) and max(items) > LIFT_GUIDELINE_KG
        assert any(c.startswith("Over the mount's rating") for c in found) == over
        assert any(c.startswith("Heavy lift") for c in found) == heavy


@given(rig_lists(max_size=8, complete=None), st.lists(st.sampled_from(["at", "below", "drawn"]), min_size=8,
                                                      max_size=8), st.floats(1, 60))
def test_the_small_batch_path_gives_the_array_paths_cautions_word_for_word(rigs, where, capacity):
    # Exact, not within a tolerance: the row path adds the same doubles in the same order, so each
    # payload is the same double. Capacities set to the array path's own payload ("at": no caution)
    # and to the next double below it ("below": a caution) show that a single ulp apart would differ.
    batch = RigBatch.from_rigs(rigs)
    parts = np.stack([np.asarray(batch[c]) for c in PAYLOAD_PARTS])
    payload = np.nansum(parts, axis=0)
    chosen = {"at": payload, "below": np.nextafter(payload, -np.inf), "drawn": np.full(len(rigs), capacity)}
    capacities = np.array([chosen[w][i] for i, w in enumerate(where[:len(rigs)])])
    edged = RigBatch(columns={**batch.columns, "capacity_kg": capacities}, baseline=(0,))
    for one in (batch, edged):
        assert cautions_by_rows(one) == cautions_by_arrays(one)
    assert len(rigs) <= SMALL_BATCH_ROWS and rig_cautions(edged) == cautions_by_rows(edged)
