"""api/http/edge.py: the client address (trusted proxies only), the origin of absolute links (never an
arbitrary Host) and HEAD on every GET route; api/http/request_log.py: X-Request-Id on a 500 too."""

from __future__ import annotations

import pytest
from fastapi import Request
from fastapi.routing import APIRoute
from fastapi.testclient import TestClient
from rigbench_testing import TELESCOPE
from starlette.routing import Route

from api.app import create_app
from api.http.ratelimit import client_address


def app_with(settings, **changes):
    return create_app(settings.model_copy(update=changes))


def seen_address(app, peer: str, forwarded: str | None) -> str:
    async def address_seen(request: Request) -> dict:
        return {"address": client_address(request)}

    app.add_api_route("/address-seen", address_seen, include_in_schema=False)
    headers = {"X-Forwarded-For": forwarded} if forwarded else {}
    with TestClient(app, client=(peer, 50000)) as client:
        return client.get("/address-seen", headers=headers).json()["address"]


def test_a_forged_forwarded_for_changes_nothing_by_default(settings):
    # The default trusts no proxy, loopback included: the peer's address is the client's.
    assert seen_address(app_with(settings), "127.0.0.1", "203.0.113.9") == "127.0.0.1"


def test_forwarded_for_is_believed_from_a_trusted_proxy_only(settings):
    app = app_with(settings, trusted_proxies=["10.0.0.0/8"])
    # the nearest hop that is not a trusted proxy is the client; what it claims before is not believed
    assert seen_address(app, "10.1.2.3", "198.51.100.7, 203.0.113.9, 10.4.5.6") == "203.0.113.9"
    app = app_with(settings, trusted_proxies=["10.0.0.0/8"])
    assert seen_address(app, "192.0.2.1", "203.0.113.9") == "192.0.2.1"


def test_links_never_reflect_an_arbitrary_host(app, client, alice):
    answer = client.post("/v1/telescopes", json=TELESCOPE, headers={**alice.headers, "Host": "evil.example"})
    assert answer.status_code == 201
    assert "evil.example" not in answer.headers["location"]
    assert answer.headers["location"].startswith("http://testserver/v1/telescopes/")


def test_links_come_from_the_public_url_or_an_allowed_host(settings, alice):
    # alice lives in the database these apps share with the fixtures' app.
    with TestClient(app_with(settings, public_url="https://rigbench.example.org")) as client:
        made = client.post("/v1/telescopes", json=TELESCOPE, headers={**alice.headers, "Host": "evil.example"})
        assert made.headers["location"].startswith("https://rigbench.example.org/v1/telescopes/")
    with TestClient(app_with(settings, allowed_hosts=["rigbench.example.org"])) as client:
        kept = client.post("/v1/telescopes", json=TELESCOPE, headers={**alice.headers, "Host": "rigbench.example.org"})
        assert kept.headers["location"].startswith("http://rigbench.example.org/v1/telescopes/")
        other = client.post("/v1/telescopes", json=TELESCOPE, headers={**alice.headers, "Host": "evil.example"})
        assert other.headers["location"].startswith("http://testserver/v1/telescopes/")


def get_paths(app) -> list[str]:
    """Every GET route's path with its parameters filled by something plausible."""
    paths = []
    for route in app.routes:
        if isinstance(route, (APIRoute, Route)) and "GET" in (route.methods or ()):
            paths.append(route.path.replace("{item_id}", "1").replace("{name}", "kestrel-ridge-astro")
                         .replace("{asset}", "club.css").replace("{calculator}", "light_grasp")
                         .replace("{", "").replace("}", ""))
    return paths


def test_head_answers_every_get_route_like_get_without_a_body(app, client):
    for path in get_paths(app):
        got, head = client.get(path), client.head(path)
        assert head.status_code == got.status_code, path
        assert head.content == b"", path
        assert head.headers.get("content-type") == got.headers.get("content-type"), path


def test_a_500_carries_the_request_id(settings):
    app = create_app(settings)

    @app.get("/boom", include_in_schema=False)
    def boom():
        raise RuntimeError("a bug")

    with TestClient(app, raise_server_exceptions=False) as client:
        answer = client.get("/boom", headers={"X-Request-Id": "trace-500"})
    assert answer.status_code == 500
    assert answer.headers["x-request-id"] == "trace-500"
    assert answer.headers["content-type"].startswith("application/problem+json")
    assert "a bug" not in answer.text and "Traceback" not in answer.text


@pytest.mark.parametrize("tag", ['"1"', 'W/"1"', '"9", "1"', "*"])
def test_if_none_match_on_a_stored_item_gives_304_until_it_changes(client, alice, tag):
    url = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).headers["location"]
    unchanged = client.get(url, headers={**alice.headers, "If-None-Match": tag})
    assert unchanged.status_code == 304 and unchanged.content == b"" and unchanged.headers["etag"] == '"1"'
    client.patch(url, json={"mass_kg": 9}, headers=alice.headers)
    if tag != "*":
        assert client.get(url, headers={**alice.headers, "If-None-Match": tag}).status_code == 200


def test_a_rig_is_not_304_once_its_stored_equipment_changed(client, alice):
    scope = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    rig = client.post("/v1/rigs", headers=alice.headers, json={
        "name": "r", "telescope": {"id": scope["id"]},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}}).json()
    url = f"/v1/rigs/{rig['id']}"
    assert client.get(url, headers={**alice.headers, "If-None-Match": '"1"'}).status_code == 304
    client.patch(f"/v1/telescopes/{scope['id']}", json={"name": "renamed"}, headers=alice.headers)
    fresh = client.get(url, headers={**alice.headers, "If-None-Match": '"1"'})
    assert fresh.status_code == 200 and fresh.json()["resolved"]["telescope"]["name"] == "renamed"
