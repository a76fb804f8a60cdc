"""GET /v1/calculators and /v1/calculators/{name}: what each loaded calculator declares."""

from __future__ import annotations

from rigbench_testing import assert_problem


def test_list_matches_the_registry(client, app):
    body = client.get("/v1/calculators").json()
    assert [c["name"] for c in body["items"]] == list(app.state.registry.calculators)


def test_one_calculator_describes_outputs_params_sources_and_origin(client, app):
    calculator = app.state.registry.get("light_grasp")
    body = client.get("/v1/calculators/light_grasp").json()
    assert body["name"] == "light_grasp" and body["version"] == calculator.version
    assert body["summary"] == calculator.summary
    assert {o["name"]: o["unit"] for o in body["outputs"]} == {o.name: o.unit for o in calculator.outputs}
    assert body["params_schema"]["type"] == "object"
    assert set(body["params_schema"]["properties"]) == set(calculator.Params.model_fields)
    assert body["sources"] == list(calculator.sources) and body["sources"]
    assert body["origin"]["builtin"] is True and body["origin"]["distribution"] == "rigbench"


def test_every_output_is_listed_with_a_label_beside_its_unit(client):
    items = client.get("/v1/calculators").json()["items"]
    outputs = {(c["name"], o["name"]): o for c in items for o in c["outputs"]}
    assert all(o["label"] and len(o["label"]) <= 40 for o in outputs.values())
    assert outputs[("sampling", "pixel_scale_arcsec")]["label"] == "Pixel scale"
    assert outputs[("guiding", "pixel_scale_arcsec")]["label"] == "Pixel scale"  # one name, one label
    assert outputs[("diffraction_spikes", "spike_count")]["integer"] is True
    assert outputs[("light_grasp", "clear_area_mm2")]["integer"] is False


def test_a_comparison_carries_each_output_s_label(client):
    from rigbench_testing import INLINE_RIG

    body = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG], "calculators": ["sampling"]}).json()
    assert body["results"]["sampling"]["outputs"]["field_width_arcmin"]["label"] == "Field width"


def test_every_listed_calculator_can_be_fetched(client):
    for item in client.get("/v1/calculators").json()["items"]:
        assert client.get(f"/v1/calculators/{item['name']}").json() == item


def test_unknown_and_malformed_names(client):
    body = assert_problem(client.get("/v1/calculators/no_such_calculator"), 404)
    assert "light_grasp" in body["detail"]  # the problem lists what is available
    assert_problem(client.get("/v1/calculators/Bad-Name"), 422, "name")


def test_disabled_plugins_are_not_listed(settings):
    from fastapi.testclient import TestClient

    from api.app import create_app

    app = create_app(settings.model_copy(update={"disabled_plugins": ["light_grasp"]}))
    with TestClient(app) as client:
        assert "light_grasp" not in [c["name"] for c in client.get("/v1/calculators").json()["items"]]
        assert_problem(client.get("/v1/calculators/light_grasp"), 404)
