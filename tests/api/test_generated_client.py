"""openapi/openapi.json is a contract tools can read: openapi-python-client (a widely used generator,
in the test extra) turns it into a client without a single warning, and that client stores a rig,
reads it back and runs a comparison against the real app (offline: httpx talks to the ASGI app)."""

from __future__ import annotations

import importlib
import math
import subprocess
import sys
from pathlib import Path

import pytest
from rigbench_testing import CAMERA, TELESCOPE

DOCUMENT = Path(__file__).parents[2] / "openapi" / "openapi.json"
PACKAGE = "rigbench_generated"


@pytest.fixture(scope="module")
def generated(tmp_path_factory):
    """The client generated from the committed document, importable as ``rigbench_generated``."""
    folder = tmp_path_factory.mktemp("client")
    config = folder / "config.yaml"
    # No formatter run (nothing outside Python); a CSV body is sent as the bytes of the file.
    config.write_text("post_hooks: []\ncontent_type_overrides:\n  text/csv: application/octet-stream\n", encoding="utf-8")
    generator = Path(sys.executable).parent / "openapi-python-client"
    done = subprocess.run(
        [str(generator), "generate", "--path", str(DOCUMENT), "--meta", "none", "--config", str(config),
         "--output-path", str(folder / PACKAGE)],
        capture_output=True, text=True, timeout=600, cwd=folder,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    yield done, folder
    for name in [m for m in sys.modules if m == PACKAGE or m.startswith(PACKAGE + ".")]:
        del sys.modules[name]


def test_the_document_generates_a_client_without_warnings(generated):
    done, folder = generated
    output = done.stdout + done.stderr
    assert "warning" not in output.lower(), output
    assert "Unable to" not in output and "omitted" not in output, output
    # The rig answers are there (they were dropped while request and answer variants shared a title).
    assert (folder / PACKAGE / "models" / "rig_public.py").exists()


def test_the_generated_client_stores_reads_and_compares_a_rig(generated, client, alice, monkeypatch):
    _done, folder = generated
    monkeypatch.syspath_prepend(str(folder))
    rb = importlib.import_module(PACKAGE)
    models = importlib.import_module(f"{PACKAGE}.models")
    create_rig = importlib.import_module(f"{PACKAGE}.api.rigs.create_rig")
    get_rig = importlib.import_module(f"{PACKAGE}.api.rigs.get_rig")
    compare_rigs = importlib.import_module(f"{PACKAGE}.api.comparisons.compare_rigs")

    api = rb.AuthenticatedClient(base_url="http://testserver", token=alice.key, raise_on_unexpected_status=True)
    api.set_httpx_client(client)  # FastAPI's TestClient is an httpx.Client on the ASGI app
    client.headers.update(alice.headers)

    body = models.RigCreate.from_dict({
        "name": "generated", "telescope": {**TELESCOPE, "mass_kg": 9.0}, "camera": CAMERA,
        "mount": {"type": "german-equatorial", "drive": "worm", "capacity_kg": 20},
    })
    made = create_rig.sync(client=api, body=body)
    assert isinstance(made, models.RigPublic), made
    read = get_rig.sync(made.id, client=api)
    assert isinstance(read, models.RigPublic)
    assert read.name == "generated" and read.resolved.telescope.aperture_mm == 200
    assert read.resolved.mount.drive == models.Drive.WORM

    request = models.ComparisonRequest.from_dict({"rigs": [{"id": made.id}], "calculators": ["sampling"]})
    compared = compare_rigs.sync(client=api, body=request)
    assert isinstance(compared, models.Comparison), compared
    sampling = compared.results["sampling"]
    # p/f in radians times 648 000/π arcsec per radian: 3.8 µm at 1000 mm is 0.7838″ per pixel.
    assert sampling.outputs["pixel_scale_arcsec"].values[0] == pytest.approx(3.8e-3 / 1000 * 648000 / math.pi,
                                                                             rel=1e-12)
    assert sampling.outputs["pixel_scale_arcsec"].label == "Pixel scale"
