"""api/evaluations/charts.py: what is drawn is exactly what was given, well-formed, accessible, legible.

The property that matters: the points a report draws on the front are exactly the answer's front —
checked here on the chart alone (any front, any cloud) and, in test_report.py, through the real
engine. Contrast is computed with the WCAG 2.1 relative-luminance formula (success criteria 1.4.3
and 1.4.11: 4.5:1 for text, 3:1 for graphics that carry meaning).
"""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from api.clubs import pictures
from api.evaluations import charts
from api.evaluations.charts import Axis, Line, Point

SVG = "{http://www.w3.org/2000/svg}"
X = Axis("speed.time_factor_per_arcsec2", "Time factor", "", "min")
Y = Axis("cost.total_price", "Total price", "EUR", "min")
Z = Axis("light_grasp.clear_area_mm2", "Clear area", "mm^2", "max")

values = st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False)
indices = st.tuples(*(st.integers(0, 30),) * 4)
points = st.lists(st.builds(Point, indices, values, values), max_size=60, unique_by=lambda p: p.indices)


def luminance(hex_colour: str) -> float:
    rgb = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    r, g, b = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: str, b: str) -> float:
    hi, lo = sorted((luminance(a), luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def parse(svg: str) -> ET.Element:
    return ET.fromstring(svg)


def key(ix) -> str:
    return ",".join(map(str, ix))


@settings(max_examples=80, deadline=None)
@given(points, points, st.integers(0, 20), st.booleans())
def test_the_points_drawn_on_the_front_are_exactly_the_front(front, cloud, n_picks, join):
    picks = front[:n_picks]
    root = parse(charts.tradeoff_svg(X, Y, cloud, front, picks, None, join=join, sampled="s"))
    drawn = [e for e in root.iter() if e.get("data-front") == "true"]
    assert sorted(e.get("data-indices") for e in drawn) == sorted(key(p.indices) for p in front)
    by_key = {key(p.indices): p for p in front}
    for element in drawn:
        point = by_key[element.get("data-indices")]
        # Written to 7 significant figures.
        assert float(element.get("data-x")) == pytest.approx(point.x, rel=5e-7, abs=1e-300)
        assert float(element.get("data-y")) == pytest.approx(point.y, rel=5e-7, abs=1e-300)
    # Nothing else claims to be on the front; the cloud never repeats a front point.
    on_front = {key(p.indices) for p in front}
    cloud_drawn = [e.get("data-indices") for e in root.iter(f"{SVG}circle")
                   if e.get("data-indices") and e.get("data-front") is None and e.get("data-pick") is None]
    assert not on_front & set(cloud_drawn)
    assert sorted(cloud_drawn) == sorted(key(p.indices) for p in cloud if key(p.indices) not in on_front)
    picked = [e.get("data-indices") for e in root.iter() if e.get("data-pick")]
    assert picked == [key(p.indices) for p in picks]


@settings(max_examples=60, deadline=None)
@given(points.filter(bool), st.booleans())
def test_every_point_lies_inside_the_plot(front, one_objective):
    root = parse(charts.tradeoff_svg(X, None if one_objective else Y, [], front, [], front[0], join=True, sampled=""))
    for circle in root.iter(f"{SVG}circle"):
        if circle.get("data-indices"):
            assert charts.LEFT <= float(circle.get("cx")) <= charts.WIDTH - charts.RIGHT
            assert charts.TOP <= float(circle.get("cy")) <= charts.HEIGHT - charts.BOTTOM


def test_a_lower_value_is_drawn_further_left_and_lower():
    front = [Point((0, 0, 0, 0), 1.0, 10.0), Point((1, 0, 0, 0), 2.0, 5.0)]
    root = parse(charts.tradeoff_svg(X, Y, [], front, [], None, join=True, sampled=""))
    a, b = [e for e in root.iter(f"{SVG}circle") if e.get("data-front")]
    assert float(a.get("cx")) < float(b.get("cx")) and float(a.get("cy")) < float(b.get("cy"))  # SVG y grows down
    assert root.find(f"{SVG}polyline") is not None


def test_the_chart_is_an_accessible_image_with_units_on_its_axes():
    svg = charts.tradeoff_svg(X, Y, [], [Point((0, 0, 0, 0), 1.0, 2.0)], [], None, join=True, sampled="all")
    root = parse(svg)
    assert root.get("role") == "img" and root.get("id") == "trade-off"
    assert root.get("aria-labelledby") == "trade-off-title trade-off-desc"
    texts = [t.text for t in root.iter(f"{SVG}text")]
    assert "Total price [EUR], lower is better" in texts
    assert "Time factor, lower is better" in texts
    assert "Pareto front" in root.find(f"{SVG}desc").text


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(indices, st.tuples(values, values, values)), min_size=1, max_size=40,
                unique_by=lambda t: t[0]))
def test_parallel_axes_draw_one_line_per_row_with_better_at_the_top(rows):
    lines = [Line(ix, list(v), 1 if n == 0 else None) for n, (ix, v) in enumerate(rows)]
    root = parse(charts.parallel_svg([X, Y, Z], lines, shown_of=len(lines)))
    drawn = {e.get("data-indices"): e for e in root.iter(f"{SVG}polyline") if e.get("data-indices")}
    assert set(drawn) == {key(ix) for ix, _ in rows}
    lows = [min(v[j] for _, v in rows) for j in range(3)]
    highs = [max(v[j] for _, v in rows) for j in range(3)]
    for ix, v in rows:
        ys = [float(p.split(",")[1]) for p in drawn[key(ix)].get("points").split()]
        for j, axis in enumerate((X, Y, Z)):
            best = lows[j] if axis.direction == "min" else highs[j]
            if v[j] == best and highs[j] > lows[j]:
                assert ys[j] == pytest.approx(charts.PAR_TOP, abs=0.06)
    assert charts.READING.split(";")[0] in root.find(f"{SVG}desc").text


@settings(max_examples=200, deadline=None)
@given(values, values)
def test_ticks_are_round_evenly_spaced_and_inside_the_range(a, b):
    low, high = min(a, b), max(a, b)
    ticks = charts.nice_ticks(low, high)
    if not (high - low > 1e-6 * max(abs(low), abs(high)) and high - low > 1e-300):
        # Too narrow for floating point to step through (or empty, or subnormal): one tick, never a long loop.
        assert ticks == [low]
    else:
        assert 2 <= len(ticks) <= 12
        assert all(low - 1e-6 * (high - low) <= t <= high + 1e-6 * (high - low) for t in ticks)
        steps = {round(t2 - t1, 9) for t1, t2 in zip(ticks, ticks[1:])}
        assert max(steps) - min(steps) <= 1e-6 * (high - low)
        mantissa = (ticks[1] - ticks[0]) / 10 ** math.floor(math.log10(ticks[1] - ticks[0]))
        assert any(math.isclose(mantissa, m, rel_tol=1e-6) for m in (1, 2, 2.5, 5, 10))


@pytest.mark.parametrize(("value", "text"), [
    (2350.0, "2,350"), (41.49, "41.5"), (0.7342, "0.734"), (1.2e-5, "1.2e-05"), (None, "—"), (math.nan, "—"),
])
def test_numbers_read_as_people_write_them(value, text):
    assert charts.number_text(value) == text


def test_every_colour_on_the_charts_meets_wcag_contrast_on_paper_and_on_the_plot():
    svg = charts.tradeoff_svg(X, Y, [Point((1, 0, 0, 0), 3, 3)], [Point((0, 0, 0, 0), 1.0, 2.0)],
                              [Point((0, 0, 0, 0), 1.0, 2.0)], Point((2, 0, 0, 0), 2, 2), join=True, sampled="s")
    svg += charts.parallel_svg([X, Y, Z], [Line((0, 0, 0, 0), [1, 2, 3], 1), Line((1, 0, 0, 0), [2, 1, 4])],
                               shown_of=2)
    root = ET.fromstring(f"<all>{svg}</all>")
    for text in root.iter(f"{SVG}text"):
        for ground in (pictures.PAPER, "#ffffff"):
            assert contrast(text.get("fill"), ground) >= 4.5, text.text
    # Marks that carry meaning: sample dots, front, picks, baseline.
    for colour in (pictures.RULE, pictures.FRAME, pictures.INK, pictures.BAR_BASELINE):
        for ground in (pictures.PAPER, "#ffffff"):
            assert contrast(colour, ground) >= 3.0


@pytest.mark.parametrize(("low", "high"), [(0.0, 5e-324), (1e9, 1e9 + 1.2e-7), (-1e9, -1e9 + 1e-6)])
def test_a_range_too_narrow_to_step_through_gets_one_tick_instead_of_an_endless_loop(low, high):
    # Before: a step below the float spacing at 1e9 never advanced the loop, and 5e-324 / 5 is 0.
    assert charts.nice_ticks(low, high) == [low]
