"""Cost: what a rig costs, and what it costs per unit of light grasp and of étendue.

Formulas (units in the names; C is the currency):

* ``total_price = Σ price`` over the priced components — telescope, train (its elements), camera, mount and
  accessories — in one currency [C]; unpriced components add nothing, and a rig with no price at
  all has a null total;
* ``purchase_price = Σ price`` over the priced parts *not owned* [C]: what is left to buy to go with
  what one has. A part is owned when it is marked so (:mod:`calculators.ownership`: ``"owned": true``
  on an evaluation's candidate, stored items of the caller by default). It is null where
  ``total_price`` is, 0 when every priced part is owned, and ``total_price`` itself when none is, so
  ``0 ≤ purchase_price ≤ total_price``;
* ``price_per_cm2 = total_price / A_clear`` [C/cm²], with ``A_clear = π/4·(D² − d²)`` the collecting
  area net of the central obstruction, converted from mm² (1 cm² = 100 mm²);
* ``price_per_etendue_cm2_deg2 = total_price / (A_clear · Ω)`` [C/(cm²·deg²)], Ω the solid angle of
  the sensor's field (see :mod:`calculators.builtin.etendue`).

Currencies: every price in the batch must be in one currency, which becomes the unit of the price
outputs. Prices in several currencies are an error (:class:`~calculators.errors.CalculationError`)
unless the params name a target ``currency`` and ``exchange_rates`` giving, for each other currency,
what one unit of it is worth in the target: ``{"currency": "EUR", "exchange_rates": {"USD": 0.9}}``.
Rates are whatever the caller passes; nothing here looks them up.

Sources: arithmetic; the clear area by plane geometry; étendue per Welford & Winston (1989), ch. 2.

Example: a 1000 EUR telescope of 200 mm aperture with a 60 mm obstruction (A = 285.9 cm²) and an
800 EUR camera: total_price 1800 EUR, price_per_cm2 ≈ 6.30 EUR/cm².
"""

from __future__ import annotations

import functools
from typing import Annotated

import numpy as np
from pydantic import Field, model_validator

from calculators.base import Calculator, Output
from calculators.batch import PRICE_SLOTS, RigBatch, per_batch
from calculators.builtin.etendue import field_solid_angle_deg2
from calculators.builtin.light_grasp import batch_clear_area_mm2
from calculators.errors import CalculationError
from calculators.schemas import Strict

CurrencyCode = Annotated[str, Field(pattern=r"^[A-Z]{3}$")]
Rate = Annotated[float, Field(gt=0, le=1e9)]


class CostParams(Strict):
    currency: CurrencyCode | None = Field(
        default=None, description="ISO 4217 code to report prices in; default: the rigs' one currency."
    )
    exchange_rates: dict[CurrencyCode, Rate] = Field(
        default_factory=dict,
        description="Value of one unit of each other currency in `currency`, e.g. {\"USD\": 0.9}.",
    )

    @model_validator(mode="after")
    def _rates_need_a_target(self):
        if self.exchange_rates and self.currency is None:
            raise ValueError("exchange_rates: name the `currency` the rates convert into")
        if self.exchange_rates.get(self.currency, 1) != 1:
            raise ValueError(f"exchange_rates: the rate of {self.currency} into itself must be 1")
        return self


def _priced_slots(batch: RigBatch) -> list[tuple[str, np.ndarray, np.ndarray, np.ndarray]]:
    """(slot, price, currency, priced mask) for every price column pair with at least one price.

    Worked out once per batch: the total, the currency and the units each need it.
    """
    store = getattr(batch, "derived", None)
    if store is not None and _PRICED_KEY in store:
        return store[_PRICED_KEY]
    found = []
    for slot in PRICE_SLOTS:
        price = batch[f"{slot}_price"]
        priced = ~np.isnan(price)
        if priced.any():
            priced.flags.writeable = False  # shared by the callers: none may change it
            found.append((slot, price, batch[f"{slot}_currency"], priced))
    if store is not None:
        store[_PRICED_KEY] = found
    return found


_PRICED_KEY = f"{__name__}.priced_slots"


@per_batch
def _first_currency(batch: RigBatch) -> str | None:
    """The currency of the first priced component found, or None if nothing is priced."""
    for _, _, currency, priced in _priced_slots(batch):
        # A price and its currency come from the same component, so they share a shape.
        # A comparison's columns share their shape already: a broadcast view would only cost.
        if getattr(currency, "shape", None) != priced.shape:
            currency = np.broadcast_to(currency, priced.shape)
        return str(currency.flat[int(np.argmax(priced))])
    return None


def batch_currency(batch: RigBatch, params: CostParams) -> str | None:
    """The currency the price outputs are in (None when nothing in the batch is priced)."""
    return params.currency or _first_currency(batch)


def _codes(currency: np.ndarray, mask: np.ndarray) -> str:
    return ", ".join(sorted(set(np.broadcast_to(currency, mask.shape)[mask].tolist())))


def _rate(slot: str, currency: np.ndarray, priced: np.ndarray, target: str,
          rates: dict[str, float]) -> np.ndarray | None:
    """Multiplier from each element's currency into ``target`` (None: all already in ``target``).

    Strings are compared only on the currency column's own shape (small, per component, in a sweep),
    never on the full batch.
    """
    is_target = currency == target
    unknown = priced & ~is_target
    if not unknown.any():
        return None
    if not rates:
        raise CalculationError(
            f"{slot}_price: prices in {_codes(currency, unknown)} cannot be added to prices in "
            f"{target} without exchange rates; pass the cost params `currency` and `exchange_rates`"
        )
    rate = np.where(is_target, 1.0, np.nan)
    for code, value in rates.items():
        matches = currency == code
        rate[matches] = value
        unknown &= ~matches
    if unknown.any():
        raise CalculationError(
            f"{slot}_price: no exchange rate from {_codes(currency, unknown)} into {target}; add it "
            "to the cost params `exchange_rates`"
        )
    return rate


def total_price(batch: RigBatch, params: CostParams) -> np.ndarray:
    """Sum of the priced components in the target currency; NaN where nothing is priced.

    Raises CalculationError for prices in several currencies without the rates to convert them.
    """
    return _prices(batch, params)[0]


def _prices(batch: RigBatch, params: CostParams) -> tuple[np.ndarray, np.ndarray]:
    """``(total_price, purchase_price)``: the second the same sum over the parts not owned (the
    ``<slot>_purchase_price`` columns), null where the total is; the very total array when no part
    in the batch is owned."""
    target = batch_currency(batch, params)
    if target is None:
        nothing = np.full((1,) * len(batch.shape), np.nan)
        return nothing, nothing
    slots = [(slot, price, priced, _rate(slot, currency, priced, target, params.exchange_rates))
             for slot, price, currency, priced in _priced_slots(batch)]

    def added(column_of) -> np.ndarray:
        total = None
        for slot, price, _priced, rate in slots:
            column = column_of(slot, price)
            # fmax treats NaN as missing, so an unpriced component adds 0 (prices are ≥ 0): the
            # total is of what is priced. One cheap pass, where a masked add would take several.
            converted = np.fmax(column if rate is None else column * rate, 0.0)
            total = converted if total is None else total + converted
        return total

    any_priced = functools.reduce(np.logical_or, [priced for _, _, priced, _ in slots])
    total = np.where(any_priced, added(lambda slot, price: price), np.nan)  # null: nothing priced
    columns = getattr(batch, "columns", batch)
    to_buy = {slot: columns.get(f"{slot}_purchase_price", price) for slot, price, _, _ in slots}
    if all(_same(to_buy[slot], price) for slot, price, _, _ in slots):
        return total, total  # nothing owned: what is left to buy is everything
    return total, np.where(any_priced, added(lambda slot, price: to_buy[slot]), np.nan)


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    return a is b or (np.shape(a) == np.shape(b) and bool(np.array_equal(a, b, equal_nan=True)))


class Cost(Calculator):
    """Total price of each rig, per cm² of clear aperture and per unit of étendue.

    See the module docstring for the formulas, the currency rules and an example.

    >>> from calculators.batch import RigBatch
    >>> from calculators.schemas import Rig
    >>> rig = Rig(name="200 mm", telescope={"aperture_mm": 200, "focal_length_mm": 1000,
    ...           "obstruction_mm": 60, "price": {"amount": 1000, "currency": "EUR"}},
    ...           camera={"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000,
    ...           "price": {"amount": 800, "currency": "EUR"}})
    >>> batch = RigBatch.from_rigs([rig])
    >>> out = Cost().compute(batch, CostParams())
    >>> float(out["total_price"][0]), round(float(out["price_per_cm2"][0]), 2)
    (1800.0, 6.3)
    >>> Cost().output_units(batch, CostParams())["price_per_cm2"]
    'EUR/cm^2'
    """

    name = "cost"
    version = "1.1.0"
    summary = ("Total price, what is left to buy, price per cm² of clear aperture and per unit of "
               "étendue.")
    Params = CostParams
    outputs = (
        Output("total_price", "", "Sum of the priced components, in the batch's one currency "
               "(the unit is the currency code).", nullable=True, label="Price"),
        Output("purchase_price", "", "What is left to buy: the summed price of the priced parts "
               "not marked owned, in the same currency (0 when you own every priced part; "
               "total_price when you own none).", nullable=True, label="Price to buy"),
        Output("price_per_cm2", "", "Total price per cm² of clear aperture (net of the obstruction).",
               nullable=True, label="Price per aperture area"),
        Output("price_per_etendue_cm2_deg2", "",
               "Total price per cm²·deg² of étendue (clear area × field solid angle).", nullable=True,
               label="Price per étendue"),
    )
    sources = (
        "Sum of prices (arithmetic); clear area π/4·(D² − d²) (plane geometry).",
        "Étendue: Welford & Winston, High Collection Nonimaging Optics, 1989, ch. 2.",
    )

    def compute(self, batch: RigBatch, params: CostParams) -> dict[str, np.ndarray]:
        total, purchase = _prices(batch, params)
        area_cm2 = batch_clear_area_mm2(batch) * 1e-2
        per_cm2 = total / area_cm2
        return {
            "total_price": total,
            "purchase_price": purchase,
            "price_per_cm2": per_cm2,
            "price_per_etendue_cm2_deg2": per_cm2 / field_solid_angle_deg2(batch),
        }

    def output_units(self, batch: RigBatch, params: CostParams) -> dict[str, str]:
        """The price outputs carry the currency code as their unit ("" when nothing is priced)."""
        currency = batch_currency(batch, params)
        if currency is None:
            return {o.name: "" for o in self.outputs}
        return {
            "total_price": currency,
            "purchase_price": currency,
            "price_per_cm2": f"{currency}/cm^2",
            "price_per_etendue_cm2_deg2": f"{currency}/(cm^2*deg^2)",
        }
