"""GET /healthz: liveness that never touches the database."""

from __future__ import annotations

from fastapi.testclient import TestClient

from api.app import create_app
from api.settings import Settings


def test_health_answers(client):
    response = client.get("/healthz")
    assert response.status_code == 200 and response.json()["status"] == "ok"


def test_health_answers_even_when_the_database_is_unreachable():
    # Port 9 on loopback: nothing listens there, so any database access would fail.
    settings = Settings(database_url="postgresql+psycopg://nobody:x@127.0.0.1:9/none")
    with TestClient(create_app(settings), raise_server_exceptions=False) as client:
        assert client.get("/healthz").status_code == 200
        # ...while a route that needs the database fails cleanly, as a problem worth retrying.
        response = client.get("/v1/telescopes")
        assert response.status_code == 503 and response.headers["retry-after"]
        assert response.headers["content-type"].startswith("application/problem+json")
