"""api/settings.py: every setting is read from RIGBENCH_* and documented in README and DEVELOPERS."""

from __future__ import annotations

from pathlib import Path

import pytest

from api.settings import Settings

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize("document", ["README.md", "DEVELOPERS.md"])
def test_every_setting_is_documented(document):
    text = (ROOT / document).read_text(encoding="utf-8")
    missing = [f"RIGBENCH_{name.upper()}" for name in Settings.model_fields if f"RIGBENCH_{name.upper()}" not in text]
    assert not missing, f"{document} does not document {missing}"


def test_every_setting_has_a_description():
    assert all(field.description for field in Settings.model_fields.values())


def test_lists_read_as_comma_separated_or_json(monkeypatch):
    monkeypatch.setenv("RIGBENCH_DISABLED_PLUGINS", "speed, cost")
    monkeypatch.setenv("RIGBENCH_CORS_ORIGINS", '["https://club.example.org"]')
    settings = Settings()
    assert settings.disabled_plugins == ["speed", "cost"]
    assert settings.cors_origins == ["https://club.example.org"]


def test_database_defaults_to_a_sqlite_file_in_the_data_folder(monkeypatch, tmp_path):
    monkeypatch.delenv("RIGBENCH_DATABASE_URL", raising=False)
    monkeypatch.setenv("RIGBENCH_DATA_DIR", str(tmp_path))
    assert Settings().database_url == f"sqlite:///{(tmp_path / 'rigbench.db').as_posix()}"


def test_bad_values_are_refused(monkeypatch):
    monkeypatch.setenv("RIGBENCH_MAX_PAGE_SIZE", "0")
    with pytest.raises(ValueError):
        Settings()


def test_cors_allows_only_listed_origins(settings):
    from fastapi.testclient import TestClient

    from api.app import create_app

    app = create_app(settings.model_copy(update={"cors_origins": ["https://club.example.org"]}))
    with TestClient(app) as client:
        allowed = client.get("/healthz", headers={"Origin": "https://club.example.org"})
        assert allowed.headers["access-control-allow-origin"] == "https://club.example.org"
        refused = client.get("/healthz", headers={"Origin": "https://elsewhere.example.com"})
        assert "access-control-allow-origin" not in refused.headers
    with TestClient(create_app(settings)) as client:
        assert "access-control-allow-origin" not in client.get("/healthz", headers={"Origin": "https://a.example"}).headers
