"""Descriptions for the OpenAPI document's schema fields that do not carry one of their own.

A field's own ``Field(description=...)`` always wins; these fill the rest, so every property of every
schema in ``openapi/openapi.json`` tells a practitioner what it is and in which unit
(tests/api/test_field_descriptions.py walks the document). ``BY_SCHEMA`` holds the names that mean
different things in different schemas (``kind``, ``status``, ``id``…); ``BY_NAME`` the rest.
"""

from __future__ import annotations

from typing import Any

BY_NAME: dict[str, str] = {
    # equipment, in the units of the field names
    "name": "A name people recognise, e.g. '200 mm f/5 newtonian' (at most 120 characters).",
    "aperture_mm": "Clear aperture diameter, mm.",
    "focal_length_mm": "Focal length, mm.",
    "length_mm": "Tube length, mm (for wind load and moments).",
    "tube_diameter_mm": "Outer tube diameter, mm (for wind load and inertia).",
    "spider_vanes": "Straight vanes holding the secondary mirror (0 for none); sets the diffraction spikes.",
    "mirror_thickness_mm": "Primary mirror thickness at the edge, mm (for cool-down times).",
    "mass_kg": "Mass, kg.",
    "apparent_field_deg": "Apparent field of view of the eyepiece, degrees (at most 130).",
    "field_stop_mm": "Field stop diameter of the eyepiece, mm; when stated it sets the true field.",
    "eye_relief_mm": "Eye relief: distance from the eyepiece's last lens to the exit pupil, mm.",
    "price": "Purchase price and its currency.",
    "width_px": "Sensor width, pixels.",
    "height_px": "Sensor height, pixels.",
    "quantum_efficiency": "Peak quantum efficiency, 0-1 (fraction of photons recorded).",
    "read_noise_e": "Read noise, e⁻ RMS per pixel.",
    "dark_current_e_per_s": "Dark current, e⁻ per second per pixel at the operating temperature.",
    "throughput": "Optical transmission, 0-1; when omitted, a per-kind default (common practice) is used.",
    "counterweight_kg": "Total counterweight on the declination shaft, kg.",
    "accessories": "Other items on the mount (finder, guide scope, dew heater…), each with its mass.",
    "geometry": "Where the payload sits on a german-equatorial mount, for moments and inertia.",
    "telescope": "The telescope: inline, or {\"id\": N} of a stored one.",
    "camera": "The camera: inline, or {\"id\": N} of a stored one.",
    "modifier": "A focal reducer, corrector, flattener or barlow: inline, {\"id\": N}, or none.",
    "mount": "The mount: inline, {\"id\": N}, or none.",
    "telescopes": "The telescopes, oldest first.",
    "cameras": "The cameras, oldest first.",
    "modifiers": "The focal reducers, correctors, flatteners and barlows, oldest first.",
    "mounts": "The mounts, oldest first.",
    # stored items and pages
    "id": "Stored id.",
    "visibility": "private: only the owner sees it; public: anyone may read it without a key.",
    "version": "Starts at 1, grows by one on each change; the ETag carries it.",
    "created_at": "When it was stored (UTC, ISO 8601).",
    "updated_at": "When it last changed (UTC, ISO 8601).",
    "owner": "Handle of the owning account.",
    "limit": "Page size asked for.",
    "offset": "How many items were skipped before this page.",
    "items": "The items of this page.",
    "total": "How many there are in all.",
    # accounts
    "display_name": "Name shown to people, e.g. 'Kestrel Ridge Astronomy Club'.",
    "location": "Where the account is, in words (town, region).",
    "contact_url": "Web page or mailto: link for contact.",
    "club": "Handle of the club.",
    "role": "member or officer: what the person may do in the club.",
    "since": "When the person joined (UTC, ISO 8601).",
    "borrower": "Handle of the member who borrows the item.",
    # calculators and results
    "summary": "What the calculator computes, in one line.",
    "outputs": "Its outputs, by name.",
    "sources": "Where the formulas come from (author, title, year; 'common practice' for rules of thumb).",
    "cautions": "Safety and validity notes to show with every result.",
    "origin": "The plugin distribution that provides it.",
    "builtin": "True for a calculator that ships with rigbench.",
    "calculators": "Calculators the distribution offers.",
    "results": "Each calculator's result, by calculator name.",
    "baseline_feasible": "Whether the baseline combination meets every constraint.",
    "indices": "The combination, as an index into each component list.",
    "ids": "Stored ids of the combination's components (null where inline or none).",
    "key": "The output, \"<calculator>.<output>\".",
    "saved": "The value in the saved answer.",
    "now": "The value computed now.",
    "changes": "What differs between the saved answer and the one computed now.",
    "report_url": "Path of the report page (HTML).",
    "stored_equipment": "Each stored {\"id\": N} entry of the request, compared with that equipment now.",
    "changed_fields": "Fields of the equipment that changed since the evaluation was saved.",
    "slot": "The rig's component slot (telescope, modifier, camera, mount).",
    "taken_at": "When the copy was taken (UTC, ISO 8601).",
    "at": "When it happened (UTC, ISO 8601).",
    # loans
    "item": "The club item: its kind and id.",
    "item_name": "Name of the item when the loan was made.",
    "start": "First day of the loan (YYYY-MM-DD).",
    "due": "Last day: the item is due back then (YYYY-MM-DD).",
    "returned_on": "Day the item came back (YYYY-MM-DD); null while out.",
    "condition_out": "State of the item when it went out, in words.",
    "condition_in": "State of the item when it came back, in words.",
    "note": "A note for the officers or the borrower.",
    # errors
    "message": "What is wrong with the field and what would be accepted.",
    "reason": "Why, in words.",
    "detail": "What went wrong, for a person.",
    "errors": "One entry per offending field, naming it.",
    "title": "Short summary of the problem type.",
}

BY_SCHEMA: dict[tuple[str, str], str] = {
    ("Indices", "telescope"): "Position (from 0) in the request's telescopes list.",
    ("Indices", "camera"): "Position (from 0) in the request's cameras list.",
    ("Indices", "train"): "Position (from 0) in the request's trains list.",
    ("Indices", "mount"): "Position (from 0) in the request's mounts list.",
    ("Problem", "status"): "HTTP status code of this answer.",
    ("Health", "status"): "'ok' when the service answers.",
    ("Health", "version"): "Version of the running rigbench.",
    ("LoanPublic", "status"): "Where the loan stands: requested, accepted, declined, out or returned.",
    ("LoanPublic", "version"): "Starts at 1, grows by one on each change.",
    ("CalculatorPublic", "version"): "Version of the calculator (PEP 440); shown with every result.",
    ("CalculatorResult", "version"): "Version of the calculator that computed this result.",
    ("Origin", "version"): "Version of the distribution.",
    ("CalculatorPublic", "name"): "Calculator name (lower_snake_case), the key in results.",
    ("CalculatorResult", "outputs"): "Each output's label, unit and one value per rig, by output name.",
    ("ClubPublic", "kind"): "person or club.",
    ("Me", "kind"): "person or club.",
    ("ItemRef", "kind"): "Kind of equipment: telescopes, cameras, modifiers or mounts.",
    ("HistoryList", "kind"): "Kind of the item whose history this is.",
    ("HistoryList", "id"): "Id of the item whose history this is.",
    ("StoredEntry", "kind"): "Kind of equipment of the entry.",
    ("Modifier", "kind"): "reducer, corrector, flattener, reducer-flattener or barlow.",
    ("RowError", "reason"): "Why the rig's values are null, in words.",
    ("ImportResult", "total"): "How many items were stored.",
    ("Export", "owner"): "Handle of the account whose equipment this is.",
}


def fill(document: dict[str, Any]) -> None:
    """Give every schema property without a description the one above (in place)."""
    for schema_name, schema in document.get("components", {}).get("schemas", {}).items():
        for field, spec in (schema.get("properties") or {}).items():
            if spec.get("description"):
                continue
            text = BY_SCHEMA.get((schema_name, field))
            if text is None and field == "kind" and "Modifier" in schema_name:
                text = BY_SCHEMA[("Modifier", "kind")]
            if text is None and field == "kind":
                text = _element_kind(spec)
            if text is None:
                text = BY_NAME.get(field)
            if text is not None:
                spec["description"] = text


TRAIN_KINDS = ("reducer, reducer-flattener, flattener, corrector, barlow (or extender), filter, filter-wheel, "
               "off-axis-guider, spacer or eyepiece")


def _element_kind(spec: dict[str, Any]) -> str:
    """The ``kind`` of an imaging-train element: the values its schema allows, or all of them."""
    values = [spec["const"]] if "const" in spec else spec.get("enum")
    if values:
        return f"Kind of imaging-train element: {' or '.join(values)}."
    return f"Kind of imaging-train element: {TRAIN_KINDS}."
