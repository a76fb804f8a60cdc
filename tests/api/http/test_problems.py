"""Every error is an RFC 9457 problem document (api/http/problems.py), whatever went wrong."""

from __future__ import annotations

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import INLINE_RIG, TELESCOPE, assert_problem

from api.app import create_app


def test_malformed_json_is_a_400_problem(client, alice):
    response = client.post("/v1/telescopes", content=b'{"aperture_mm": 200,', headers={
        **alice.headers, "Content-Type": "application/json"})
    body = assert_problem(response, 400, "(body)")
    assert body["title"] == "Malformed JSON"


def test_a_body_that_is_not_json_is_a_415_problem(client, alice):
    response = client.post("/v1/telescopes", content=b"aperture=200", headers={
        **alice.headers, "Content-Type": "application/x-www-form-urlencoded"})
    assert_problem(response, 415, "(body)")


@pytest.mark.parametrize("literal", [b"NaN", b"Infinity", b"1e999"])
def test_non_finite_numbers_are_refused_by_name(client, alice, literal):
    raw = b'{"aperture_mm": ' + literal + b', "focal_length_mm": 1000}'
    response = client.post("/v1/telescopes", content=raw, headers={**alice.headers, "Content-Type": "application/json"})
    assert_problem(response, 422, "aperture_mm")


def test_unknown_fields_are_named(client, alice):
    assert_problem(client.post("/v1/telescopes", json={**TELESCOPE, "colour": "white"}, headers=alice.headers),
                   422, "colour")


def test_several_errors_are_all_named(client, alice):
    response = client.post("/v1/cameras", json={"pixel_size_um": -1, "width_px": 0}, headers=alice.headers)
    assert_problem(response, 422, "pixel_size_um", "width_px", "height_px")


def test_a_body_over_the_size_limit_is_a_413_problem(settings):
    small = settings.model_copy(update={"max_body_bytes": 200})
    with TestClient(create_app(small)) as client:
        big = {"rigs": [INLINE_RIG] * 5}
        assert_problem(client.post("/v1/comparisons", json=big), 413)

        def chunks():  # no Content-Length: the limit applies while the body streams in
            yield b'{"rigs": ['
            for _ in range(50):
                yield b'{"id": 1},'
            yield b'{"id": 1}]}'

        response = client.post("/v1/comparisons", content=chunks(), headers={"Content-Type": "application/json"})
        assert_problem(response, 413)


def test_unknown_routes_and_methods_are_problems(client):
    assert_problem(client.get("/v1/nothing-here"), 404)
    assert_problem(client.delete("/v1/comparisons"), 405)


def test_an_unexpected_error_is_a_500_problem_without_internals(settings):
    app = create_app(settings)

    @app.get("/explode")
    def explode():
        raise RuntimeError("secret internals: /etc/passwd")

    with TestClient(app, raise_server_exceptions=False) as client:
        response = client.get("/explode")
    body = assert_problem(response, 500)
    assert "secret" not in response.text and "RuntimeError" not in response.text
    assert body["instance"] == "/explode"


def test_problem_documents_carry_the_request_path(client):
    assert client.get("/v1/rigs/42").json()["instance"] == "/v1/rigs/42"


def test_field_paths_drop_body_prefix_and_union_tags():
    from api.http.problems import field_path

    assert field_path(("body", "rigs", 0, "inline", "telescope", "inline", "aperture_mm")) == "rigs.0.telescope.aperture_mm"
    assert field_path(("query", "limit")) == "limit"
    assert field_path(("body",)) == "(body)"


@pytest.mark.parametrize(("params", "field"), [
    ({"limit": "ten"}, "limit"),
    ({"limit": 0}, "limit"),
    ({"offset": "-"}, "offset"),
    ({"visibility": "secret"}, "visibility"),
    ({"owner": "Not A Handle"}, "owner"),
])
def test_bad_list_parameters_are_named(client, params, field):
    assert_problem(client.get("/v1/rigs", params=params), 422, field)


def test_over_long_names_are_refused(client, alice):
    assert_problem(client.post("/v1/telescopes", json={**TELESCOPE, "name": "x" * 121}, headers=alice.headers),
                   422, "name")


@pytest.mark.parametrize("name", ["Teleskop für den Verein ☄", "'; DROP TABLE telescopes; --", "<script>x</script>"])
def test_odd_names_are_stored_and_returned_as_given(client, alice, name):
    created = client.post("/v1/telescopes", json={**TELESCOPE, "name": name}, headers=alice.headers)
    assert created.status_code == 201
    assert client.get(created.headers["location"], headers=alice.headers).json()["name"] == name
    assert client.get("/v1/telescopes", headers=alice.headers).json()["total"] == 1


def test_a_json_body_that_is_not_an_object_is_named(client, alice):
    assert_problem(client.post("/v1/telescopes", json=[1, 2], headers=alice.headers), 422, "(body)")
    assert_problem(client.post("/v1/comparisons", json={"rigs": "all"}), 422, "rigs")
