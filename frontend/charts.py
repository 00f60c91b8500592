"""Small trend charts as inline SVG, drawn by hand so pages stay light and text stays real text."""

from __future__ import annotations

import datetime as dt
import itertools
from html import escape

from engineering.formatting import format_number


def axis_labels(values: list[float]) -> list[str]:
    """Axis labels at the fewest decimals (0–4) that say each value to within a tenth of the smallest gap between
    them, so 0.23 and 1.40 in. w.c. read "0.2" and "1.4" (not "0" and "1") and ticks 121.5, 122, 122.5 never all
    read "122"; numbers as every page writes them (engineering.formatting: true minus, never −0)."""
    gaps = [abs(b - a) for a, b in itertools.pairwise(values) if abs(b - a) > 0]
    room = (min(gaps) if gaps else max(abs(v) for v in values) or 1.0) / 10
    for decimals in range(5):
        if all(abs(round(v, decimals) - v) <= room for v in values):
            break
    return [format_number(v, decimals=decimals) for v in values]


def _scale(lo: float, hi: float, a: float, b: float):
    span = (hi - lo) or 1.0
    return lambda v: a + (v - lo) / span * (b - a)


GLYPH_EM = 0.6  # a glyph's average width in ems, generous for DejaVu Sans (about 0.55; common practice for an estimate)
Box = tuple[float, float, float, float]  # x0, y0, x1, y1 in view units
Segment = tuple[float, float, float, float]


def text_box(x: float, y: float, text: str, fs: float, anchor: str = "start") -> Box:
    """The box a line of text takes, estimated: its baseline at ``y`` (ascenders a font size above, descenders a
    third below), as wide as ``GLYPH_EM`` ems a character."""
    w = len(text) * fs * GLYPH_EM
    x0 = x - w if anchor == "end" else x - w / 2 if anchor == "middle" else x
    return (x0, y - fs, x0 + w, y + fs / 3)


def segment_hits(seg: Segment, box: Box, margin: float = 2.0) -> bool:
    """Whether a line segment crosses or touches ``box`` widened by ``margin`` (Liang–Barsky clipping)."""
    x1, y1, x2, y2 = seg
    bx0, by0, bx1, by1 = box[0] - margin, box[1] - margin, box[2] + margin, box[3] + margin
    u0, u1 = 0.0, 1.0
    for p, q in ((x1 - x2, x1 - bx0), (x2 - x1, bx1 - x1), (y1 - y2, y1 - by0), (y2 - y1, by1 - y1)):
        if p == 0:
            if q < 0:
                return False
            continue
        t = q / p
        if p < 0:
            u0 = max(u0, t)
        else:
            u1 = min(u1, t)
        if u0 > u1:
            return False
    return True


def _boxes_meet(a: Box, b: Box) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def _segments(points: list[tuple[float, float]]) -> list[Segment]:
    if len(points) == 1:
        return [(*points[0], *points[0])]
    return [(*a, *b) for a, b in itertools.pairwise(points)]


def _limit_label(
    words: str, hy: float, *, obstacles: list[Segment], boxes: list[Box], fs: float, plot: Box, height: float
) -> str:
    """A limit line's words where they cross nothing drawn: just above or below the line, from its right end
    leftwards; where every such place is taken, under the plot between its dates with a sample of the line's dash."""
    x0, y0, x1, y1 = plot
    w = len(words) * fs * GLYPH_EM
    for gap in (0.0, 0.25, 0.5, 0.75, 1.0):
        tx = x1 - 4 - gap * (x1 - x0 - 8 - w)
        for ty in (hy - fs / 3 - 3, hy + fs + 3):  # just above the line (its descenders clear of it), else below
            box = text_box(tx, ty, words, fs, "end")
            if box[1] < y0 or box[3] > y1 or box[0] < x0:
                continue
            if segment_hits((x0, hy, x1, hy), box, margin=1.0):
                continue
            if any(segment_hits(s, box) for s in obstacles) or any(_boxes_meet(box, b) for b in boxes):
                continue
            return (
                f'<text x="{tx:.1f}" y="{ty:.1f}" text-anchor="end" fill="currentColor" font-size="{fs}" '
                f'data-limit-label="{escape(words)}">{escape(words)}</text>'
            )
    start, ty = (x0 + x1) / 2 - (w + 36) / 2, height - 12
    return (
        f'<line x1="{start:.1f}" y1="{ty - fs / 3:.1f}" x2="{start + 30:.1f}" y2="{ty - fs / 3:.1f}" '
        'stroke="currentColor" stroke-dasharray="2 4"/>'
        f'<text x="{start + 36:.1f}" y="{ty:.1f}" fill="currentColor" font-size="{fs}" '
        f'data-limit-label="{escape(words)}">{escape(words)}</text>'
    )


def line_chart(
    *,
    title: str,
    series: list[tuple[dt.date, float]],
    unit: str,
    forecast: list[tuple[dt.date, float]] | None = None,
    hline: tuple[float, str] | None = None,
    vline: tuple[dt.date, str] | None = None,
    segments: list[list[tuple[dt.date, float]]] | None = None,
    markers: list[tuple[dt.date, str]] | None = None,
    width: int = 640,
    height: int = 320,
) -> str:
    """A dated line chart with an optional dashed forecast, a limit line and marked dates.

    ``segments``, when given, are drawn as separate lines (e.g. one per set of filters) in place of ``series``,
    never joined; ``markers`` are further marked dates (e.g. each filter change). Text is sized for the chart
    to stay legible scaled down to a 360 px phone (at least about 10 px there): 18 units in a 640-wide view.
    """
    forecast = forecast or []
    segments = [seg for seg in (segments or []) if seg] or ([series] if series else [])
    series = [pt for seg in segments for pt in seg]
    points = series + forecast
    if not points:
        return f'<p class="muted">{escape(title)}: no data yet.</p>'
    marks = ([vline] if vline else []) + list(markers or [])
    dates = [d for d, _ in points] + [d for d, _ in marks]
    values = [v for _, v in points] + ([hline[0]] if hline else [])
    d0, d1 = min(dates), max(dates)
    if d0 == d1:
        d1 = d0 + dt.timedelta(days=1)
    v0, v1 = min(values), max(values)
    pad = (v1 - v0) * 0.1 or 1.0
    v0, v1 = v0 - pad, v1 + pad
    low, high = axis_labels([v0, v1])
    fs = 18  # font size in view units: 18 × 360/640 ≈ 10 px on a phone
    left, right, top, bottom = 64, width - 12, 70, height - 40
    x = _scale(d0.toordinal(), d1.toordinal(), left, right)
    y = _scale(v0, v1, bottom, top)

    def path_points(data) -> list[tuple[float, float]]:
        return [(x(d.toordinal()), y(v)) for d, v in data]

    def path(data):
        return " ".join(f"{'M' if i == 0 else 'L'}{px:.1f},{py:.1f}" for i, (px, py) in enumerate(path_points(data)))

    parts = [
        f'<svg viewBox="0 0 {width} {height}" role="img" aria-label="{escape(title)}" xmlns="http://www.w3.org/2000/svg">',
        f"<title>{escape(title)}</title>",
        # A long title is fitted to the chart's width (its text squeezed), never cut at the edge; the
        # average glyph is about 0.55 em wide (DejaVu Sans, common practice for an estimate).
        f'<text x="4" y="22" fill="currentColor" font-size="{fs}"'
        + (
            f' textLength="{width - 8}" lengthAdjust="spacingAndGlyphs"'
            if len(f"{title} ({unit})") * fs * 0.55 > width - 8
            else ""
        )
        + f">{escape(title)} ({escape(unit)})</text>",
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
        f'<line x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
        f'<text x="{left - 6}" y="{top + 4}" text-anchor="end" fill="currentColor" font-size="{fs}">{high}</text>',
        f'<text x="{left - 6}" y="{bottom}" text-anchor="end" fill="currentColor" font-size="{fs}">{low}</text>',
        f'<text x="{left}" y="{height - 12}" fill="currentColor" font-size="{fs}">{d0.day} {d0:%b %Y}</text>',
        f'<text x="{right}" y="{height - 12}" text-anchor="end" fill="currentColor" font-size="{fs}">'
        f"{d1.day} {d1:%b %Y}</text>",
    ]
    # What is drawn, as segments a limit's words must keep clear of: each line and the dashed forecast, every point,
    # each marked date's line and its words.
    drawn = [_segments(path_points(seg)) for seg in segments]
    if forecast:
        drawn.append(_segments(path_points(([series[-1]] if series else []) + forecast)))
    for px, py in path_points(series):  # each point's dot, radius 3
        drawn.append([(px - 3, py, px + 3, py), (px, py - 3, px, py + 3)])
    mark_boxes = []
    for i, (day, label) in enumerate(marks):
        vx = x(day.toordinal())
        parts.append(
            f'<line x1="{vx:.1f}" y1="{top}" x2="{vx:.1f}" y2="{bottom}" stroke="currentColor" stroke-dasharray="6 3"/>'
        )
        anchor = "end" if vx > (left + right) / 2 else "start"
        tx = vx - 4 if anchor == "end" else vx + 4
        parts.append(
            f'<text x="{tx:.1f}" y="{top - 8 - (i % 2) * 20:.0f}" text-anchor="{anchor}" fill="currentColor" '
            f'font-size="{fs}">{escape(label)}</text>'
        )
        drawn.append([(vx, top, vx, bottom)])
        mark_boxes.append(text_box(tx, top - 8 - (i % 2) * 20, label, fs, anchor))
    if hline:
        hy = y(hline[0])
        parts.append(
            f'<line x1="{left}" y1="{hy:.1f}" x2="{right}" y2="{hy:.1f}" stroke="currentColor" stroke-dasharray="2 4"/>'
        )
        parts.append(
            _limit_label(
                hline[1],
                hy,
                obstacles=[s for d in drawn for s in d],
                boxes=mark_boxes,
                fs=fs,
                plot=(left, 28, right, bottom),
                height=height,
            )
        )
    for seg in segments:
        parts.append(f'<path d="{path(seg)}" fill="none" stroke="currentColor" stroke-width="2.5"/>')
    parts += [f'<circle cx="{x(d.toordinal()):.1f}" cy="{y(v):.1f}" r="3" fill="currentColor"/>' for d, v in series]
    if forecast:
        joined = ([series[-1]] if series else []) + forecast
        parts.append(
            f'<path d="{path(joined)}" fill="none" stroke="currentColor" stroke-width="2" stroke-dasharray="8 5"/>'
        )
    parts.append("</svg>")
    return "".join(parts)
