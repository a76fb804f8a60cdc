"""The evaluation request (api/evaluations/request.py): the combination limit's problem names what
was asked for, and the shape of candidates marked as owned."""

from __future__ import annotations

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import CAMERA, MOUNT, TELESCOPE, assert_problem

from api.app import create_app


def body(**changes):
    return {"telescopes": [TELESCOPE], "cameras": [CAMERA], "objectives": {"light_grasp.clear_area_mm2": "max"},
            **changes}


@pytest.fixture
def small_client(settings):
    with TestClient(create_app(settings.model_copy(update={"max_combinations": 100}))) as client:
        yield client


@pytest.mark.parametrize(("counts", "asked"), [
    ((3, 5, 7, 1), 105),
    ((101, 1, 1, 1), 101),
    ((2, 3, 4, 5), 120),
])
def test_too_many_combinations_names_each_list_the_product_and_the_limit(small_client, counts, asked):
    t, c, r, m = counts
    request = body(telescopes=[TELESCOPE] * t, cameras=[CAMERA] * c, trains=[[]] * r,
                   mounts=[MOUNT] * m)
    problem = assert_problem(small_client.post("/v1/evaluations", json=request), 422,
                             "telescopes", "cameras", "trains", "mounts")
    assert problem["title"] == "Too many combinations"
    assert (f"the request asks for {t} × {c} × {r} × {m} = {asked} combinations (telescopes × "
            "cameras × trains × mounts), more than the maximum of 100" in problem["detail"])
    assert (problem["combinations"], problem["max_combinations"]) == (asked, 100)


def test_the_old_modifiers_list_counts_as_the_trains(small_client):
    request = body(telescopes=[TELESCOPE] * 11, modifiers=[None] * 10)
    problem = assert_problem(small_client.post("/v1/evaluations", json=request), 422, "trains")
    assert "11 × 1 × 10 × 1 = 110 combinations" in problem["detail"] and problem["combinations"] == 110


def test_binning_factors_are_named_in_the_product(small_client):
    request = body(telescopes=[TELESCOPE] * 12, cameras=[CAMERA] * 3, binning=[1, 2, 3])
    problem = assert_problem(small_client.post("/v1/evaluations", json=request), 422, "cameras")
    assert ("the request asks for 12 × (3 × 3) × 1 × 1 = 108 combinations (telescopes × (cameras × "
            "binning factors) × trains × mounts), more than the maximum of 100" in problem["detail"])
    assert problem["combinations"] == 108


def test_at_the_limit_the_request_is_answered(small_client):
    request = body(telescopes=[TELESCOPE] * 4, cameras=[CAMERA] * 5, trains=[[]] * 5)
    answer = small_client.post("/v1/evaluations", json=request)
    assert answer.status_code == 200, answer.text
    assert answer.json()["evaluated"] == 100


# --- owned candidates ---------------------------------------------------------------------------
# Prices are invented; the sums are arithmetic, so they are compared exactly.

def eur(amount):
    return {"amount": amount, "currency": "EUR"}


PRICED_SCOPE = {**TELESCOPE, "price": eur(600)}
PRICED_CAMERA = {**CAMERA, "price": eur(900)}
PRICED_MOUNT = {**MOUNT, "price": eur(1200)}
REDUCER = {"name": "reducer 0.8x", "kind": "reducer", "factor": 0.8, "price": eur(250)}
PRICES = {"objectives": {"cost.purchase_price": "min", "cost.total_price": "min"}}


def prices(client, request, headers=None):
    answer = client.post("/v1/evaluations", json={**PRICES, **request}, headers=headers)
    assert answer.status_code == 200, answer.text
    values = answer.json()["baseline"]["values"]
    return values["cost.total_price"], values["cost.purchase_price"]


def test_inline_candidates_marked_owned_stay_out_of_the_purchase_price(client):
    request = {"telescopes": [{**PRICED_SCOPE, "owned": True}], "cameras": [PRICED_CAMERA],
               "trains": [[{**REDUCER, "owned": True}]], "mounts": [{**PRICED_MOUNT, "owned": False}],
               "accessories": [{"name": "finder", "price": eur(40), "owned": True},
                               {"name": "dew heater", "price": eur(60)}]}
    assert prices(client, request) == (3050, 2160)
    # Nothing marked: what is left to buy is the whole price.
    plain = {"telescopes": [PRICED_SCOPE], "cameras": [PRICED_CAMERA], "trains": [[REDUCER]],
             "mounts": [PRICED_MOUNT], "accessories": [{"name": "finder", "price": eur(40)}]}
    assert prices(client, plain) == (2990, 2990)


def test_stored_items_of_the_caller_are_owned_unless_the_request_says_otherwise(client, alice, bob):
    mine = client.post("/v1/telescopes", json=PRICED_SCOPE, headers=alice.headers).json()["id"]
    reducer = client.post("/v1/train-elements", json=REDUCER, headers=alice.headers).json()["id"]
    theirs = client.post("/v1/cameras", json={**PRICED_CAMERA, "visibility": "public"},
                         headers=bob.headers).json()["id"]
    request = {"telescopes": [{"id": mine}], "cameras": [{"id": theirs}], "trains": [[{"id": reducer}]]}
    # Alice's telescope and reducer are hers; Bob's public camera is not.
    assert prices(client, request, alice.headers) == (1750, 900)
    said = {"telescopes": [{"id": mine, "owned": False}], "cameras": [{"id": theirs, "owned": True}],
            "trains": [[{"id": reducer, "owned": False}]]}
    assert prices(client, said, alice.headers) == (1750, 850)
    # Seen by Bob, the same request owns only his camera (Alice's items are private: he cannot
    # read them, so he compares his camera with inline copies).
    copies = {"telescopes": [PRICED_SCOPE], "cameras": [{"id": theirs}], "trains": [[REDUCER]]}
    assert prices(client, copies, bob.headers) == (1750, 850)
    # Without a key nothing is anyone's: a public item is never owned by default.
    assert prices(client, {**copies}, None) == (1750, 1750)


@pytest.mark.parametrize(("changes", "field"), [
    ({"telescopes": [{**TELESCOPE, "owned": "yes"}]}, "telescopes.0.owned"),
    ({"cameras": [CAMERA, {**CAMERA, "owned": 1}]}, "cameras.1.owned"),
    ({"trains": [[], [REDUCER, {**REDUCER, "owned": "true"}]]}, "trains.1.1.owned"),
    ({"mounts": [None, {**MOUNT, "owned": None}]}, "mounts.1.owned"),
    ({"accessories": [{"name": "finder", "owned": [True]}]}, "accessories.0.owned"),
    ({"telescopes": [{"id": 1, "owned": "no"}]}, "telescopes.0.owned"),
    ({"trains": [[{"id": 1, "owned": 0}]]}, "trains.0.0.owned"),
    ({"telescopes": [{"id": 1, "owned": True, "name": "x"}]}, "telescopes.0.id"),
])
def test_owned_that_is_not_a_boolean_is_a_422_naming_the_field(client, changes, field):
    problem = assert_problem(client.post("/v1/evaluations", json=body(**changes)), 422, field)
    assert problem["title"] == "Invalid input"


def test_a_stored_id_with_owned_is_still_checked_for_who_may_read_it(client, alice, bob):
    private = client.post("/v1/telescopes", json=PRICED_SCOPE, headers=alice.headers).json()["id"]
    request = body(telescopes=[{"id": private, "owned": True}])
    problem = assert_problem(client.post("/v1/evaluations", json=request, headers=bob.headers), 422,
                             "telescopes.0.id")
    assert "that you can read" in problem["detail"]
