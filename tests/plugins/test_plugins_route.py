"""Tests of api/discovery/plugins.py: ``GET /v1/plugins`` lists distributions, calculators and statuses.

The router is mounted on a bare FastAPI app whose ``state.registry`` comes from injected entry points,
so the listing does not depend on what is installed. The last test runs against the real app when
``api.app`` is present (after the service and the plugin work are merged).
"""

from __future__ import annotations

import importlib.metadata
import importlib.util

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from plugin_fakes import LIGHT_GRASP, builtin, entry_point

from api.discovery import plugins as plugins_route
from plugins.registry import load_registry

EPS = [
    builtin(*LIGHT_GRASP),
    builtin("speed", "calculators.not_written_yet:Speed"),
    entry_point("good", "plugin_fakes:Good", dist="acme-bench-tools", version="0.3.1"),
    entry_point("raises", "plugin_fakes:Raises", dist="acme-bench-tools", version="0.3.1"),
    entry_point("broken", "plugin_broken_import:NeverSeen", dist="broken-tools", version="2.0"),
    entry_point("light_grasp", "plugin_fakes:Good", dist="copycat-tools", version="1.0"),
    entry_point("quiet", "plugin_fakes:Good", dist="quiet-tools", version="0.1"),
]


@pytest.fixture
def client():
    app = FastAPI()
    app.include_router(plugins_route.router)
    app.state.registry = load_registry(EPS, disabled=["quiet-tools"])
    with TestClient(app) as test_client:
        yield test_client


def test_lists_every_distribution_with_its_calculators_status_and_reason(client):
    response = client.get("/v1/plugins")
    assert response.status_code == 200
    assert response.json() == {"items": [
        {"distribution": "rigbench", "version": "0.1.0", "builtin": True, "status": "failed", "calculators": [
            {"name": "light_grasp", "entry_point": "calculators.builtin.light_grasp:LightGrasp", "status": "loaded",
             "reason": None},
            {"name": "speed", "entry_point": "calculators.not_written_yet:Speed", "status": "failed",
             "reason": "could not be loaded: ModuleNotFoundError: No module named 'calculators.not_written_yet'"},
        ]},
        {"distribution": "acme-bench-tools", "version": "0.3.1", "builtin": False, "status": "loaded",
         "calculators": [
             {"name": "good", "entry_point": "plugin_fakes:Good", "status": "loaded", "reason": None},
             # fails only when it computes: loading cannot know
             {"name": "raises", "entry_point": "plugin_fakes:Raises", "status": "loaded", "reason": None},
         ]},
        {"distribution": "broken-tools", "version": "2.0", "builtin": False, "status": "failed", "calculators": [
            {"name": "broken", "entry_point": "plugin_broken_import:NeverSeen", "status": "failed",
             "reason": "could not be loaded: ModuleNotFoundError: No module named "
                       "'rigbench_fake_dependency_that_is_not_installed'"},
        ]},
        {"distribution": "copycat-tools", "version": "1.0", "builtin": False, "status": "failed", "calculators": [
            {"name": "light_grasp", "entry_point": "plugin_fakes:Good", "status": "failed",
             "reason": "name 'light_grasp' belongs to the built-in calculator of rigbench 0.1.0; the built-in wins"},
        ]},
        {"distribution": "quiet-tools", "version": "0.1", "builtin": False, "status": "disabled", "calculators": [
            {"name": "quiet", "entry_point": "plugin_fakes:Good", "status": "disabled",
             "reason": "disabled by settings"},
        ]},
    ]}


def test_the_listing_is_documented_with_its_response_model(client):
    document = client.get("/openapi.json").json()
    operation = document["paths"]["/v1/plugins"]["get"]
    assert operation["operationId"] == "list_plugins"
    schema = operation["responses"]["200"]["content"]["application/json"]["schema"]
    assert schema == {"$ref": "#/components/schemas/PluginList"}
    plugin = document["components"]["schemas"]["PluginPublic"]
    assert set(plugin["required"]) == {"distribution", "version", "builtin", "status", "calculators"}
    status = document["components"]["schemas"]["PluginCalculatorPublic"]["properties"]["status"]
    assert status["enum"] == ["loaded", "failed", "disabled"]


@pytest.mark.skipif(importlib.util.find_spec("api.app") is None, reason="api.app (the service) is not on this branch")
def test_the_real_app_lists_a_broken_plugin_as_failed_while_comparisons_still_work(tmp_path):
    from api.app import create_app
    from api.settings import Settings
    from api.storage import db

    app = create_app(Settings(database_url=f"sqlite:///{tmp_path / 'rigbench.db'}", data_dir=tmp_path / "data"))
    db.upgrade(app.state.engine)
    app.state.registry = load_registry([
        builtin(*LIGHT_GRASP),
        entry_point("broken", "plugin_broken_import:NeverSeen", dist="broken-tools"),
        entry_point("raises", "plugin_fakes:Raises"),
    ])
    rig = {"name": "200 mm f/5 newtonian",
           "telescope": {"aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 44},
           "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}}
    with TestClient(app) as client:
        listing = client.get("/v1/plugins")
        comparison = client.post("/v1/comparisons", json={"rigs": [rig], "calculators": ["light_grasp", "raises"]})
    assert listing.status_code == 200
    broken = next(p for p in listing.json()["items"] if p["distribution"] == "broken-tools")
    assert broken["status"] == "failed"
    assert "rigbench_fake_dependency_that_is_not_installed" in broken["calculators"][0]["reason"]
    assert comparison.status_code == 200
    results = comparison.json()["results"]
    assert results["light_grasp"]["error"] is None
    assert results["raises"]["error"] == "raises failed: ZeroDivisionError: deliberate failure in compute"


def _dew_installed() -> bool:
    try:
        importlib.metadata.distribution("rigbench-dew")
    except importlib.metadata.PackageNotFoundError:
        return False
    return True


@pytest.mark.skipif(importlib.util.find_spec("api.app") is None, reason="api.app (the service) is not on this branch")
@pytest.mark.skipif(
    not _dew_installed(),
    reason="the example plugin is not installed here; CI installs it with: pip install ./plugins/examples/rigbench-dew",
)
def test_the_installed_example_plugin_is_listed_and_computes_through_the_api(tmp_path):
    from api.app import create_app
    from api.settings import Settings
    from api.storage import db

    app = create_app(Settings(database_url=f"sqlite:///{tmp_path / 'rigbench.db'}", data_dir=tmp_path / "data"))
    db.upgrade(app.state.engine)
    rigs = [
        {"name": "200 mm f/5 newtonian", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000},
         "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}},
        {"name": "100 mm f/6 refractor", "telescope": {"aperture_mm": 100, "focal_length_mm": 600},
         "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}},
    ]
    with TestClient(app) as client:
        listing = client.get("/v1/plugins")
        comparison = client.post("/v1/comparisons", json={
            "rigs": rigs, "calculators": ["dew"],
            "params": {"dew": {"ambient_temperature_c": 4, "relative_humidity_percent": 92}},
        })
    assert listing.status_code == 200
    [dew_plugin] = [p for p in listing.json()["items"] if p["distribution"] == "rigbench-dew"]
    assert dew_plugin["version"] == importlib.metadata.version("rigbench-dew")
    assert dew_plugin["calculators"] == [
        {"name": "dew", "entry_point": "rigbench_dew.dew:Dew", "status": "loaded", "reason": None}
    ]
    assert comparison.status_code == 200
    dew = comparison.json()["results"]["dew"]
    assert dew["error"] is None
    assert dew["outputs"]["heating_power_w"]["unit"] == "W"
    power = dew["outputs"]["heating_power_w"]["values"]
    # the heat goes through the front optic's area, π/4·D²: twice the aperture, four times the power
    assert power[0] == pytest.approx(4 * power[1], rel=1e-12)
