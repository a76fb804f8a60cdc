"""SVG pictures of a comparison: the rigs' fields over a deep-sky object, and bars relative to the baseline.

Pure functions from plain numbers to SVG text (no web framework, no database), so they can be tested
and reused on their own. Each picture is an accessible image: ``role="img"`` with a ``<title>`` and a
``<desc>`` that says in words what the drawing shows, so a screen reader gets the same facts.

Our own plain look: a light paper ground, dark ink, one blue-green for the rigs' frames, a sand colour
for the object, and presentation attributes only (no ``<style>``), so the pictures also work under a
strict Content-Security-Policy and as standalone ``.svg`` files.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from xml.sax.saxutils import escape, quoteattr

# The palette. Text colours reach 4.5:1 and graphic strokes 3:1 against PAPER (WCAG 2.1, success
# criteria 1.4.3 and 1.4.11); tests/api/test_pictures.py checks it with the WCAG luminance formula.
PAPER = "#fbfaf6"
INK = "#1b2330"
MUTED = "#4b5563"
FRAME = "#0d6179"
OBJECT_FILL = "#ecdcae"
OBJECT_EDGE = "#85661a"
BAR = "#2f6b57"
BAR_BASELINE = "#6b4a8a"
RULE = "#767676"

FONT = "system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif"

NAME_CHARS = 30


@dataclass(frozen=True)
class Frame:
    """One rig's field of view, from the target_fit calculator (None where it could not compute)."""

    name: str
    width_arcmin: float | None
    height_arcmin: float | None
    fits: bool | None = None
    panels: float | None = None


@dataclass(frozen=True)
class SkyObject:
    label: str  # e.g. "NGC 598 (M 33, Triangulum Galaxy)"
    major_arcmin: float
    minor_arcmin: float
    credit: str  # the catalogue, credited on the picture itself


@dataclass(frozen=True)
class Series:
    """One group of bars: a figure per rig, relative to the baseline rig (which is 1)."""

    heading: str
    note: str
    values: Sequence[float | None]


def _finite(value: float | None) -> bool:
    return value is not None and isinstance(value, (int, float)) and math.isfinite(value) and value > 0


def short_name(name: str, limit: int = NAME_CHARS) -> str:
    return name if len(name) <= limit else name[: limit - 1].rstrip() + "…"


def fit_text(text: str, width_px: float, size: float, bold: bool = False) -> str:
    """``text`` shortened with an ellipsis to about ``width_px`` (SVG text does not wrap or clip).

    The average advance of a sans-serif character is taken as 0.56 em (0.6 em bold), enough for the
    proportional faces browsers fall back to; digits and lower case are narrower than that.
    """
    per_char = size * (0.6 if bold else 0.56)
    return short_name(text, max(int(width_px / per_char), 4))


def arcmin_text(value: float) -> str:
    """Angles as people read them on a chart: 134′, 65.3′, 2.5′."""
    return f"{value:.0f}′" if value >= 100 else f"{value:.1f}′"


def ratio_text(value: float | None) -> str:
    """A ratio to three significant figures, e.g. 12.5×, 1.00×, 0.391×; n/a when undefined."""
    if not _finite(value):
        return "n/a"
    if value >= 100:
        return f"{value:.0f}×"
    if value >= 10:
        return f"{value:.1f}×"
    if value >= 1:
        return f"{value:.2f}×"
    return f"{value:#.3g}×"


def _text(x: float, y: float, content: str, *, size: int = 13, fill: str = INK, weight: str = "normal",
          anchor: str = "start") -> str:
    return (f'<text x="{x:.1f}" y="{y:.1f}" font-size="{size}" fill="{fill}" font-weight="{weight}" '
            f'text-anchor="{anchor}">{escape(content)}</text>')


def _svg(width: float, height: float, ident: str, title: str, desc: str, body: list[str]) -> str:
    return "\n".join([
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width:.0f} {height:.0f}" '
        f'width="{width:.0f}" height="{height:.0f}" role="img" '
        f'aria-labelledby="{ident}-title {ident}-desc" font-family={quoteattr(FONT)}>',
        f'<title id="{ident}-title">{escape(title)}</title>',
        f'<desc id="{ident}-desc">{escape(desc)}</desc>',
        f'<rect width="100%" height="100%" fill="{PAPER}"/>',
        *body,
        "</svg>",
    ])


# --- fields of view -------------------------------------------------------------------------------

PANEL_W, PANEL_H, LABEL_H = 236, 214, 44
MARGIN, HEAD_H, FOOT_H = 12, 54, 60
SCALE_STEPS_ARCMIN = (1, 2, 5, 10, 15, 20, 30, 60, 120, 180, 300, 600, 1200, 3000)


def _frame_sides(frame: Frame) -> tuple[float, float] | None:
    if not (_finite(frame.width_arcmin) and _finite(frame.height_arcmin)):
        return None
    # Drawn landscape: the camera can be turned so the object's major axis lies along the long side.
    return max(frame.width_arcmin, frame.height_arcmin), min(frame.width_arcmin, frame.height_arcmin)


def fields_scale(frames: Sequence[Frame], target: SkyObject) -> float:
    """Pixels per arcminute shared by every panel: the largest field or the object fits each panel."""
    sides = [s for s in map(_frame_sides, frames) if s is not None]
    longest = max([target.major_arcmin, *(s[0] for s in sides)])
    widest = max([target.minor_arcmin, *(s[1] for s in sides)])
    box_w, box_h = PANEL_W - 24, PANEL_H - LABEL_H - 16
    return min(box_w / longest, box_h / widest)


def _scale_bar_arcmin(scale: float) -> int:
    room = (PANEL_W - 24) * 0.45 / scale
    fitting = [step for step in SCALE_STEPS_ARCMIN if step <= room]
    return fitting[-1] if fitting else SCALE_STEPS_ARCMIN[0]


def _angle_label(arcmin: int) -> str:
    return f"{arcmin // 60}°" if arcmin % 60 == 0 else f"{arcmin}′"


def _fit_words(frame: Frame) -> str:
    if frame.fits is True:
        return "object fits"
    if frame.fits is False and _finite(frame.panels):
        return f"{frame.panels:.0f} panels"
    if frame.fits is False:
        return "object does not fit"
    return ""


def fields_svg(frames: Sequence[Frame], target: SkyObject, *, ident: str = "fields", columns: int = 3) -> str:
    """Each rig's field drawn over the object's outline, every panel to the same angular scale."""
    n = max(len(frames), 1)
    cols = min(n, columns)
    rows = math.ceil(n / cols)
    width = 2 * MARGIN + max(cols, 2) * PANEL_W  # room for the heading even with one rig
    height = HEAD_H + rows * PANEL_H + FOOT_H
    scale = fields_scale(frames, target)
    room = width - 2 * MARGIN
    body = [
        _text(MARGIN, 22, fit_text(f"Fields of view over {target.label}", room, 15, bold=True),
              size=15, weight="bold"),
        _text(MARGIN, 41, fit_text(f"Object {arcmin_text(target.major_arcmin)} × "
                                   f"{arcmin_text(target.minor_arcmin)} (sand ellipse); each rig's camera "
                                   "field (blue-green frame); all to one scale", room, 12), size=12, fill=MUTED),
    ]
    facts = []
    for i, frame in enumerate(frames):
        x0 = MARGIN + (i % cols) * PANEL_W
        y0 = HEAD_H + (i // cols) * PANEL_H
        cx, cy = x0 + PANEL_W / 2, y0 + LABEL_H + (PANEL_H - LABEL_H) / 2 - 4
        body.append(f'<g aria-hidden="true"><rect x="{x0 + 4}" y="{y0}" width="{PANEL_W - 8}" '
                    f'height="{PANEL_H - 8}" fill="none" stroke="{RULE}" stroke-width="1" rx="4"/>')
        body.append(f'<ellipse cx="{cx:.1f}" cy="{cy:.1f}" rx="{target.major_arcmin / 2 * scale:.2f}" '
                    f'ry="{target.minor_arcmin / 2 * scale:.2f}" fill="{OBJECT_FILL}" stroke="{OBJECT_EDGE}" '
                    f'stroke-width="1.5"/>')
        sides = _frame_sides(frame)
        size_words = "field unknown"
        if sides is not None:
            w, h = sides[0] * scale, sides[1] * scale
            body.append(f'<rect x="{cx - w / 2:.2f}" y="{cy - h / 2:.2f}" width="{w:.2f}" height="{h:.2f}" '
                        f'fill="none" stroke="{FRAME}" stroke-width="2.5"/>')
            size_words = f"{arcmin_text(sides[0])} × {arcmin_text(sides[1])}"
        body.append("</g>")
        fit = _fit_words(frame)
        body.append(_text(x0 + 12, y0 + 18, fit_text(frame.name, PANEL_W - 24, 13, bold=True), weight="bold"))
        body.append(_text(x0 + 12, y0 + 36, fit_text(f"{size_words}{' · ' + fit if fit else ''}", PANEL_W - 24, 12),
                          size=12, fill=MUTED))
        facts.append(f"{frame.name}: field {size_words}{', ' + fit if fit else ''}.")
    if not frames:
        body.append(_text(MARGIN, HEAD_H + 40, "No public rigs to draw.", fill=MUTED))
    bar = _scale_bar_arcmin(scale)
    y = height - FOOT_H + 14
    body.append(f'<line x1="{MARGIN + 4}" y1="{y}" x2="{MARGIN + 4 + bar * scale:.2f}" y2="{y}" '
                f'stroke="{INK}" stroke-width="3"/>')
    body.append(_text(MARGIN + 12 + bar * scale, y + 4, f"{_angle_label(bar)} on the sky, every panel "
                                                         "to this scale", size=12))
    for k, line in enumerate(textwrap.wrap(f"Object size: {target.credit}", int(room / (11 * 0.56)))[:2]):
        body.append(_text(MARGIN + 4, y + 24 + 14 * k, line, size=11, fill=MUTED))
    title = f"Fields of view of {len(frames)} rig(s) over {target.label}"
    desc = (f"Each panel draws one rig's camera field as a blue-green rectangle, long side across, over "
            f"the outline of {target.label} ({arcmin_text(target.major_arcmin)} by "
            f"{arcmin_text(target.minor_arcmin)}, major axis across), all to the same angular scale. "
            + " ".join(facts) + f" Object size from {target.credit}")
    return _svg(width, height, ident, title, desc, body)


# --- bars relative to the baseline ----------------------------------------------------------------

BAR_W, LABEL_W, VALUE_W = 380, 236, 110
BAR_H, BAR_GAP, GROUP_HEAD = 20, 7, 46


def bars_svg(names: Sequence[str], series: Sequence[Series], baseline: int, *, ident: str = "bars") -> str:
    """Horizontal bars, one group per series, each to its own linear scale with a line at 1× (the baseline)."""
    width = 2 * MARGIN + LABEL_W + BAR_W + VALUE_W
    group_h = GROUP_HEAD + len(names) * (BAR_H + BAR_GAP) + 12
    height = HEAD_H + len(series) * group_h
    room = width - 2 * MARGIN
    body = [_text(MARGIN, 22, fit_text(f"Relative to the baseline, {names[baseline]}" if names
                                       else "Relative to the baseline", room, 15, bold=True), size=15, weight="bold")]
    facts = []
    for g, group in enumerate(series):
        y0 = HEAD_H + g * group_h
        body.append(_text(MARGIN, y0 + 18, group.heading, size=14, weight="bold"))
        body.append(_text(MARGIN, y0 + 35, fit_text(group.note, room, 12), size=12, fill=MUTED))
        finite = [v for v in group.values if _finite(v)]
        top = max([1.0, *finite])
        x_bar = MARGIN + LABEL_W
        one = x_bar + BAR_W / top
        words = []
        for i, (name, value) in enumerate(zip(names, group.values)):
            y = y0 + GROUP_HEAD + i * (BAR_H + BAR_GAP)
            body.append(_text(x_bar - 8, y + BAR_H - 5, fit_text(name, LABEL_W - 12, 12, bold=i == baseline),
                              size=12, anchor="end", weight="bold" if i == baseline else "normal"))
            if _finite(value):
                length = max(BAR_W * value / top, 1.0)
                colour = BAR_BASELINE if i == baseline else BAR
                body.append(f'<rect x="{x_bar}" y="{y}" width="{length:.2f}" height="{BAR_H}" fill="{colour}" '
                            f'aria-hidden="true"/>')
                mark = " baseline" if i == baseline else ""
                body.append(_text(x_bar + length + 6, y + BAR_H - 5, ratio_text(value) + mark, size=12,
                                  weight="bold" if i == baseline else "normal"))
            else:
                body.append(_text(x_bar + 6, y + BAR_H - 5, "n/a", size=12, fill=MUTED))
            words.append(f"{name} {ratio_text(value)}")
        bottom = y0 + GROUP_HEAD + len(names) * (BAR_H + BAR_GAP) - BAR_GAP
        body.append(f'<line x1="{one:.2f}" y1="{y0 + GROUP_HEAD - 4}" x2="{one:.2f}" y2="{bottom + 4}" '
                    f'stroke="{INK}" stroke-width="1.5" stroke-dasharray="4 3" aria-hidden="true"/>')
        facts.append(f"{group.heading} ({group.note}): " + "; ".join(words) + ".")
    title = "Light grasp and exposure times relative to the baseline rig"
    desc = (f"Bars relative to the baseline rig {names[baseline] if names else ''} (1×, dashed line). "
            + " ".join(facts))
    return _svg(width, height, ident, title, desc, body)


# Shared with the evaluation report's charts (api/evaluations/charts.py): one look for every picture.
svg_document = _svg
text_element = _text
