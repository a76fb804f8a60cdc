"""The example plugins in plugins/examples/: the guide's minimal example and the rigbench-dew distribution.

Both are loaded through the registry, as a plugin would be, and compute through ``compare``. Only the
last test depends on an installation: it checks that the rigbench-dew distribution, once installed with
pip, is discovered through its real entry point.
"""

from __future__ import annotations

import importlib.metadata
import math
from pathlib import Path

import pytest

from plugin_fakes import LIGHT_GRASP, builtin, entry_point
from plugins.compare import compare
from plugins.registry import load_registry

ROOT = Path(__file__).resolve().parents[2]
MINIMAL_EXAMPLE = ROOT / "plugins" / "examples" / "minimal_example.py"
DEW_SOURCE = ROOT / "plugins" / "examples" / "rigbench-dew" / "src"

# Generic rigs: a 200 mm f/5 newtonian and an 80 mm f/6 refractor.
RIGS = [
    {"name": "200 mm f/5 newtonian",
     "telescope": {"design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 44},
     "camera": {"pixel_size_um": 1.0, "width_px": 3000, "height_px": 4000}},
    {"name": "80 mm f/6 refractor",
     "telescope": {"design": "refractor", "aperture_mm": 80, "focal_length_mm": 480},
     "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}},
]
DEW_OUTPUTS = {"dew_point_c": "degC", "optics_temperature_c": "degC", "dew_margin_k": "K",
               "dew_risk": "", "heating_power_w": "W"}


def test_the_minimal_example_loads_and_computes_through_compare():
    registry = load_registry([
        builtin(*LIGHT_GRASP),
        entry_point("sensor_diagonal", "plugins.examples.minimal_example:SensorDiagonal", dist="sensor-diagonal"),
    ])
    assert registry.origin("sensor_diagonal").status == "loaded"
    result = compare(RIGS, ["sensor_diagonal", "light_grasp"], registry=registry).results["sensor_diagonal"]
    assert result.error is None
    assert result.outputs["sensor_diagonal_mm"].unit == "mm"
    # Pythagoras: a 3000 × 4000 grid of 1 µm pixels is a 3-4-5 triangle, 5 mm across; the second is
    # computed independently with math.hypot. 1e-12 relative covers float rounding.
    assert result.outputs["sensor_diagonal_mm"].values == pytest.approx(
        [5.0, 3.8 * math.hypot(6000, 4000) / 1000], rel=1e-12
    )


def test_the_minimal_example_takes_its_param():
    registry = load_registry([entry_point("sensor_diagonal", "plugins.examples.minimal_example:SensorDiagonal")])
    result = compare(RIGS[:1], params={"sensor_diagonal": {"margin_mm": 1.5}}, registry=registry)
    assert result.results["sensor_diagonal"].outputs["sensor_diagonal_mm"].values == pytest.approx([6.5], rel=1e-12)


def test_the_developer_guide_shows_the_minimal_example_verbatim():
    guide = ROOT / "DEVELOPERS.md"
    if not guide.exists():
        pytest.skip("DEVELOPERS.md is not on this branch; the guide's text lives in the integrator's hands")
    text = guide.read_text(encoding="utf-8")
    assert "Writing a calculator plugin" in text
    assert MINIMAL_EXAMPLE.read_text(encoding="utf-8").strip() in text


def test_the_dew_example_computes_with_default_params_through_a_fake_entry_point(monkeypatch):
    # Nothing installed: the example's source folder is put on the path for this test only.
    monkeypatch.syspath_prepend(str(DEW_SOURCE))
    registry = load_registry([
        builtin(*LIGHT_GRASP), entry_point("dew", "rigbench_dew.dew:Dew", dist="rigbench-dew", version="1.0.0"),
    ])
    assert registry.origin("dew").status == "loaded"
    comparison = compare(RIGS, ["dew", "light_grasp"], registry=registry)
    dew = comparison.results["dew"]
    assert dew.error is None
    assert {name: out.unit for name, out in dew.outputs.items()} == DEW_OUTPUTS
    assert comparison.results["light_grasp"].error is None
    power = dew.outputs["heating_power_w"].values
    # the heat goes through the front optic's area, π/4·D²: the ratio of the apertures squared
    assert power[0] / power[1] == pytest.approx((200 / 80) ** 2, rel=1e-12)


def _installed(distribution: str) -> bool:
    try:
        importlib.metadata.distribution(distribution)
    except importlib.metadata.PackageNotFoundError:
        return False
    return True


@pytest.mark.skipif(
    not _installed("rigbench-dew"),
    reason="the example plugin is not installed here; CI installs it with: pip install ./plugins/examples/rigbench-dew",
)
def test_the_installed_dew_plugin_is_discovered_through_its_entry_point_and_computes():
    registry = load_registry()  # the real, installed entry points
    entry = registry.origin("dew")
    assert (entry.distribution, entry.status, entry.builtin) == ("rigbench-dew", "loaded", False)
    assert entry.version == importlib.metadata.version("rigbench-dew")
    result = compare(RIGS, ["dew"], registry=registry).results["dew"]
    assert result.error is None
    assert set(result.outputs) == set(DEW_OUTPUTS)
