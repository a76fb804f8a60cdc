"""api/app.py: the factory builds everything; importing builds nothing."""

from __future__ import annotations

import subprocess
import sys

from api.app import create_app


def test_importing_the_service_creates_no_files_and_no_app(tmp_path):
    code = "import api.app, api.cli, api.demo, api.comparisons.routes; import api.app as a; assert not hasattr(a, 'app')"
    subprocess.run([sys.executable, "-c", code], cwd=tmp_path, check=True)
    assert list(tmp_path.iterdir()) == []


def test_each_app_has_its_own_engine_registry_and_settings(settings, tmp_path):
    first = create_app(settings)
    second = create_app(settings.model_copy(update={"database_url": f"sqlite:///{tmp_path / 'other.db'}"}))
    assert first.state.engine is not second.state.engine
    assert first.state.registry is not second.state.registry
    assert str(second.state.engine.url).endswith("other.db")
    first.state.engine.dispose()
    second.state.engine.dispose()
