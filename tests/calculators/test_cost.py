"""Tests of calculators/builtin/cost.py: total price, price per cm² of clear aperture and per étendue, currencies."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from calculators.base import NoParams
from calculators.batch import RigBatch
from calculators.builtin.cost import Cost, CostParams
from calculators.builtin.etendue import Etendue
from calculators.errors import CalculationError
from calculators.ownership import candidate_model, is_owned, owned_parts
from calculators.schemas import Accessory, Camera, Rig, Telescope
from calculators.train_elements import Flattener
from calculators.units import unit_registry
from plugins.runner import run
from plugins.testing import compute, conformance_checks, rigs

CALC = Cost()
amounts = st.floats(0, 20_000)


def price(amount, currency="EUR"):
    return None if amount is None else {"amount": amount, "currency": currency}


def rig(telescope=None, camera=None, modifier=None, mount=None, accessories=(), currency="EUR",
        aperture_mm=200, obstruction_mm=0.0) -> Rig:
    data = {
        "name": "rig",
        "telescope": {"aperture_mm": aperture_mm, "focal_length_mm": 1000, "obstruction_mm": obstruction_mm,
                      "price": price(telescope, currency)},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000,
                   "price": price(camera, currency)},
        "accessories": [{"name": "part", "price": price(a, currency)} for a in accessories],
    }
    if modifier is not None:
        data["modifier"] = {"kind": "flattener", "factor": 1.0, "price": price(modifier, currency)}
    if mount is not None:
        data["mount"] = {"capacity_kg": 20, "price": price(mount, currency)}
    return Rig.model_validate(data)


def outputs(*rig_list, **params):
    return compute(CALC, RigBatch.from_rigs(list(rig_list)), CostParams(**params))


def units(*rig_list, **params):
    return CALC.output_units(RigBatch.from_rigs(list(rig_list)), CostParams(**params))


# --- properties ----------------------------------------------------------------------------------

@given(amounts, st.none() | amounts, st.none() | amounts, st.none() | amounts,
       st.lists(st.none() | amounts, max_size=3))
@settings(deadline=None)
def test_total_is_the_sum_of_the_priced_components(telescope, camera, modifier, mount, accessories):
    r = rig(telescope, camera, modifier, mount, accessories)
    priced = [p for p in (telescope, camera, modifier, mount, *accessories) if p is not None]
    # Additions of up to eight prices: 1e-14 relative rounding.
    assert outputs(r)["total_price"][0] == pytest.approx(math.fsum(priced), rel=1e-14)


@given(st.lists(amounts, min_size=1, max_size=4), st.floats(0.01, 100))
@settings(deadline=None)
def test_exchange_rates_convert_each_price_before_adding(amounts_usd, rate):
    r = rig(telescope=1000.0, camera=amounts_usd[0], mount=None, currency="EUR")
    data = r.model_dump()
    data["camera"]["price"] = {"amount": amounts_usd[0], "currency": "USD"}
    data["accessories"] = [{"name": "part", "price": price(a, "USD")} for a in amounts_usd[1:]]
    mixed = Rig.model_validate(data)
    total = outputs(mixed, currency="EUR", exchange_rates={"USD": rate})["total_price"][0]
    assert total == pytest.approx(1000.0 + rate * math.fsum(amounts_usd), rel=1e-13)


@given(rigs(), st.floats(0.1, 10))
@settings(deadline=None)
def test_price_per_cm2_scales_inversely_with_the_clear_area(r, k):
    t = r.telescope
    small = rig(telescope=500.0, aperture_mm=t.aperture_mm, obstruction_mm=t.obstruction_mm)
    large_d = t.aperture_mm * math.sqrt(k)
    large = rig(telescope=500.0, aperture_mm=large_d, obstruction_mm=t.obstruction_mm * math.sqrt(k))
    out = outputs(small, large)
    assert out["price_per_cm2"][1] * k == pytest.approx(out["price_per_cm2"][0], rel=1e-12)


@pytest.mark.parametrize("check", conformance_checks(Cost), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


# --- references ----------------------------------------------------------------------------------

def test_price_per_cm2_divides_by_the_area_net_of_the_obstruction():
    # Plane geometry (annulus π/4·(D² − d²)) converted from mm² to cm² with pint (1 cm² = 100 mm²).
    r = rig(telescope=1000.0, camera=800.0, obstruction_mm=60)
    area_cm2 = unit_registry().Quantity(math.pi / 4 * (200**2 - 60**2), "mm^2").to("cm^2").magnitude
    out = outputs(r)
    assert out["total_price"][0] == 1800.0
    assert out["price_per_cm2"][0] == pytest.approx(1800.0 / area_cm2, rel=1e-14)


def test_price_per_etendue_uses_the_etendue_calculators_value():
    # Same étendue as calculators/builtin/etendue.py, in cm²·deg² (1 m² = 10⁴ cm²).
    r = rig(telescope=1000.0, camera=800.0, obstruction_mm=60)
    batch = RigBatch.from_rigs([r])
    etendue_cm2_deg2 = Etendue().compute(batch, NoParams())["etendue_m2_deg2"][0] * 1e4
    out = outputs(r)
    assert out["price_per_etendue_cm2_deg2"][0] == pytest.approx(1800.0 / etendue_cm2_deg2, rel=1e-14)


def test_price_outputs_carry_the_currency_as_their_unit():
    assert units(rig(telescope=100.0), rig(camera=5.0)) == {
        "total_price": "EUR", "purchase_price": "EUR", "price_per_cm2": "EUR/cm^2",
        "price_per_etendue_cm2_deg2": "EUR/(cm^2*deg^2)",
    }
    assert units(rig(telescope=100.0, currency="USD"))["total_price"] == "USD"
    assert units(rig(telescope=100.0, currency="USD"), currency="EUR",
                 exchange_rates={"USD": 0.9})["total_price"] == "EUR"


def test_a_rig_with_no_price_has_a_null_total_not_zero():
    out = outputs(rig(telescope=None), rig(telescope=300.0))
    assert math.isnan(out["total_price"][0]) and out["total_price"][1] == 300.0
    assert math.isnan(out["price_per_cm2"][0])
    assert units(rig(telescope=None))["total_price"] == ""
    assert all(o.nullable for o in CALC.outputs)


def test_a_free_component_counts_as_priced_at_zero():
    out = outputs(rig(telescope=0.0))
    assert out["total_price"][0] == 0.0


def test_mixed_currencies_without_rates_are_a_clear_error():
    usd_camera = rig(telescope=1000.0).model_dump()
    usd_camera["camera"]["price"] = {"amount": 500, "currency": "USD"}
    mixed = Rig.model_validate(usd_camera)
    with pytest.raises(CalculationError, match=r"camera_price: prices in USD cannot be added to .*EUR"):
        outputs(mixed)
    # Across rigs too: one result has one unit.
    with pytest.raises(CalculationError, match="USD"):
        outputs(rig(telescope=1.0), rig(telescope=1.0, currency="USD"))
    # Through the runner it is the calculator's error, not an exception.
    result = run(CALC, RigBatch.from_rigs([mixed]), CostParams())
    assert result.values == {} and "exchange_rates" in result.error


def test_a_missing_rate_is_named():
    rigs_ = [rig(telescope=1.0), rig(telescope=1.0, currency="USD"), rig(telescope=1.0, currency="GBP")]
    with pytest.raises(CalculationError, match="no exchange rate from GBP into EUR"):
        outputs(*rigs_, currency="EUR", exchange_rates={"USD": 0.9})


def test_a_target_currency_without_rates_refuses_other_currencies():
    with pytest.raises(CalculationError, match="prices in USD cannot be added to prices in EUR"):
        outputs(rig(telescope=1.0, currency="USD"), currency="EUR")
    assert outputs(rig(telescope=7.0, currency="EUR"), currency="EUR")["total_price"][0] == 7.0


def test_mixed_currencies_in_a_sweep_are_found_on_the_component_axes():
    scopes = [Telescope(aperture_mm=100, focal_length_mm=500, price=price(300.0, c)) for c in ("EUR", "USD")]
    cameras = [Camera(pixel_size_um=3.8, width_px=1000, height_px=800, price=price(200.0))]
    batch = RigBatch.from_components(scopes, cameras)
    with pytest.raises(CalculationError, match="telescope_price"):
        CALC.compute(batch, CostParams())
    out = CALC.compute(batch, CostParams(currency="EUR", exchange_rates={"USD": 0.5}))
    np.testing.assert_allclose(np.broadcast_to(out["total_price"], batch.shape).ravel(), [500.0, 350.0])


@pytest.mark.parametrize(
    ("params", "message"),
    [({"exchange_rates": {"USD": 0.9}}, "name the `currency`"),
     ({"currency": "EUR", "exchange_rates": {"EUR": 2}}, "into itself must be 1"),
     ({"currency": "EUR", "exchange_rates": {"usd": 0.9}}, "should match pattern"),
     ({"currency": "EUR", "exchange_rates": {"USD": 0}}, "greater than 0"),
     ({"currency": "EUR", "exchange_rates": {"USD": float("nan")}}, "finite"),
     ({"currency": "euro"}, "should match pattern"),
     ({"rates": {}}, "Extra inputs")],
)
def test_params_are_validated(params, message):
    with pytest.raises(ValidationError, match=message):
        CostParams(**params)


# --- purchase_price: what is left to buy --------------------------------------------------------
# Arithmetic only (a sum over the parts not owned), so the checks are exact identities.

SLOTS = ("telescope", "camera", "mount")


@st.composite
def owned_rigs(draw, owned=st.booleans()):
    """A rig with drawn prices and drawn ownership of each part, and the ownership flags."""
    r = rig(draw(st.none() | amounts), draw(st.none() | amounts), draw(st.none() | amounts),
            draw(st.none() | amounts), draw(st.lists(st.none() | amounts, max_size=3)))
    flags = {slot: draw(owned) for slot in SLOTS}
    flags["train"] = [draw(owned) for _ in r.train]
    flags["accessories"] = [draw(owned) for _ in r.accessories]
    return owned_parts(r, flags), flags


def priced_parts(r):
    parts = [r.telescope, r.camera, r.mount, *r.train, *r.accessories]
    return [p for p in parts if p is not None and p.price is not None]


@given(st.lists(owned_rigs(), min_size=1, max_size=4))
@settings(deadline=None)
def test_purchase_price_is_the_sum_over_the_parts_not_owned_and_at_most_the_total(drawn):
    out = outputs(*[r for r, _ in drawn])
    for i, (r, _) in enumerate(drawn):
        total, purchase = out["total_price"][i], out["purchase_price"][i]
        if not priced_parts(r):
            assert math.isnan(total) and math.isnan(purchase)
            continue
        assert 0 <= purchase <= total
        expected = sum(p.price.amount for p in priced_parts(r) if not is_owned(p))
        assert purchase == pytest.approx(expected, rel=1e-12, abs=1e-9)


@given(st.lists(owned_rigs(owned=st.just(False)), min_size=1, max_size=4))
@settings(deadline=None)
def test_with_nothing_owned_the_purchase_price_is_the_total(drawn):
    out = outputs(*[r for r, _ in drawn])
    np.testing.assert_array_equal(out["purchase_price"], out["total_price"])


@given(st.lists(owned_rigs(owned=st.just(True)), min_size=1, max_size=4))
@settings(deadline=None)
def test_with_everything_owned_the_purchase_price_is_zero(drawn):
    out = outputs(*[r for r, _ in drawn])
    for i, (r, _) in enumerate(drawn):
        if priced_parts(r):
            assert out["purchase_price"][i] == 0.0
        else:
            assert math.isnan(out["purchase_price"][i])


def test_purchase_price_converts_currencies_like_the_total():
    # An owned 1000 USD telescope and a 500 EUR camera to buy, at an invented 0.9 EUR per USD.
    r = Rig.model_validate({
        "name": "rig", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000,
                                     "price": price(1000, "USD")},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000, "price": price(500)}})
    r = owned_parts(r, {"telescope": True})
    out = outputs(r, currency="EUR", exchange_rates={"USD": 0.9})
    assert (out["total_price"][0], out["purchase_price"][0]) == (pytest.approx(1400.0), 500.0)
    with pytest.raises(CalculationError, match="exchange rates"):
        outputs(r)  # the owned part's currency still has to be convertible: the total needs it


def test_purchase_price_in_a_sweep_counts_owned_candidates_out():
    scopes = [candidate_model(Telescope).model_validate(
        {"aperture_mm": a, "focal_length_mm": 1000, "price": price(p), "owned": o})
        for a, p, o in ((200, 600, True), (150, 400, False))]
    cams = [Camera(pixel_size_um=3.8, width_px=6000, height_px=4000, price=price(900))]
    batch = RigBatch.from_components(scopes, cams, [[], [candidate_model(Flattener).model_validate(
        {"kind": "flattener", "price": price(150), "owned": True})]],
        accessories=[Accessory(name="finder", price=price(40))])
    out = CALC.compute(batch, CostParams())
    total = np.broadcast_to(out["total_price"], batch.shape)[:, 0, :, 0]
    purchase = np.broadcast_to(out["purchase_price"], batch.shape)[:, 0, :, 0]
    np.testing.assert_array_equal(total, [[1540, 1690], [1340, 1490]])
    np.testing.assert_array_equal(purchase, [[940, 940], [1340, 1340]])
