"""The test module that DEVELOPERS.md's "Testing a plugin" shows, run against the guide's minimal example.

The guide's code is taken from DEVELOPERS.md as written, with the module name the guide gives the
example (``rigbench_sensor_diagonal``) pointed at ``plugins/examples/minimal_example.py``, so a
change to the kit or to the example that breaks the guide fails here.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
GUIDE = ROOT / "DEVELOPERS.md"


def guide_test_module() -> dict:
    text = GUIDE.read_text(encoding="utf-8")
    section = text[text.index("### 4. Testing a plugin"):text.index("### 5. Publishing")]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    code = code.replace("rigbench_sensor_diagonal", "plugins.examples.minimal_example")
    namespace: dict = {"__name__": "guide_test_sensor_diagonal"}
    exec(compile(code, "DEVELOPERS.md#testing-a-plugin", "exec"), namespace)
    return namespace


def test_the_guide_shows_a_test_module_that_calls_the_conformance_kit():
    namespace = guide_test_module()
    assert "conformance_checks" in namespace
    tests = {name: f for name, f in namespace.items() if name.startswith("test_")}
    assert "test_meets_the_calculator_contract" in tests


def test_the_guides_test_module_passes_on_the_minimal_example():
    namespace = guide_test_module()
    ran = 0
    for name, test in namespace.items():
        if not name.startswith("test_"):
            continue
        marks = [m for m in getattr(test, "pytestmark", []) if m.name == "parametrize"]
        if marks:
            argname, values = marks[0].args[:2]
            assert argname == "check"
            for check in values:
                check()
                ran += 1
        else:
            test()
            ran += 1
    assert ran >= 7  # six checks (no relative outputs) and the reference test


@pytest.mark.parametrize("name", ["check_calculator", "conformance_checks", "rigs", "sweeps"])
def test_the_names_the_guide_gives_are_importable_from_the_kit(name):
    import plugins.testing

    assert name in plugins.testing.__all__ and callable(getattr(plugins.testing, name))
