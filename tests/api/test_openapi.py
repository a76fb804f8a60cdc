"""The committed openapi/openapi.json is the app's document, and it declares problem responses."""

from __future__ import annotations

import json
from pathlib import Path

from api.openapi import render

COMMITTED = Path(__file__).resolve().parents[2] / "openapi" / "openapi.json"


def test_committed_document_matches_the_app():
    assert COMMITTED.read_text(encoding="utf-8") == render(), (
        "openapi/openapi.json is out of date: run `python -m api.openapi > openapi/openapi.json`"
    )


def _operations():
    document = json.loads(render())
    for path, item in document["paths"].items():
        for method, operation in item.items():
            yield path, method, operation


def test_every_error_response_is_a_problem_document():
    for path, method, operation in _operations():
        for status, response in operation["responses"].items():
            if int(status) >= 400:
                assert list(response["content"]) == ["application/problem+json"], (path, method, status)


def test_routes_that_take_input_declare_422_and_writes_declare_401():
    for path, method, operation in _operations():
        if "{" in path or method in {"post", "put", "patch"}:
            assert "422" in operation["responses"], (path, method)
        if method in {"post", "put", "patch", "delete"} and path != "/v1/comparisons":
            assert "401" in operation["responses"], (path, method)
        if "requestBody" in operation:
            assert {"400", "413", "415"} <= set(operation["responses"]), (path, method)


def test_path_ids_are_bounded_to_signed_64_bit():
    for path, _method, operation in _operations():
        for parameter in operation.get("parameters", []):
            if parameter["name"] == "item_id":
                assert parameter["schema"]["minimum"] == 1
                assert parameter["schema"]["maximum"] == 2**63 - 1


def test_comparisons_offer_json_and_csv():
    document = json.loads(render())
    content = document["paths"]["/v1/comparisons"]["post"]["responses"]["200"]["content"]
    assert set(content) == {"application/json", "text/csv"}
