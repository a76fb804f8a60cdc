"""SVG charts of a purchase evaluation: the trade-off on two objectives, and parallel axes for more.

Pure functions from plain numbers to SVG text, in the club pictures' look and palette
(:mod:`api.clubs.pictures`): accessible images (``role="img"``, a ``<title>`` and a ``<desc>`` in
words), presentation attributes only, so they work under a strict Content-Security-Policy and as
standalone files.

Every drawn combination carries ``data-indices="t,c,r,m,b"`` (its indices into the request's lists
and its binning factor; ``"t,-,r,m,-,e"`` for a visual one with eyepiece e) and ``data-x`` /
``data-y`` (its values, 7 significant figures); the front's points also carry
``data-front="true"``, the top picks ``data-pick="<rank>"`` and the baseline
``data-baseline="true"``, so a test (or a script) can read back exactly what is drawn.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from api.clubs.pictures import BAR_BASELINE, FRAME, INK, MUTED, PAPER, RULE, fit_text, svg_document, text_element

Indices = tuple[int, int, int, int]

WIDTH, HEIGHT = 880, 540
LEFT, RIGHT, TOP, BOTTOM = 92, 28, 78, 78

#: Most front rows the parallel-axes chart draws (the picks always among them).
MAX_PARALLEL_ROWS = 300


@dataclass(frozen=True)
class Axis:
    key: str  # "<calculator>.<output>"
    label: str  # words for people, e.g. "Total price"
    unit: str
    direction: str  # "min" or "max"

    @property
    def title(self) -> str:
        unit = f" [{self.unit}]" if self.unit else ""
        better = "lower" if self.direction == "min" else "higher"
        return f"{self.label}{unit}, {better} is better"


@dataclass(frozen=True)
class Point:
    indices: Indices
    x: float
    y: float | None = None


def number_text(value: float | None) -> str:
    """A value as a chart or a sheet shows it: 2,350 · 41.5 · 0.734 · 1.2e-05; — when undefined."""
    if value is None or not math.isfinite(value):
        return "—"
    magnitude = abs(value)
    if magnitude >= 1e7 or (0 < magnitude < 1e-3):
        return f"{value:.3g}"
    if magnitude >= 1000:
        return f"{value:,.0f}"
    return f"{value:.3g}"


def nice_ticks(low: float, high: float, count: int = 6) -> list[float]:
    """Round tick values covering [low, high]: steps of 1, 2 or 5 times a power of ten.

    A range narrower than a millionth of its magnitude (or not finite, or below 1e-300) gets the one tick ``low``:
    its steps would be lost in floating-point rounding. The ticks are counted before they are made,
    so their number is bounded (about ``count``) whatever the values."""
    span = high - low
    scale = max(abs(low), abs(high))
    if not (math.isfinite(span) and span > 1e-6 * scale and span > 1e-300):
        return [low]
    raw = span / max(count - 1, 1)
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)
    first = math.ceil(low / step - 1e-9) * step
    n = int(math.floor((high - first) / step + 1e-9)) + 1
    return [0.0 if abs(v) < step * 1e-9 else v for v in (first + i * step for i in range(n))]


def _range(values: Sequence[float]) -> tuple[float, float]:
    low, high = min(values), max(values)
    if high == low:
        pad = abs(low) * 0.05 or 1.0
        return low - pad, high + pad
    pad = (high - low) * 0.04
    return low - pad, high + pad


def _data(value: float) -> str:
    return format(value, ".7g")


def indices_text(ix: Indices) -> str:
    """``data-indices`` of a combination, as the chart and the pick sheets write it."""
    return ",".join("-" if i is None else str(i) for i in ix)  # a visual combination has no camera


# Where a pick's number may go, around its ring: near first, then further out with a leader line.
_OFFSETS = [(dx * r, dy * r) for r in (1, 2, 3, 4) for dx, dy in
            ((1, -1), (1, 1), (-1, -1), (-1, 1), (0, -1.4), (0, 1.4), (1.4, 0), (-1.4, 0))]


def _pick_labels(spots: Sequence[tuple[float, float]], area: tuple[float, float, float, float]) -> list[str]:
    """The picks' numbers placed greedily so that no two overlap (picks often sit close together)."""
    # Every ring is an obstacle too, so no number lands on another pick's ring.
    placed: list[tuple[float, float, float, float]] = [(x - 7, y - 7, x + 7, y + 7) for x, y in spots]
    out = []
    x0, y0, x1, y1 = area
    for rank, (x, y) in enumerate(spots, 1):
        w, h = 7.0 * len(str(rank)) + 2, 12.0
        for dx, dy in _OFFSETS:
            lx, ly = x + dx * 9 + (0 if dx >= 0 else -w), y + dy * 9
            box = (lx, ly - h + 2, lx + w, ly + 2)
            inside = x0 <= box[0] and box[2] <= x1 and y0 <= box[1] and box[3] <= y1
            if inside and not any(box[0] < b[2] and b[0] < box[2] and box[1] < b[3] and b[1] < box[3]
                                  for b in placed):
                break
        placed.append(box)
        if abs(dx) > 1.5 or abs(dy) > 1.5:
            out.append(f'<line x1="{x:.1f}" y1="{y:.1f}" x2="{(box[0] + box[2]) / 2:.1f}" y2="{(box[1] + box[3]) / 2:.1f}" '
                       f'stroke="{MUTED}" stroke-width="0.8" aria-hidden="true"/>')
        # A paper-coloured halo keeps the number legible over dots and lines.
        out.append(text_element(lx, ly, str(rank), size=11, weight="bold").replace(
            "<text ", f'<text stroke="{PAPER}" stroke-width="3" paint-order="stroke" ', 1))
    return out


def tradeoff_svg(x_axis: Axis, y_axis: Axis | None, cloud: Sequence[Point], front: Sequence[Point],
                 picks: Sequence[Point], baseline: Point | None, *, join: bool, sampled: str,
                 ident: str = "trade-off") -> str:
    """Feasible combinations (``cloud``, small grey dots), the front (blue-green, joined when
    ``join``), the top picks ringed and numbered 1…, the baseline as a purple diamond.

    With ``y_axis`` None (one objective) every point sits on one line. ``sampled`` says in words
    how the cloud was drawn (e.g. "2,000 of 1,000,000 combinations sampled, 1,204 feasible").
    """
    drawn = [*cloud, *front, *picks, *([baseline] if baseline else [])]
    xs = [p.x for p in drawn]
    x_low, x_high = _range(xs or [0.0])
    ys = [p.y for p in drawn if p.y is not None]
    y_low, y_high = _range(ys or [0.0])
    plot_w, plot_h = WIDTH - LEFT - RIGHT, HEIGHT - TOP - BOTTOM

    def sx(v: float) -> float:
        return LEFT + (v - x_low) / (x_high - x_low) * plot_w

    def sy(v: float | None) -> float:
        if v is None or y_axis is None:
            return TOP + plot_h / 2
        return TOP + plot_h - (v - y_low) / (y_high - y_low) * plot_h

    def where(p: Point) -> str:
        y = "" if p.y is None else f' data-y="{_data(p.y)}"'
        return f'cx="{sx(p.x):.1f}" cy="{sy(p.y):.1f}" data-indices="{indices_text(p.indices)}" data-x="{_data(p.x)}"{y}'

    room = WIDTH - 2 * 12
    heading = f"Trade-off: {x_axis.label}" + (f" against {y_axis.label}" if y_axis else "")
    body = [
        text_element(12, 22, fit_text(heading, room, 15, bold=True), size=15, weight="bold"),
        text_element(12, 41, fit_text(sampled, room, 12), size=12, fill=MUTED),
    ]
    # Legend.
    legend_y = 60
    body += [
        f'<g aria-hidden="true"><circle cx="20" cy="{legend_y - 4}" r="2.5" fill="{RULE}"/>',
        text_element(28, legend_y, f"feasible sample ({len(cloud):,})", size=12),
        f'<circle cx="180" cy="{legend_y - 4}" r="4.5" fill="{FRAME}"/>',
        text_element(190, legend_y, f"Pareto front ({len(front):,})", size=12),
        f'<circle cx="330" cy="{legend_y - 4}" r="7" fill="none" stroke="{INK}" stroke-width="1.5"/>',
        text_element(342, legend_y, "top picks, numbered", size=12),
        f'<path d="M 490 {legend_y - 11} l 7 7 l -7 7 l -7 -7 z" fill="{BAR_BASELINE}"/>',
        text_element(503, legend_y, "baseline", size=12),
        "</g>",
    ]
    # Axes, grid and ticks.
    body.append(f'<g aria-hidden="true" font-size="11" fill="{INK}">')
    body.append(f'<rect x="{LEFT}" y="{TOP}" width="{plot_w}" height="{plot_h}" fill="#ffffff" '
                f'stroke="{RULE}" stroke-width="1"/>')
    for tick in nice_ticks(x_low, x_high):
        x = sx(tick)
        body.append(f'<line x1="{x:.1f}" y1="{TOP}" x2="{x:.1f}" y2="{TOP + plot_h}" stroke="#e3e4df" stroke-width="1"/>')
        body.append(text_element(x, TOP + plot_h + 16, number_text(tick), size=11, anchor="middle"))
    if y_axis is not None:
        for tick in nice_ticks(y_low, y_high):
            y = sy(tick)
            body.append(f'<line x1="{LEFT}" y1="{y:.1f}" x2="{LEFT + plot_w}" y2="{y:.1f}" stroke="#e3e4df" stroke-width="1"/>')
            body.append(text_element(LEFT - 6, y + 4, number_text(tick), size=11, anchor="end"))
    body.append("</g>")
    body.append(text_element(LEFT + plot_w / 2, HEIGHT - 30, fit_text(x_axis.title, plot_w, 13), size=13,
                             anchor="middle", weight="bold"))
    if y_axis is not None:
        cx, cy = 20, TOP + plot_h / 2
        body.append(f'<g transform="rotate(-90 {cx} {cy:.1f})">'
                    + text_element(cx, cy, fit_text(y_axis.title, plot_h, 13), size=13, anchor="middle",
                                   weight="bold") + "</g>")
    # Points: the cloud first, the front over it, then picks and baseline on top.
    on_front = {p.indices for p in front}
    body.append(f'<g data-set="feasible-sample" fill="{RULE}">')
    body += [f'<circle r="2.5" {where(p)}/>' for p in cloud if p.indices not in on_front]
    body.append("</g>")
    if join and len(front) > 1:
        ordered = sorted(front, key=lambda p: (p.x, p.y if p.y is not None else 0.0))
        path = " ".join(f"{sx(p.x):.1f},{sy(p.y):.1f}" for p in ordered)
        body.append(f'<polyline points="{path}" fill="none" stroke="{FRAME}" stroke-width="2" aria-hidden="true"/>')
    body.append(f'<g data-set="front" fill="{FRAME}" stroke="{PAPER}" stroke-width="1">')
    body += [f'<circle r="4.5" data-front="true" {where(p)}/>' for p in front]
    body.append("</g>")
    if baseline is not None:
        x, y = sx(baseline.x), sy(baseline.y)
        body.append(f'<path d="M {x:.1f} {y - 8:.1f} l 8 8 l -8 8 l -8 -8 z" fill="{BAR_BASELINE}" '
                    f'data-baseline="true" data-indices="{indices_text(baseline.indices)}"/>')
        body.append(text_element(x + 10, y + 16, "baseline", size=11, fill=BAR_BASELINE, weight="bold"))
    body.append(f'<g data-set="picks" fill="none" stroke="{INK}" stroke-width="1.5">')
    for rank, p in enumerate(picks, 1):
        body.append(f'<circle r="7" data-pick="{rank}" {where(p)}/>')
    body.append("</g>")
    body += _pick_labels([(sx(p.x), sy(p.y)) for p in picks], (LEFT, TOP, LEFT + plot_w, TOP + plot_h))

    title = heading + (" (lower left is best)" if y_axis and x_axis.direction == y_axis.direction == "min" else "")
    best = picks[0] if picks else None
    desc = (f"A scatter chart of purchase combinations: across, {x_axis.title}"
            + (f"; up, {y_axis.title}" if y_axis else "") + f". {sampled}. {len(front):,} combinations "
            "are on the Pareto front (blue-green" + (", joined by a line" if join and len(front) > 1 else "")
            + f"); the top {len(picks)} picks are ringed and numbered; the baseline is a purple diamond."
            + (f" Pick 1: {x_axis.label} {number_text(best.x)}"
               + (f", {y_axis.label} {number_text(best.y)}" if y_axis else "") + "." if best else ""))
    return _with_id(svg_document(WIDTH, HEIGHT, ident, title, desc, body), ident)


@dataclass(frozen=True)
class Line:
    indices: Indices
    values: Sequence[float]
    pick: int | None = None  # rank among the top picks


PAR_HEIGHT = 460
PAR_TOP, PAR_BOTTOM = 96, 52

READING = ("Each line is one combination on the Pareto front; each upright axis is one objective, "
           "better at the top, so a line that stays high is good on every objective, and lines that "
           "cross trade one objective for another.")


def parallel_svg(axes: Sequence[Axis], lines: Sequence[Line], *, shown_of: int,
                 ident: str = "objectives") -> str:
    """Parallel axes: one upright axis per objective, scaled to the front's range with better at
    the top; one line per front row (picks blue-green and numbered at the right)."""
    k = len(axes)
    left, right = 70, 70
    step = (WIDTH - left - right) / max(k - 1, 1)
    plot_h = PAR_HEIGHT - PAR_TOP - PAR_BOTTOM
    ranges = []
    for j in range(k):
        values = [ln.values[j] for ln in lines] or [0.0]
        ranges.append((min(values), max(values)))

    def y(j: int, v: float) -> float:
        low, high = ranges[j]
        good = 0.5 if high == low else ((high - v) if axes[j].direction == "min" else (v - low)) / (high - low)
        return PAR_TOP + (1 - good) * plot_h

    room = WIDTH - 24
    body = [text_element(12, 22, fit_text(f"All {k} objectives of the front", room, 15, bold=True),
                         size=15, weight="bold"),
            text_element(12, 41, fit_text(f"{len(lines):,} of {shown_of:,} front rows drawn; better at "
                                          "the top of each axis", room, 12), size=12, fill=MUTED)]
    body.append(f'<g aria-hidden="true" stroke="{INK}" stroke-width="1.5">')
    for j in range(k):
        x = left + j * step
        body.append(f'<line x1="{x:.1f}" y1="{PAR_TOP}" x2="{x:.1f}" y2="{PAR_TOP + plot_h}"/>')
    body.append("</g>")
    width_each = max(step - 8, 90)
    for j, axis in enumerate(axes):
        x = left + j * step
        anchor = "start" if j == 0 and k > 1 else "end" if j == k - 1 and k > 1 else "middle"
        unit = f" [{axis.unit}]" if axis.unit else ""
        body.append(text_element(x, 64, fit_text(axis.label + unit, width_each, 12, bold=True), size=12,
                                 weight="bold", anchor=anchor))
        body.append(text_element(x, 80, "lower is better" if axis.direction == "min" else "higher is better",
                                 size=11, fill=MUTED, anchor=anchor))
        low, high = ranges[j]
        best, worst = (low, high) if axis.direction == "min" else (high, low)
        body.append(text_element(x + 5, PAR_TOP - 4, number_text(best), size=11))
        body.append(text_element(x + 5, PAR_TOP + plot_h + 15, number_text(worst), size=11))
    body.append(f'<g data-set="front-lines" fill="none" stroke="{RULE}" stroke-width="1">')
    for ln in lines:
        if ln.pick is None:
            pts = " ".join(f"{left + j * step:.1f},{y(j, v):.1f}" for j, v in enumerate(ln.values))
            body.append(f'<polyline points="{pts}" data-indices="{indices_text(ln.indices)}"/>')
    body.append("</g>")
    body.append(f'<g data-set="pick-lines" fill="none" stroke="{FRAME}" stroke-width="2.5">')
    labels = []
    for ln in sorted((ln for ln in lines if ln.pick is not None), key=lambda ln: -ln.pick):
        pts = " ".join(f"{left + j * step:.1f},{y(j, v):.1f}" for j, v in enumerate(ln.values))
        body.append(f'<polyline points="{pts}" data-indices="{indices_text(ln.indices)}" data-pick="{ln.pick}"/>')
        labels.append(text_element(left + (k - 1) * step + 8, y(k - 1, ln.values[-1]) + 4, str(ln.pick),
                                   size=11, fill=FRAME, weight="bold"))
    body.append("</g>")
    body += labels
    title = f"Parallel axes of {k} objectives over the Pareto front"
    desc = (READING + " Axes: " + "; ".join(
        f"{a.title}, from {number_text(ranges[j][0])} to {number_text(ranges[j][1])}" for j, a in enumerate(axes))
        + f". {len(lines):,} of {shown_of:,} front rows are drawn; the top picks are blue-green and numbered.")
    return _with_id(svg_document(WIDTH, PAR_HEIGHT, ident, title, desc, body), ident)


def _with_id(svg: str, ident: str) -> str:
    """The picture's root carries ``id`` so a page (and a test) can address each chart."""
    return svg.replace("<svg ", f'<svg id="{ident}" ', 1)


def svg_file(svg: str) -> str:
    """A chart as a standalone .svg file."""
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + svg

