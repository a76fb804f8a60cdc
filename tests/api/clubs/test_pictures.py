"""api/clubs/pictures.py: the SVG builders draw to one scale, stay well-formed and accessible, and meet contrast."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from api.clubs import pictures
from api.clubs.pictures import Frame, Series, SkyObject

SVG = "{http://www.w3.org/2000/svg}"
M33 = SkyObject("NGC 598 (M 33, Triangulum Galaxy)", 62.1, 36.7, "OpenNGC, CC BY-SA 4.0")

angles = st.floats(min_value=0.5, max_value=3000, allow_nan=False)


def parse(svg: str) -> ET.Element:
    return ET.fromstring(svg)


def frame_rects(root: ET.Element) -> list[ET.Element]:
    return [r for r in root.iter(f"{SVG}rect") if r.get("stroke") == pictures.FRAME]


def texts(root: ET.Element) -> list[str]:
    return [t.text or "" for t in root.iter(f"{SVG}text")]


# --- the fields picture ---------------------------------------------------------------------------

@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(angles, angles), min_size=1, max_size=7), angles, angles)
def test_every_frame_and_the_object_share_one_angular_scale(sides, major, minor):
    target = SkyObject("object", max(major, minor), min(major, minor), "catalogue")
    frames = [Frame(f"rig {i}", w, h) for i, (w, h) in enumerate(sides)]
    root = parse(pictures.fields_svg(frames, target))
    scale = pictures.fields_scale(frames, target)
    rects = frame_rects(root)
    assert len(rects) == len(frames)
    for rect, (w, h) in zip(rects, sides):
        # Drawn landscape: the long side across. Coordinates are written to 0.01 px.
        assert float(rect.get("width")) == pytest.approx(max(w, h) * scale, abs=0.006)
        assert float(rect.get("height")) == pytest.approx(min(w, h) * scale, abs=0.006)
    for ellipse in root.iter(f"{SVG}ellipse"):
        assert float(ellipse.get("rx")) == pytest.approx(target.major_arcmin / 2 * scale, abs=0.006)
        assert float(ellipse.get("ry")) == pytest.approx(target.minor_arcmin / 2 * scale, abs=0.006)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(angles, angles), min_size=1, max_size=7), angles)
def test_the_largest_extent_fits_inside_a_panel(sides, major):
    target = SkyObject("object", major, major / 2, "catalogue")
    frames = [Frame("r", w, h) for w, h in sides]
    root = parse(pictures.fields_svg(frames, target))
    for rect in frame_rects(root):
        assert float(rect.get("width")) <= pictures.PANEL_W - 24 + 0.01
        assert float(rect.get("height")) <= pictures.PANEL_H - pictures.LABEL_H - 16 + 0.01


def test_the_fields_picture_says_in_words_what_it_draws():
    frames = [Frame("Big newtonian", 65.3, 43.5, True, 1.0), Frame("Long SCT", 20.0, 13.0, False, 12.0)]
    root = parse(pictures.fields_svg(frames, M33, ident="f1"))
    assert root.get("role") == "img" and root.get("aria-labelledby") == "f1-title f1-desc"
    assert root.find(f"{SVG}title").get("id") == "f1-title"
    desc = root.find(f"{SVG}desc").text
    assert "Big newtonian: field 65.3′ × 43.5′, object fits." in desc
    assert "Long SCT: field 20.0′ × 13.0′, 12 panels." in desc
    assert M33.label in desc and M33.credit in desc
    assert any("OpenNGC" in t for t in texts(root))


def test_a_rig_without_a_field_is_drawn_without_a_frame():
    root = parse(pictures.fields_svg([Frame("no camera data", None, None), Frame("ok", 60, 40)], M33))
    assert len(frame_rects(root)) == 1
    assert any("field unknown" in t for t in texts(root))


def test_names_are_escaped_and_shortened():
    name = "<script>&\"rig\"</script> with a very long name indeed, longer than any panel"
    root = parse(pictures.fields_svg([Frame(name, 60, 40)], M33))
    label = next(t for t in texts(root) if t.startswith("<script>"))
    assert label.endswith("…") and len(label) < len(name)
    assert name in root.find(f"{SVG}desc").text  # the description keeps the whole name


def test_the_scale_bar_is_a_round_angle_drawn_to_scale():
    frames = [Frame("r", 130, 90)]
    root = parse(pictures.fields_svg(frames, M33))
    scale = pictures.fields_scale(frames, M33)
    [bar] = [line for line in root.iter(f"{SVG}line") if line.get("stroke-width") == "3"]
    length_px = float(bar.get("x2")) - float(bar.get("x1"))
    label = next(t for t in texts(root) if "on the sky" in t)
    angle = re.match(r"(\d+)([°′])", label)
    arcmin = int(angle[1]) * (60 if angle[2] == "°" else 1)
    assert arcmin in pictures.SCALE_STEPS_ARCMIN
    assert length_px == pytest.approx(arcmin * scale, abs=0.01)


# --- the bars picture -----------------------------------------------------------------------------

ratios = st.floats(min_value=1e-3, max_value=1e3, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(st.lists(ratios, min_size=1, max_size=6), st.data())
def test_bar_lengths_are_proportional_to_the_values(values, data):
    baseline = data.draw(st.integers(0, len(values) - 1))
    names = [f"rig {i}" for i in range(len(values))]
    root = parse(pictures.bars_svg(names, [Series("Light grasp", "note", values)], baseline))
    bars = [r for r in root.iter(f"{SVG}rect") if r.get("fill") in {pictures.BAR, pictures.BAR_BASELINE}]
    assert len(bars) == len(values)
    top = max([1.0, *values])
    for bar, value in zip(bars, values):
        # Linear scale; bars shorter than 1 px are drawn 1 px wide so they stay visible.
        assert float(bar.get("width")) == pytest.approx(max(pictures.BAR_W * value / top, 1.0), abs=0.006)
    assert [b.get("fill") == pictures.BAR_BASELINE for b in bars] == [i == baseline for i in range(len(values))]


def test_the_dashed_line_marks_one_times_the_baseline():
    root = parse(pictures.bars_svg(["a", "b"], [Series("Time", "note", [1.0, 4.0])], 0))
    [line] = [line for line in root.iter(f"{SVG}line") if line.get("stroke-dasharray")]
    x_bar = pictures.MARGIN + pictures.LABEL_W
    assert float(line.get("x1")) == pytest.approx(x_bar + pictures.BAR_W / 4, abs=0.006)


def test_missing_values_are_written_not_drawn():
    root = parse(pictures.bars_svg(["a", "b"], [Series("Time", "note", [1.0, None])], 0))
    assert len([r for r in root.iter(f"{SVG}rect") if r.get("fill") == pictures.BAR]) == 0
    assert "n/a" in texts(root)
    assert "b n/a" in root.find(f"{SVG}desc").text


def test_the_bars_picture_describes_every_value():
    series = [Series("Light grasp", "area ratio", [1.0, 0.08]), Series("Time per pixel", "shorter is faster",
                                                                      [1.0, 1.75])]
    desc = parse(pictures.bars_svg(["Big", "Small"], series, 0)).find(f"{SVG}desc").text
    assert "Light grasp (area ratio): Big 1.00×; Small 0.0800×." in desc
    assert "Time per pixel (shorter is faster): Big 1.00×; Small 1.75×." in desc


@pytest.mark.parametrize("value, text", [(1.0, "1.00×"), (12.5, "12.5×"), (0.4391, "0.439×"), (0.08, "0.0800×"),
                                         (250.2, "250×"), (None, "n/a"), (float("nan"), "n/a")])
def test_ratios_read_to_three_significant_figures(value, text):
    assert pictures.ratio_text(value) == text


# --- contrast -------------------------------------------------------------------------------------

def luminance(colour: str) -> float:
    """Relative luminance of an sRGB colour: W3C, WCAG 2.1 (2018), definition "relative luminance"."""
    channels = [int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def contrast(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), L1 the lighter."""
    high, low = sorted((luminance(a), luminance(b)), reverse=True)
    return (high + 0.05) / (low + 0.05)


def test_the_contrast_formula_gives_the_standards_extremes():
    # WCAG 2.1: contrast ratios range from 1:1 to 21:1 (black on white).
    assert contrast("#000000", "#ffffff") == pytest.approx(21.0, rel=1e-12)
    assert contrast("#777777", "#777777") == pytest.approx(1.0, rel=1e-12)


@pytest.mark.parametrize("colour", [pictures.INK, pictures.MUTED])
def test_picture_text_meets_wcag_aa(colour):
    # WCAG 2.1 success criterion 1.4.3: 4.5:1 for normal text.
    assert contrast(colour, pictures.PAPER) >= 4.5


@pytest.mark.parametrize("colour", [pictures.FRAME, pictures.OBJECT_EDGE, pictures.BAR, pictures.BAR_BASELINE,
                                    pictures.RULE])
def test_picture_graphics_meet_wcag_non_text_contrast(colour):
    # WCAG 2.1 success criterion 1.4.11: 3:1 for the parts of a graphic needed to understand it.
    assert contrast(colour, pictures.PAPER) >= 3.0


def test_the_frame_stands_out_from_the_object_it_is_drawn_over():
    # The frame crosses the object's fill; 1.4.11's 3:1 applies there too.
    assert contrast(pictures.FRAME, pictures.OBJECT_FILL) >= 3.0


def test_the_page_colours_meet_wcag_aa():
    css = (Path(pictures.__file__).parent / "static" / "club.css").read_text(encoding="utf-8")
    var = dict(re.findall(r"--([a-z-]+):\s*(#[0-9a-f]{6})", css))
    pairs = [
        (var["ink"], var["paper"]), (var["muted"], var["paper"]), (var["link"], var["paper"]),
        (var["link"], "#ffffff"), ("#ffffff", var["link"]), (var["ink"], var["warn-bg"]),
        (var["ink"], var["head"]), (var["ink"], var["baseline"]), (var["muted"], "#ffffff"),
        ("#4a2f63", "#ffffff"),  # the baseline tag
    ]
    for text, ground in pairs:
        assert contrast(text, ground) >= 4.5, (text, ground)
