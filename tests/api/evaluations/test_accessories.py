"""Accessories (and geometry) in a purchase evaluation: one rig gives the same payload outputs
stored, inline and in a sweep, and the request's refusals name their fields.

The reference is the comparison route on the same rig, stored (POST /v1/rigs, then compared by id)
and inline: a sweep of one combination with the rig's accessories and geometry must give the very
same payload, capacity fraction, imaging margin, moments and inertia. The formulas themselves are
checked against their sources in tests/calculators/test_payload.py; here the three paths must
agree exactly (the same float operations on the same inputs: no tolerance is needed).
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rigbench_testing import CAMERA, TELESCOPE, assert_problem

from calculators.builtin.payload import Payload
from calculators.schemas import Accessory, Camera, Telescope
from calculators.sweep import EvaluationError, evaluate

#: Every payload output; all depend on masses the accessories add to.
PAYLOAD_OUTPUTS = ("payload_kg", "capacity_fraction", "imaging_margin_kg", "payload_moment_nm",
                   "counterweight_arm_mm", "ra_inertia_kg_m2", "tube_inertia_kg_m2")

masses = st.floats(0.0, 30.0, allow_nan=False).map(lambda m: round(m, 3))
accessory = st.builds(lambda i, m, price: {"name": f"accessory {i}", "mass_kg": m,
                                           **({"price": {"amount": price, "currency": "EUR"}}
                                              if price is not None else {})},
                      st.integers(0, 99), masses, st.none() | st.integers(0, 900))
element = st.sampled_from([
    {"name": "reducer 0.8x", "kind": "reducer", "factor": 0.8},
    {"name": "filter wheel", "kind": "filter-wheel"},
    {"name": "spacer 10 mm", "kind": "spacer", "optical_length_mm": 10},
    {"name": "flattener", "kind": "flattener"},
]).flatmap(lambda e: masses.map(lambda m: {**e, "mass_kg": m}))
geometry = st.none() | st.builds(lambda arm, cw: {"payload_arm_mm": arm, "counterweight_kg": cw},
                                 st.floats(50, 800).map(lambda v: round(v, 1)),
                                 st.floats(0.5, 40).map(lambda v: round(v, 2)))


@st.composite
def rigs(draw):
    return {
        "name": "drawn rig",
        "telescope": {**TELESCOPE, "mass_kg": draw(masses), "length_mm": 900, "tube_diameter_mm": 230},
        "camera": {**CAMERA, "mass_kg": draw(masses)},
        "train": draw(st.lists(element, max_size=3)),
        "mount": {"name": "mount", "capacity_kg": draw(st.floats(1, 100).map(lambda v: round(v, 1)))},
        "accessories": draw(st.lists(accessory, max_size=4)),
        "geometry": draw(geometry),
    }


def compared(client, rig_entry, headers=None) -> dict:
    answer = client.post("/v1/comparisons", json={"rigs": [rig_entry], "calculators": ["payload"]},
                         headers=headers)
    assert answer.status_code == 200, answer.text
    outputs = answer.json()["results"]["payload"]["outputs"]
    return {name: outputs[name]["values"][0] for name in PAYLOAD_OUTPUTS}


def swept(client, rig: dict, **extra) -> dict:
    body = {"telescopes": [rig["telescope"]], "cameras": [rig["camera"]], "trains": [rig["train"]],
            "mounts": [rig["mount"]], "accessories": rig["accessories"], "geometry": rig["geometry"],
            "objectives": {f"payload.{name}": "min" for name in PAYLOAD_OUTPUTS},
            "allow_incompatible": True, **extra}
    answer = client.post("/v1/evaluations", json=body)
    assert answer.status_code == 200, answer.text
    values = answer.json()["baseline"]["values"]
    return {name: values[f"payload.{name}"] for name in PAYLOAD_OUTPUTS}


@given(rig=rigs())
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
def test_one_rig_gives_the_same_payload_stored_inline_and_in_a_sweep(client, alice, rig):
    stored = client.post("/v1/rigs", json=rig, headers=alice.headers)
    assert stored.status_code == 201, stored.text
    by_id = compared(client, {"id": stored.json()["id"]}, alice.headers)
    inline = compared(client, rig)
    in_sweep = swept(client, rig)
    assert by_id == inline == in_sweep
    # The accessories are really in it: the payload is the sum of every stated mass.
    parts = [rig["telescope"]["mass_kg"], rig["camera"]["mass_kg"],
             *(e["mass_kg"] for e in rig["train"]), *(a["mass_kg"] for a in rig["accessories"])]
    assert in_sweep["payload_kg"] == pytest.approx(sum(parts), rel=1e-12, abs=1e-12)


def test_accessories_count_in_the_payload_price_and_cautions_of_every_combination(client):
    # Two mounts; 2 kg of accessories priced 300 EUR join every combination.
    rig = {"telescope": {**TELESCOPE, "mass_kg": 9.0, "price": {"amount": 600, "currency": "EUR"}},
           "camera": {**CAMERA, "mass_kg": 1.0}}
    body = {"telescopes": [rig["telescope"]], "cameras": [rig["camera"]],
            "mounts": [{"capacity_kg": 20}, {"capacity_kg": 11}],
            "objectives": {"payload.payload_kg": "min", "cost.total_price": "min"}, "limit": 5}
    bare = client.post("/v1/evaluations", json=body).json()
    loaded = client.post("/v1/evaluations", json={**body, "accessories": [
        {"name": "guide scope and camera", "mass_kg": 1.5, "price": {"amount": 300, "currency": "EUR"}},
        {"name": "dew heater", "mass_kg": 0.5}]}).json()
    for a, b in zip(bare["top"], loaded["top"]):
        assert b["values"]["payload.payload_kg"] == a["values"]["payload.payload_kg"] + 2.0
        assert b["values"]["cost.total_price"] == a["values"]["cost.total_price"] + 300
    # 12 kg on the 11 kg mount: the row's own caution says it is over the rating; 10 kg was not.
    over = [r for r in loaded["top"] if r["indices"]["mount"] == 1][0]
    assert any("Over the mount's rating" in c for c in over["cautions"])
    assert not [r for r in bare["top"] if r["indices"]["mount"] == 1][0]["cautions"]


def test_counterweights_count_toward_what_is_lifted_not_the_rated_payload(client):
    """The convention (README, payload calculator): the rated payload excludes the counterweights
    that balance it, so a heavier counterweight leaves payload_kg and capacity_fraction alone; it
    is one of the items a person lifts, so a counterweight over the 23 kg guideline gets its own
    heavy-lift caution (NIOSH Publication 94-110, see calculators/rig_cautions.py)."""
    def answer(counterweight_kg):
        body = {"telescopes": [{**TELESCOPE, "mass_kg": 9.0}], "cameras": [{**CAMERA, "mass_kg": 1.0}],
                "mounts": [{"capacity_kg": 20}],
                "geometry": {"payload_arm_mm": 300, "counterweight_kg": counterweight_kg},
                "objectives": {"payload.capacity_fraction": "min", "payload.counterweight_arm_mm": "min"}}
        return client.post("/v1/evaluations", json=body).json()["baseline"]

    light, heavy = answer(10), answer(25)
    assert light["values"]["payload.capacity_fraction"] == heavy["values"]["payload.capacity_fraction"] == 0.5
    # Balance: payload · arm = counterweight · its arm (10 kg · 300 mm / 25 kg = 120 mm).
    assert heavy["values"]["payload.counterweight_arm_mm"] == pytest.approx(120.0, rel=1e-12)
    assert not light["cautions"]
    assert any("counterweight weighs 25.0 kg" in c for c in heavy["cautions"])


def base(**changes):
    return {"telescopes": [TELESCOPE], "cameras": [CAMERA], "objectives": {"payload.payload_kg": "min"},
            **changes}


@pytest.mark.parametrize(("changes", "field"), [
    ({"accessories": [{"name": "finder", "mass_kg": -1}]}, "accessories.0.mass_kg"),
    ({"accessories": [{"mass_kg": 1}]}, "accessories.0.name"),
    ({"accessories": [{"name": "finder", "mass_kg": "heavy"}]}, "accessories.0.mass_kg"),
    ({"accessories": [{"name": "finder", "mass_kg": "2 m"}]}, "accessories.0.mass_kg"),
    ({"accessories": [{"name": "finder", "colour": "red"}]}, "accessories.0.colour"),
    ({"accessories": [{"name": "a", "price": {"amount": 1, "currency": "EUR"}},
                      {"name": "b", "price": {"amount": 1, "currency": "USD"}}]}, "accessories"),
    ({"accessories": [{"name": "a"}] * 51}, "accessories"),
    ({"accessories": {"name": "a"}}, "accessories"),
    ({"accessories": [{"id": 1}]}, "accessories.0.id"),
    ({"geometry": {"payload_arm_mm": 0, "counterweight_kg": 5}}, "geometry.payload_arm_mm"),
    ({"geometry": {"payload_arm_mm": 300}}, "geometry.counterweight_kg"),
])
def test_bad_accessories_and_geometry_are_422s_naming_the_field(client, changes, field):
    assert_problem(client.post("/v1/evaluations", json=base(**changes)), 422, field)


def test_the_engine_refuses_bad_accessories_naming_the_field():
    def run(**kw):
        return evaluate([Telescope(aperture_mm=200, focal_length_mm=1000)],
                        [Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)],
                        objectives={"payload.payload_kg": "min"}, calculators={"payload": Payload()}, **kw)

    with pytest.raises(EvaluationError) as info:
        run(accessories=[{"name": "finder", "mass_kg": -1}])
    assert info.value.loc == ("accessories", 0, "mass_kg")
    with pytest.raises(EvaluationError) as info:
        run(accessories=[{"name": "a", "price": {"amount": 1, "currency": "EUR"}},
                         {"name": "b", "price": {"amount": 1, "currency": "USD"}}])
    assert info.value.loc == ("accessories",)
    with pytest.raises(EvaluationError) as info:
        run(geometry={"payload_arm_mm": -3, "counterweight_kg": 1})
    assert info.value.loc == ("geometry", "payload_arm_mm")
    # Given as models, they are used as they are.
    result = run(accessories=[Accessory(name="finder", mass_kg=0.4)])
    assert result.baseline.values["payload.payload_kg"] is None  # the tube's mass is not stated
