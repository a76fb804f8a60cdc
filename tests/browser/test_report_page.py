"""The purchase report of a saved evaluation in a real headless Chromium, with the outside network cut off.

A real server (uvicorn on 127.0.0.1, a fresh demo database, as for the club page) computes and keeps
an evaluation of the demo club's equipment plus invented candidates; the page is read back as a
person and a script would: the chart's front points (its SVG data attributes) are exactly the
answer's front, every pick has a sheet, nothing is fetched from elsewhere, the console stays quiet,
and every text meets the WCAG 2.1 AA contrast minimum (success criterion 1.4.3: 4.5:1, 3:1 for
large text), computed with the standard's relative-luminance formula. Screenshots go to
test-artifacts/.
"""

from __future__ import annotations

import httpx
import pytest

from servers import Server

from api.demo import CLUB, seed_demo
from api.storage import db
from tests.browser.test_club_page import ARTIFACTS, CHROMIUM, browser, open_tab, screenshot, tab  # noqa: F401  (fixtures)

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not CHROMIUM.exists(), reason="Debian's chromium is not installed at /usr/bin/chromium"),
]


def _luminance(rgb: tuple[float, float, float]) -> float:
    # WCAG 2.1, definition of relative luminance (sRGB).
    def channel(c: float) -> float:
        c = c / 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4
    r, g, b = map(channel, rgb)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a, b) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def _ids(server: str, kind: str) -> list[int]:
    # Eyepieces are left out of the trains: an imaging sweep refuses a train ending in one.
    items = httpx.get(f"{server}/v1/{kind}", params={"owner": CLUB}).json()["items"]
    return [item["id"] for item in items if item.get("kind") != "eyepiece"]


def report_request(server: str, objectives: dict) -> dict:
    """The club's stored equipment plus invented candidates (generic specs, round prices)."""
    scopes = [{"id": i} for i in _ids(server, "telescopes")] + [
        {"name": f"{a} mm f/{f} newtonian", "design": "newtonian", "aperture_mm": a, "focal_length_mm": a * f,
         "obstruction_mm": a * 0.3, "mass_kg": a / 25, "price": {"amount": a * 4 + f * 50, "currency": "EUR"}}
        for a in (130, 150, 200, 250) for f in (4, 5, 6)
    ]
    cameras = [{"id": i} for i in _ids(server, "cameras")] + [
        {"name": f"camera {p} um", "pixel_size_um": p, "width_px": 6000, "height_px": 4000, "mass_kg": 0.6,
         "price": {"amount": 3000 - p * 400, "currency": "EUR"}} for p in (2.4, 3.8, 4.6)
    ]
    return {
        "name": "Kestrel Ridge: a first imaging rig", "visibility": "public",
        "telescopes": scopes, "cameras": cameras,
        "modifiers": [None, *({"id": i} for i in _ids(server, "modifiers"))],
        "mounts": [{"id": i} for i in _ids(server, "mounts")],
        "constraints": {"sampling.pixel_scale_arcsec": {"min": 0.7, "max": 3.0},
                        "payload.capacity_fraction": {"max": 0.8},
                        "target_fit.panels": {"max": 4}},
        "objectives": objectives, "params": {"target_fit": {"target": "M 33"}}, "limit": 8,
    }


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """A real server on a fresh demo database, and the demo club's key."""
    folder = tmp_path_factory.mktemp("report-demo")
    url = f"sqlite:///{(folder / 'rigbench.db').as_posix()}"
    engine = db.make_engine(url)
    db.upgrade(engine)
    info = seed_demo(engine)
    engine.dispose()
    with Server(url, folder, name="report-server") as server:
        yield server.url, info


@pytest.fixture(scope="module")
def two_objectives(demo):
    url, info = demo
    return saved(url, info.club_key, {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min"})


@pytest.fixture(scope="module")
def three_objectives(demo):
    url, info = demo
    return saved(url, info.club_key, {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min",
                                       "payload.capacity_fraction": "min"}, name="Three ways to choose")


def saved(server: str, key: str, objectives: dict, **changes) -> dict:
    body = {**report_request(server, objectives), **changes}
    response = httpx.post(f"{server}/v1/evaluations/saved", json=body,
                          headers={"Authorization": f"Bearer {key}"}, timeout=120)
    assert response.status_code == 201, response.text
    return response.json()


def indices(row: dict) -> str:
    i = row["indices"]
    return f"{i['telescope']},{i['camera']},{i['train']},{i['mount']},{i['binning']}"  # and the binning


def drawn(page, chart: str, selector: str) -> list[dict]:
    return page.locator(f"#{chart} {selector}").evaluate_all(
        "els => els.map(e => ({indices: e.dataset.indices, x: e.dataset.x, y: e.dataset.y, pick: e.dataset.pick}))")


# Text colour and the first opaque background behind it, as the browser computes them.
CONTRAST_JS = """() => {
  const rgb = s => (s.match(/[\\d.]+/g) || []).map(Number);
  const out = [];
  const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
  while (walker.nextNode()) {
    const node = walker.currentNode;
    if (!node.textContent.trim()) continue;
    const el = node.parentElement;
    if (el.closest('title, desc, details:not([open]) > :not(summary)')) continue;
    const style = getComputedStyle(el);
    if (style.visibility === 'hidden' || style.display === 'none') continue;
    const svgText = el.closest('svg');
    let colour = svgText ? rgb(el.getAttribute('fill') ? style.fill : style.color) : rgb(style.color);
    let bg = null;
    if (svgText) bg = [251, 250, 246];  // every chart is drawn on the paper colour
    for (let e = el; !bg && e; e = e.parentElement) {
      const c = rgb(getComputedStyle(e).backgroundColor);
      if (c.length === 3 || (c.length === 4 && c[3] > 0.99)) bg = c.slice(0, 3);
    }
    bg = bg || rgb(getComputedStyle(document.documentElement).backgroundColor).slice(0, 3);
    const size = parseFloat(style.fontSize), bold = Number(style.fontWeight) >= 700;
    out.push({text: node.textContent.trim().slice(0, 40), colour: colour.slice(0, 3), bg, large: size >= 24 || (bold && size >= 18.66)});
  }
  return out;
}"""


def assert_contrast(page) -> None:
    failures = []
    for item in page.evaluate(CONTRAST_JS):
        needed = 3.0 if item["large"] else 4.5  # WCAG 2.1 SC 1.4.3
        ratio = contrast(item["colour"], item["bg"])
        if ratio < needed:
            failures.append((item["text"], round(ratio, 2)))
    assert failures == []


def test_the_chart_draws_exactly_the_answers_front_and_every_pick_has_a_sheet(tab, demo, two_objectives):
    url, _info = demo
    evaluation = two_objectives
    response = tab.page.goto(f"{url}{evaluation['report_url']}")
    assert response.status == 200
    tab.page.wait_for_load_state("networkidle")
    result = evaluation["result"]
    assert result["evaluated"] > 100 and result["front"]

    front = drawn(tab.page, "trade-off", "[data-front='true']")
    assert sorted(p["indices"] for p in front) == sorted(indices(r) for r in result["front"])
    keys = list(evaluation["request"]["objectives"])
    by_indices = {indices(r): r for r in result["front"]}
    for point in front:
        row = by_indices[point["indices"]]
        assert float(point["x"]) == pytest.approx(row["values"][keys[0]], rel=1e-6)  # written to 7 figures
        assert float(point["y"]) == pytest.approx(row["values"][keys[1]], rel=1e-6)
    picks = drawn(tab.page, "trade-off", "[data-pick]")
    assert [p["indices"] for p in picks] == [indices(r) for r in result["top"]]
    sheets = tab.page.locator("article.sheet").evaluate_all("els => els.map(e => e.dataset.indices)")
    assert sheets == [indices(r) for r in result["top"]]
    for n in range(1, len(sheets) + 1):
        sheet = tab.page.locator(f"#pick-{n}")
        text = sheet.inner_text()
        assert "To buy:" in text and "EUR" in text and "Field over" in text
    assert tab.page.locator("#trade-off [data-baseline='true']").count() == 1
    chart = tab.page.get_by_role("img", name="Trade-off", exact=False).first
    assert chart.bounding_box()["width"] > 600
    assert tab.page.locator("#trade-off [data-set='feasible-sample'] circle").count() > 0
    assert tab.page.locator("svg#objectives, #parallel-figure").count() == 0  # two objectives: no parallel axes

    assert_contrast(tab.page)
    path = screenshot(tab, "report-page.png")
    assert path.stat().st_size > 10_000
    tab.page.screenshot(path=str(path.with_name("report-top.png")))  # what a visitor sees first
    tab.page.locator("#pick-1").screenshot(path=str(path.with_name("report-pick-1.png")))
    tab.page.locator("#tradeoff-figure").screenshot(path=str(path.with_name("report-chart.png")))
    picture = httpx.get(f"{url}{evaluation['report_url']}/trade-off.svg")
    assert picture.headers["content-type"] == "image/svg+xml"
    (ARTIFACTS / "report-trade-off.svg").write_text(picture.text, encoding="utf-8")
    assert tab.blocked == [] and tab.errors == []


def test_three_objectives_add_parallel_axes_with_a_reading_guide(tab, demo, three_objectives):
    url, _info = demo
    tab.page.goto(f"{url}{three_objectives['report_url']}")
    result = three_objectives["result"]
    front = drawn(tab.page, "trade-off", "[data-front='true']")
    assert sorted(p["indices"] for p in front) == sorted(indices(r) for r in result["front"])
    lines = tab.page.locator("#objectives polyline[data-indices]").count()
    assert lines == min(len(result["front"]), 300) or lines >= 300
    assert "each upright axis is one objective" in tab.page.locator("#objectives-heading + p").inner_text()
    assert_contrast(tab.page)
    screenshot(tab, "report-three-objectives.png")
    tab.page.locator("#parallel-figure").screenshot(path=str(ARTIFACTS / "report-parallel.png"))
    assert tab.blocked == [] and tab.errors == []


def test_a_private_report_is_not_found_for_others_and_found_for_its_owner(tab, demo):
    url, info = demo
    private = saved(url, info.member_key, {"cost.total_price": "min", "speed.time_factor_per_arcsec2": "min"},
                    visibility="private", name="Orla's private plan")
    response = tab.page.goto(f"{url}{private['report_url']}")
    assert response.status == 404
    assert "Orla" not in tab.page.content()
    owner = httpx.get(f"{url}{private['report_url']}", headers={"Authorization": f"Bearer {info.member_key}"})
    assert owner.status_code == 200 and "Orla&#39;s private plan" in owner.text
    assert tab.blocked == []


def test_after_a_price_change_the_saved_page_says_so_and_the_page_now_shows_what_changed(tab, demo, two_objectives):
    url, info = demo
    headers = {"Authorization": f"Bearer {info.club_key}"}
    mount_id = _ids(url, "mounts")[1]
    mount = httpx.get(f"{url}/v1/mounts/{mount_id}").json()
    changed = httpx.patch(f"{url}/v1/mounts/{mount_id}", headers=headers,
                          json={"price": {"amount": mount["price"]["amount"] / 2, "currency": "EUR"}})
    assert changed.status_code == 200, changed.text
    try:
        tab.page.goto(f"{url}{two_objectives['report_url']}")
        notice = tab.page.locator("#equipment-status")
        assert notice.is_visible() and "has changed: price" in notice.inner_text()
        # The saved answer is still what is drawn.
        front = drawn(tab.page, "trade-off", "[data-front='true']")
        assert sorted(p["indices"] for p in front) == sorted(indices(r) for r in two_objectives["result"]["front"])
        tab.page.get_by_role("link", name="Run it again with the equipment as it is now").click()
        tab.page.wait_for_load_state()
        assert tab.page.url.endswith(f"{two_objectives['report_url']}/now")
        rerun = httpx.post(f"{url}/v1/evaluations/saved/{two_objectives['id']}/rerun").json()
        front = drawn(tab.page, "trade-off", "[data-front='true']")
        assert sorted(p["indices"] for p in front) == sorted(indices(r) for r in rerun["result"]["front"])
        assert tab.page.locator("#changes [data-change='value']").count() == min(len(rerun["changes"]["values"]), 50)
        assert_contrast(tab.page)
        tab.page.screenshot(path=str(ARTIFACTS / "report-now.png"))
        assert tab.blocked == [] and tab.errors == []
    finally:
        httpx.patch(f"{url}/v1/mounts/{mount_id}", headers=headers, json={"price": mount["price"]})
