"""api/clubs/cache.py: a club page and its pictures are built once per club state (ETag from the club's
data version, 304 on If-None-Match, served from memory otherwise), and show at most
RIGBENCH_CLUB_PAGE_MAX_RIGS rigs."""

from __future__ import annotations

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import CAMERA, TELESCOPE

from api.app import create_app
from api.clubs import page
from api.storage import db


@pytest.fixture
def club(make_account):
    return make_account("lakeside-astro", kind="club")


def add_rig(client, club, name):
    body = {"name": name, "visibility": "public", "telescope": TELESCOPE, "camera": CAMERA}
    answer = client.post("/v1/rigs", json=body, headers=club.headers)
    assert answer.status_code == 201, answer.text
    return answer.json()


@pytest.mark.parametrize("path", ["/clubs/lakeside-astro", "/clubs/lakeside-astro/bars.svg"])
def test_views_of_an_unchanged_club_are_built_once_and_revalidate_with_304(client, club, monkeypatch, path):
    add_rig(client, club, "first rig")
    built = []
    gather = page._gather
    monkeypatch.setattr(page, "_gather", lambda *a: built.append(1) or gather(*a))
    first = client.get(path)
    assert first.status_code == 200 and first.headers["etag"]
    again = client.get(path)
    assert again.content == first.content and again.headers["etag"] == first.headers["etag"]
    unchanged = client.get(path, headers={"If-None-Match": first.headers["etag"]})
    assert unchanged.status_code == 304 and unchanged.content == b""
    assert len(built) == 1
    add_rig(client, club, "second rig")  # the club changed: a new page, a new tag
    changed = client.get(path, headers={"If-None-Match": first.headers["etag"]})
    assert changed.status_code == 200 and changed.headers["etag"] != first.headers["etag"]
    assert len(built) == 2


def test_a_change_to_another_accounts_equipment_a_club_rig_uses_changes_the_tag(client, club, alice):
    scope = client.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=alice.headers).json()
    client.post("/v1/rigs", headers=club.headers, json={
        "name": "borrowed", "visibility": "public", "telescope": {"id": scope["id"]}, "camera": CAMERA})
    before = client.get("/clubs/lakeside-astro")
    client.patch(f"/v1/telescopes/{scope['id']}", json={"name": "renamed newtonian"}, headers=alice.headers)
    after = client.get("/clubs/lakeside-astro")
    assert after.headers["etag"] != before.headers["etag"] and "renamed newtonian" in after.text


def test_the_page_shows_at_most_the_configured_number_of_rigs_and_says_so(settings, club):
    app = create_app(settings.model_copy(update={"club_page_max_rigs": 2}))
    db.upgrade(app.state.engine)
    with TestClient(app) as client:
        for n in range(3):
            add_rig(client, club, f"rig number {n}")
        html = client.get("/clubs/lakeside-astro").text
    assert "rig number 0" in html and "rig number 1" in html and "rig number 2" not in html
    assert "Showing the first 2 of 3 public rigs" in html


def test_the_cache_holds_a_bounded_number_of_answers(settings, club):
    from api.clubs.cache import MAX_ENTRIES

    app = create_app(settings.model_copy(update={"rate_limit_compute_anonymous": ""}))
    with TestClient(app) as client:
        add_rig(client, club, "only rig")
        for n in range(MAX_ENTRIES + 10):
            assert client.get("/clubs/lakeside-astro", params={"embed": str(n)}).status_code == 200
        assert len(app.state.club_page_cache) == MAX_ENTRIES


def test_pages_built_anew_count_against_the_anonymous_compute_limit(settings, club):
    app = create_app(settings.model_copy(update={"rate_limit_compute_anonymous": "3/minute"}))
    with TestClient(app) as client:
        add_rig(client, club, "only rig")
        for n in range(3):
            assert client.get("/clubs/lakeside-astro", params={"embed": str(n)}).status_code == 200
        assert client.get("/clubs/lakeside-astro", params={"embed": "0"}).status_code == 200  # cached
        assert client.get("/clubs/lakeside-astro", params={"embed": "9"},
                          headers={"Accept": "application/json"}).status_code == 429


def test_the_json_comparison_is_cached_too_and_revalidates(client, club):
    add_rig(client, club, "first rig")
    first = client.get("/v1/clubs/lakeside-astro/comparison")
    assert first.status_code == 200 and first.headers["etag"]
    as_csv = client.get("/v1/clubs/lakeside-astro/comparison", params={"format": "csv"})
    assert as_csv.headers["etag"] != first.headers["etag"]  # another answer, another tag
    again = client.get("/v1/clubs/lakeside-astro/comparison", headers={"If-None-Match": first.headers["etag"]})
    assert again.status_code == 304
