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
    assert (f"telescopes ({t}) × cameras ({c}) × trains ({r}) × mounts ({m}) = {asked} combinations"
            in problem["detail"])
    assert "maximum of 100" in problem["detail"]
    assert (problem["combinations"], problem["max_combinations"]) == (asked, 100)


def test_the_old_modifiers_list_counts_as_the_trains(small_client):
    request = body(telescopes=[TELESCOPE] * 11, modifiers=[None] * 10)
    problem = assert_problem(small_client.post("/v1/evaluations", json=request), 422, "trains")
    assert "trains (10)" in problem["detail"] and problem["combinations"] == 110


def test_at_the_limit_the_request_is_answered(small_client):
    request = body(telescopes=[TELESCOPE] * 4, cameras=[CAMERA] * 5, trains=[[]] * 5)
    answer = small_client.post("/v1/evaluations", json=request)
    assert answer.status_code == 200, answer.text
    assert answer.json()["evaluated"] == 100
