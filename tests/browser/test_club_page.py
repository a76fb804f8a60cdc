"""The demo club page and the API docs in a real headless Chromium, with the outside network cut off.

A real server (uvicorn in a subprocess, on 127.0.0.1, a fresh SQLite demo database) serves the page;
Debian's Chromium (/usr/bin/chromium) is driven by Playwright for Python — never a downloaded browser.
Every request to a host other than 127.0.0.1 is aborted and recorded, so the page and the docs are
shown to work offline. Screenshots go to test-artifacts/ (git-ignored).
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import threading
import time
from dataclasses import dataclass, field
from functools import partial
from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from urllib.parse import urlsplit

import httpx
import pytest

from api.demo import CLUB, seed_demo
from api.storage import db

CHROMIUM = Path("/usr/bin/chromium")
ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "test-artifacts"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run"]

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not CHROMIUM.exists(), reason="Debian's chromium is not installed at /usr/bin/chromium "
                                                     "(apt-get install chromium); .ci/run installs it"),
]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    """Base URL of a real rigbench server on a fresh demo database."""
    data = tmp_path_factory.mktemp("browser-demo")
    url = f"sqlite:///{(data / 'rigbench.db').as_posix()}"
    engine = db.make_engine(url)
    db.upgrade(engine)
    seed_demo(engine)
    engine.dispose()
    port = free_port()
    env = {**os.environ, "RIGBENCH_DATABASE_URL": url, "RIGBENCH_DATA_DIR": str(data)}
    log = (data / "server.log").open("w")
    process = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "api.app:create_app", "--factory", "--host", "127.0.0.1",
         "--port", str(port), "--log-level", "warning"],
        cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                if httpx.get(f"{base}/healthz", timeout=1).status_code == 200:
                    break
            except httpx.HTTPError:
                pass
            if process.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"the server did not start: {(data / 'server.log').read_text()}")
            time.sleep(0.2)
        yield base
    finally:
        process.terminate()
        process.wait(timeout=20)
        log.close()


@pytest.fixture(scope="module")
def browser():
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path=str(CHROMIUM), headless=True, args=ARGS)
        yield chromium
        chromium.close()


@dataclass
class Tab:
    page: object
    blocked: list[str] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)


def open_tab(browser, **context_options) -> Tab:
    context = browser.new_context(viewport={"width": 1280, "height": 900}, **context_options)
    tab = Tab(context.new_page())

    def offline(route):
        # Only this machine answers: anything fetched from elsewhere would break the page offline.
        parts = urlsplit(route.request.url)
        if parts.scheme in {"data", "blob"} or parts.hostname == "127.0.0.1":
            route.continue_()
        else:
            tab.blocked.append(route.request.url)
            route.abort()

    context.route("**/*", offline)
    tab.page.on("console", lambda message: tab.errors.append(message.text) if message.type == "error" else None)
    tab.page.on("pageerror", lambda error: tab.errors.append(str(error)))
    return tab


@pytest.fixture
def tab(browser):
    tab = open_tab(browser)
    yield tab
    tab.page.context.close()


def screenshot(tab: Tab, name: str) -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    path = ARTIFACTS / name
    tab.page.screenshot(path=str(path), full_page=True)
    return path


def comparison_rows(page) -> list[dict]:
    return page.locator("#comparison-table tbody tr").evaluate_all("""rows => rows.map(row => ({
        id: Number(row.dataset.rigId),
        name: row.querySelector('th').firstChild.textContent.trim(),
        baseline: row.classList.contains('baseline'),
        cells: [...row.querySelectorAll('td')].map(td => ({
            output: td.dataset.output, value: td.dataset.value, text: td.textContent.trim()})),
    }))""")


def test_the_demo_club_page_shows_the_apis_comparison_and_pictures(tab, server):
    response = tab.page.goto(f"{server}/clubs/{CLUB}")
    assert response.status == 200
    tab.page.wait_for_load_state("networkidle")
    api = httpx.get(f"{server}/v1/clubs/{CLUB}/comparison").json()

    rows = comparison_rows(tab.page)
    assert [r["id"] for r in rows] == [r["id"] for r in api["rigs"]]
    assert [r["name"] for r in rows] == [r["name"] for r in api["rigs"]]
    assert [r["baseline"] for r in rows] == [i == api["baseline"] for i in range(len(api["rigs"]))]
    for i, row in enumerate(rows):
        assert row["cells"], "the table shows no figures"
        for cell in row["cells"]:
            calculator, output = cell["output"].split(".")
            value = api["results"][calculator]["outputs"][output]["values"][i]
            if value is None:  # a visual rig's imaging figures (and the other way round)
                assert (cell["value"], cell["text"]) == ("null", "\u2014")
            elif cell["output"] == "compatibility.verdict":
                # In words: test_the_rigs_say_whether_they_fit_in_words.
                assert cell["value"] == value and cell["text"]
            elif isinstance(value, str):
                assert cell["text"] == value
            else:
                assert float(cell["value"]) == value
                assert float(cell["text"]) == pytest.approx(value, rel=5e-3)  # shown to 3-4 figures

    fields = tab.page.get_by_role("img", name="Fields of view of 3 rig(s) over NGC 598 (M 33, Triangulum Galaxy)")
    assert fields.count() == 1
    box = fields.bounding_box()
    assert box["width"] > 400 and box["height"] > 200
    # One frame per rig with a camera; the visual rigs (an eyepiece, no camera field) are left out.
    cameras = sum(v is not None for v in api["results"]["sampling"]["outputs"]["field_width_arcmin"]["values"])
    assert cameras == 3 < len(api["rigs"])
    assert fields.locator("rect[stroke='#0d6179']").count() == cameras
    assert fields.locator("ellipse").count() == cameras
    bars = tab.page.get_by_role("img", name="Light grasp and exposure times relative to the baseline rig")
    assert bars.count() == 1 and bars.locator("rect[fill='#6b4a8a']").count() == 3  # the baseline's three bars

    assert tab.page.get_by_role("heading", name="Safety first").is_visible()
    assert "full-aperture solar filter" in tab.page.locator(".cautions").inner_text()
    path = screenshot(tab, "club-page.png")
    assert path.stat().st_size > 10_000
    assert tab.blocked == [] and tab.errors == []


def test_the_rigs_say_whether_they_fit_in_words(tab, server):
    tab.page.goto(f"{server}/clubs/{CLUB}")
    api = httpx.get(f"{server}/v1/clubs/{CLUB}/comparison").json()
    out = api["results"]["compatibility"]["outputs"]
    index = {r["name"]: i for i, r in enumerate(api["rigs"])}
    table = tab.page.locator("#rigs-table")
    headers = table.locator("thead th").all_inner_texts()
    fit = headers.index("Fit")

    def shown(name: str) -> str:
        row = table.locator("tbody tr").filter(has=tab.page.get_by_role("rowheader", name=name, exact=True))
        # A no-break space holds each length to its unit on the page.
        return row.locator("th, td").nth(fit).inner_text().strip().replace("\u00a0", " ")

    # The demo's newtonian needs spacers: the API's spacer_mm, to the 0.1 mm a spacer is bought to.
    i = index["Big newtonian imager"]
    assert out["verdict"]["values"][i] == "fits with spacers"
    assert shown("Big newtonian imager") == f"fits with {out['spacer_mm']['values'][i]:.1f} mm of spacers"
    i = index["Reduced SCT for galaxies"]
    circle = out["image_circle_mm"]["values"][i]
    diagonal = circle / out["image_circle_to_diagonal"]["values"][i]
    assert shown("Reduced SCT for galaxies") == (
        f"vignettes: image circle {circle:.1f} mm < sensor diagonal {diagonal:.1f} mm")
    assert shown("Wide-field travel refractor") == "fits"
    # The comparison table says the same for each rig, the calculator's verdict kept in data-value.
    rows = comparison_rows(tab.page)
    words = {r["name"]: next(c for c in r["cells"] if c["output"] == "compatibility.verdict") for r in rows}
    for name in index:
        assert words[name]["value"] == out["verdict"]["values"][index[name]]
        assert words[name]["text"].replace("\u00a0", " ") == shown(name)
    assert table.is_visible()
    table.scroll_into_view_if_needed()
    ARTIFACTS.mkdir(exist_ok=True)
    table.screenshot(path=str(ARTIFACTS / "club-page-rigs.png"))
    assert tab.blocked == [] and tab.errors == []


def test_the_form_works_without_javascript(browser, server):
    tab = open_tab(browser, java_script_enabled=False)
    try:
        tab.page.goto(f"{server}/clubs/{CLUB}")
        ids = [r["id"] for r in httpx.get(f"{server}/v1/clubs/{CLUB}/rigs").json()["items"]]
        tab.page.get_by_label("Compare with").select_option(str(ids[2]))
        tab.page.get_by_label("Deep-sky object").fill("NGC 891")
        tab.page.get_by_role("button", name="Show").click()
        tab.page.wait_for_load_state()
        assert f"baseline={ids[2]}" in tab.page.url
        rows = tab.page.locator("#comparison-table tbody tr")
        assert rows.nth(2).get_attribute("class") == "baseline"
        assert tab.page.get_by_role("img", name="Fields of view of 3 rig(s) over NGC 891").count() == 1
        assert tab.blocked == [] and tab.errors == []
    finally:
        tab.page.context.close()


@pytest.fixture
def club_site(tmp_path):
    """A stand-in for the club's own web site: a static server on another port, so another origin.

    A real server on 127.0.0.1 rather than a page made up by the test: Chromium lets only a page
    served from the local network frame a local address (its local network access checks).
    """
    handler = partial(SimpleHTTPRequestHandler, directory=str(tmp_path))
    handler.log_message = lambda *args: None
    site = ThreadingHTTPServer(("127.0.0.1", 0), handler)
    thread = threading.Thread(target=site.serve_forever, daemon=True)
    thread.start()
    yield tmp_path, f"http://127.0.0.1:{site.server_address[1]}"
    site.shutdown()
    site.server_close()
    thread.join(timeout=10)


def test_the_embed_snippet_shows_the_page_in_another_sites_frame(tab, server, club_site):
    tab.page.goto(f"{server}/clubs/{CLUB}")
    snippet = tab.page.locator("#embed pre code").inner_text()
    assert snippet.startswith("<iframe ")
    folder, site = club_site
    (folder / "kit.html").write_text(f"<!doctype html><title>club site</title><h1>Our kit</h1>{snippet}",
                                     encoding="utf-8")
    tab.page.goto(f"{site}/kit.html")
    frame = tab.page.frame_locator("iframe")
    frame.locator("#comparison-table").wait_for()
    rigs = httpx.get(f"{server}/v1/clubs/{CLUB}/rigs").json()["total"]
    assert frame.locator("#comparison-table tbody tr").count() == rigs == 7  # 3 imaging, 4 visual
    assert frame.locator("nav").count() == 0  # the embedded look
    assert tab.blocked == [] and tab.errors == []


def test_the_api_docs_render_openapi_3_1_offline(tab, server):
    response = tab.page.goto(f"{server}/docs")
    assert response.status == 200
    title = tab.page.locator(".swagger-ui .info .title")
    title.wait_for(timeout=20_000)
    assert "rigbench" in title.inner_text()
    assert "3.1" in tab.page.locator(".swagger-ui .info").inner_text()  # the OAS version badge
    paths = tab.page.locator(".opblock-summary-path").all_inner_texts()
    assert any("/v1/clubs/{name}/comparison" in p.replace("\u200b", "") for p in paths), paths
    assert tab.page.get_by_text("Unable to render this definition").count() == 0
    screenshot(tab, "docs-page.png")
    assert tab.blocked == [] and tab.errors == []
