"""Every schema field of the OpenAPI document says what it is to a practitioner (api/field_descriptions.py
fills in what the models leave out): the committed document and the app's, walked to the bottom."""

from __future__ import annotations

import json
from pathlib import Path

from api.field_descriptions import BY_NAME, fill

DOCUMENT = Path(__file__).parents[1].parent / "openapi" / "openapi.json"


def properties(node, path="#"):
    """Every (path, property name, property schema) under ``node``, however deeply nested."""
    if isinstance(node, dict):
        for name, spec in (node.get("properties") or {}).items():
            yield f"{path}/properties/{name}", name, spec
        for key, value in node.items():
            yield from properties(value, f"{path}/{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from properties(value, f"{path}/{i}")


def test_every_schema_field_of_the_committed_document_has_a_description():
    document = json.loads(DOCUMENT.read_text(encoding="utf-8"))
    found = list(properties(document["components"]["schemas"]))
    assert len(found) > 300  # the walk does reach the fields
    missing = [path for path, _name, spec in found if not (spec.get("description") or "").strip()]
    assert missing == [], f"{len(missing)} fields without a description, e.g. {missing[:10]}"


def test_every_schema_field_of_the_app_s_document_has_a_description(client):
    schemas = client.get("/openapi.json").json()["components"]["schemas"]
    missing = [path for path, _name, spec in properties(schemas) if not (spec.get("description") or "").strip()]
    assert missing == []


def test_descriptions_say_more_than_the_field_name():
    document = json.loads(DOCUMENT.read_text(encoding="utf-8"))
    for path, name, spec in properties(document["components"]["schemas"]):
        words = spec["description"].strip().rstrip(".").lower()
        assert words != name.replace("_", " ").lower(), path


def test_the_units_of_the_physical_fields_are_named():
    schemas = json.loads(DOCUMENT.read_text(encoding="utf-8"))["components"]["schemas"]
    camera = schemas["Camera"]["properties"]
    assert camera["read_noise_e"]["description"] == "Read noise, e⁻ RMS per pixel."
    assert "e⁻ per second" in camera["dark_current_e_per_s"]["description"]
    assert "mm" in schemas["Telescope"]["properties"]["mirror_thickness_mm"]["description"]


def test_a_field_s_own_description_wins_and_a_missing_one_is_filled():
    document = {"components": {"schemas": {"Camera": {"properties": {
        "read_noise_e": {"type": "number"}, "mass_kg": {"type": "number", "description": "Own words."}}}}}}
    fill(document)
    props = document["components"]["schemas"]["Camera"]["properties"]
    assert props["read_noise_e"]["description"] == BY_NAME["read_noise_e"]
    assert props["mass_kg"]["description"] == "Own words."
