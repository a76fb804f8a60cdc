"""The members' view in Debian's headless Chromium: sign in with a key, see what you may borrow, ask to
borrow with the button, with JavaScript switched off, and no request leaving this machine.

A real uvicorn server on 127.0.0.1 serves a fresh demo database (the invented Kestrel Ridge club);
the demo member is made a member of the club through the API first. Screenshots go to test-artifacts/.
"""

from __future__ import annotations

from pathlib import Path
from urllib.parse import urlsplit

import httpx
import pytest
from servers import Server

from api.demo import CLUB, seed_demo
from api.storage import db

CHROMIUM = Path("/usr/bin/chromium")
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run"]

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not CHROMIUM.exists(), reason="Debian's chromium is not installed at /usr/bin/chromium"),
]


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("members-page")
    url = f"sqlite:///{(folder / 'rigbench.db').as_posix()}"
    engine = db.make_engine(url)
    db.upgrade(engine)
    info = seed_demo(engine)
    engine.dispose()
    with Server(url, folder) as server:
        club = {"Authorization": f"Bearer {info.club_key}"}
        answer = httpx.put(f"{server.url}/v1/clubs/{CLUB}/members/{info.member}", json={"role": "member"}, headers=club)
        assert answer.status_code == 201, answer.text
        yield server.url, info


def screenshot(page, name: str) -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    path = ARTIFACTS / name
    page.screenshot(path=str(path), full_page=True)
    return path


def test_a_member_signs_in_and_asks_to_borrow_without_javascript(demo):
    from playwright.sync_api import sync_playwright

    base, info = demo
    blocked, errors = [], []
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=str(CHROMIUM), headless=True, args=ARGS)
        context = browser.new_context(viewport={"width": 1100, "height": 900}, java_script_enabled=False)

        def offline(route):
            if urlsplit(route.request.url).hostname == "127.0.0.1":
                route.continue_()
            else:
                blocked.append(route.request.url)
                route.abort()

        context.route("**/*", offline)
        page = context.new_page()
        page.on("console", lambda message: errors.append(message.text) if message.type == "error" else None)
        page.on("pageerror", lambda error: errors.append(str(error)))

        assert page.goto(f"{base}/clubs/{CLUB}/members-area").status == 200
        assert page.get_by_role("heading", name="Sign in").is_visible()
        screenshot(page, "members-sign-in.png")
        page.get_by_label("Your key").fill(info.member_key)
        page.get_by_role("button", name="Sign in").click()
        page.wait_for_load_state()
        assert page.get_by_role("heading", name=f"Signed in as Orla (demo member)").is_visible()

        cookie = next(c for c in context.cookies() if c["name"] == "rigbench_session")
        assert cookie["httpOnly"] and cookie["sameSite"] == "Lax" and cookie["path"] == "/clubs"
        assert info.member_key not in cookie["value"]

        items = httpx.get(f"{base}/v1/clubs/{CLUB}/equipment").json()["telescopes"]
        first = page.locator("table.borrow[data-kind='telescopes'] tbody tr").first
        assert first.locator("th").inner_text().startswith(items[0]["name"])
        assert first.locator("td").first.inner_text() == "Available"
        first.get_by_label("From").fill("2027-01-08")
        first.get_by_label("Due back").fill("2027-01-10")
        first.get_by_role("button", name=f"Ask to borrow {items[0]['name']}").click()
        page.wait_for_load_state()
        assert "asked=" in page.url
        assert page.get_by_role("status").inner_text().startswith("Your request is with the club")
        mine = page.locator("#my-loans tbody tr")
        assert mine.count() == 1 and "requested" in mine.first.inner_text()
        path = screenshot(page, "members-signed-in.png")
        assert path.stat().st_size > 10_000

        club = {"Authorization": f"Bearer {info.club_key}"}
        loans = httpx.get(f"{base}/v1/clubs/{CLUB}/loans", headers=club).json()["items"]
        assert [(loan["item"]["id"], loan["status"], loan["start"], loan["due"]) for loan in loans] == [
            (items[0]["id"], "requested", "2027-01-08", "2027-01-10")]

        page.get_by_role("button", name="Sign out").click()
        page.wait_for_load_state()
        assert page.get_by_role("heading", name="Sign in").is_visible()
        browser.close()
    assert blocked == [] and errors == []
