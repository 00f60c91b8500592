"""A unit's trend chart as inline SVG: several lines over time, fault windows shaded, limit lines marked.

Drawn by hand like ``frontend.charts`` (no inline style: SVG presentation attributes only, so the strict CSP
holds); the chart scales to its box's width (``.chart svg`` in app.css) and its text is sized to stay legible
on a 360 px phone (18 units in a 520-wide view ≈ 10 px in the ~294 px a card leaves). The value axis has
round ticks (``nice_ticks``); a label too long for the width is squeezed to fit, never cut.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass
from html import escape

from .charts import axis_labels

# Lines are told apart by their dash as well as their colour (for people who do not see the colour).
STROKES = (("#1f5fa8", ""), ("#b3541e", "8 4"), ("#2e7d32", "2 4"), ("#6a3d9a", "12 4 2 4"), ("#555555", "4 4"))
MAX_POINTS = 700  # per line: more samples than a phone's width can show are thinned


@dataclass(frozen=True)
class ChartLine:
    label: str
    samples: list[tuple[dt.datetime, float]]  # display units


@dataclass(frozen=True)
class Band:
    start: dt.datetime
    end: dt.datetime
    title: str


def _thin(samples: list[tuple[dt.datetime, float]]) -> list[tuple[dt.datetime, float]]:
    if len(samples) <= MAX_POINTS:
        return samples
    step = len(samples) / MAX_POINTS
    return [samples[int(i * step)] for i in range(MAX_POINTS)] + [samples[-1]]


def nice_ticks(low: float, high: float, *, most: int = 5) -> list[float]:
    """Round axis ticks spanning [low, high]: steps of 1, 2, 2.5 or 5 × 10ⁿ, at most ``most`` of them
    (0–100 % gives 0, 25, 50, 75, 100)."""
    import math

    if not (math.isfinite(low) and math.isfinite(high)):
        return [0.0, 1.0]
    if high - low < 1e-9:
        low, high = low - 1.0, high + 1.0
    for power in range(math.floor(math.log10((high - low) / most)) - 1, 20):
        for mantissa in (1.0, 2.0, 2.5, 5.0):
            step = mantissa * 10.0**power
            first, last = math.floor(low / step + 1e-9), math.ceil(high / step - 1e-9)
            if last - first + 1 <= most:
                return [round(k * step, 10) for k in range(first, last + 1)]
    return [low, high]


def _fit(text: str, size: float, room: float) -> str:
    """``textLength`` squeezing ``text`` into ``room`` when it would run over (about 0.55 em a glyph, common
    practice); nothing when it fits."""
    return f' textLength="{room:.0f}" lengthAdjust="spacingAndGlyphs"' if len(text) * size * 0.55 > room else ""


def trend_chart(
    *,
    title: str,
    unit: str,
    lines: list[ChartLine],
    start: dt.datetime,
    end: dt.datetime,
    zone: str,
    bands: list[Band] | None = None,
    limits: list[tuple[float, str]] | None = None,
    width: int = 520,
    height: int = 320,
) -> str:
    """Lines of one quantity over [start, end) with shaded ``bands`` (each with its title) and dashed
    ``limits`` (value, words). Days are labelled on the site's clock (``zone``)."""
    bands = [b for b in (bands or []) if b.end > start and b.start < end]
    limits = list(limits or [])
    values = [v for line in lines for _, v in line.samples] + [v for v, _ in limits]
    if not any(line.samples for line in lines):
        return f'<p class="muted">{escape(title)}: no samples in this stretch.</p>'
    ticks = nice_ticks(min(values), max(values))
    v0, v1 = ticks[0], ticks[-1]
    fs = 18
    legend_rows = len(lines)
    left, right = 64, width - 12
    top = 36 + legend_rows * 24 + (12 if bands else 0)
    bottom = height - 40
    height_total = height + legend_rows * 24
    bottom += legend_rows * 24
    t0, t1 = start.timestamp(), end.timestamp()

    def x(t: dt.datetime) -> float:
        return left + (min(max(t.timestamp(), t0), t1) - t0) / ((t1 - t0) or 1.0) * (right - left)

    def y(v: float) -> float:
        return bottom + (v - v0) / ((v1 - v0) or 1.0) * (top - bottom)

    label = f"{title} ({unit})"
    parts = [
        f'<svg viewBox="0 0 {width} {height_total}" role="img" aria-label="{escape(label)}" '
        'xmlns="http://www.w3.org/2000/svg">',
        f"<title>{escape(label)}</title>",
        f'<text x="4" y="22" fill="currentColor" font-size="{fs}">{escape(label)}</text>',
    ]
    for i, line in enumerate(lines):
        colour, dash = STROKES[i % len(STROKES)]
        lx = 4
        ly = 48 + i * 24
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        parts.append(
            f'<line x1="{lx}" y1="{ly - 6}" x2="{lx + 30}" y2="{ly - 6}" stroke="{colour}" '
            f'stroke-width="3"{dash_attr}/>'
        )
        parts.append(
            f'<text x="{lx + 36}" y="{ly}" fill="currentColor" font-size="{fs}"'
            f"{_fit(line.label, fs, width - lx - 40)}>{escape(line.label)}</text>"
        )
    for band in bands:
        bx0, bx1 = x(band.start), x(band.end)
        parts.append(
            f'<rect x="{bx0:.1f}" y="{top}" width="{max(bx1 - bx0, 2):.1f}" height="{bottom - top}" '
            f'fill="#d32f2f" fill-opacity="0.15" data-band="{escape(band.title)}">'
            f"<title>{escape(band.title)}</title></rect>"
        )
    # The first band of each title is named above the plot (the rest share its shade).
    named: set[str] = set()
    for band in bands:
        if band.title in named:
            continue
        named.add(band.title)
        # Fitted to the chart's width (squeezed, never cut).
        fit = _fit("Shaded: " + band.title + " ", fs, width - 8)
        parts.append(
            f'<text x="4" y="{top - 4}" fill="#b71c1c" font-size="{fs}"{fit}>Shaded: {escape(band.title)}</text>'
        )
        break
    parts += [
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
        f'<line x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
    ]
    for tick, label in zip(ticks, axis_labels(ticks), strict=True):
        ty = y(tick)
        if tick != v0:
            parts.append(
                f'<line x1="{left}" y1="{ty:.1f}" x2="{right}" y2="{ty:.1f}" stroke="currentColor" '
                'stroke-opacity="0.15"/>'
            )
        parts.append(
            f'<text x="{left - 6}" y="{ty + fs / 3:.1f}" text-anchor="end" fill="currentColor" font-size="{fs}" '
            f'data-tick="{tick:g}">{label}</text>'
        )
    tz = zoneinfo.ZoneInfo(zone)
    first, last = start.astimezone(tz), end.astimezone(tz)
    parts += [
        f'<text x="{left}" y="{bottom + 28}" fill="currentColor" font-size="{fs}">{first.day} {first:%b}</text>',
        f'<text x="{right}" y="{bottom + 28}" text-anchor="end" fill="currentColor" font-size="{fs}">'
        f"{last.day} {last:%b %Y}</text>",
    ]
    # A faint tick at each local midnight inside the stretch.
    day = dt.datetime.combine(first.date() + dt.timedelta(days=1), dt.time(), tzinfo=tz)
    while day < last:
        dx = x(day)
        parts.append(f'<line x1="{dx:.1f}" y1="{bottom}" x2="{dx:.1f}" y2="{bottom + 8}" stroke="currentColor"/>')
        day = dt.datetime.combine(day.date() + dt.timedelta(days=1), dt.time(), tzinfo=tz)
    # Limit labels sit just above their line, pushed down so that close lines (3.3 and 1.0 °C) do not print
    # their words on top of each other.
    below = -1e9
    for value, words in sorted(limits, key=lambda lim: -lim[0]):
        ly = y(value)
        ty = max(ly - 4, below + fs)
        below = ty
        parts.append(
            f'<line x1="{left}" y1="{ly:.1f}" x2="{right}" y2="{ly:.1f}" stroke="#b71c1c" stroke-dasharray="3 5" '
            f'data-limit="{escape(words)}" data-value="{value:g}"/>'
        )
        parts.append(
            f'<text x="{right}" y="{ty:.1f}" text-anchor="end" fill="#b71c1c" font-size="{fs - 2}"'
            f'{_fit(words, fs - 2, right - left)} data-limit-label="{escape(words)}">{escape(words)}</text>'
        )
    for i, line in enumerate(lines):
        samples = _thin(line.samples)
        if not samples:
            continue
        colour, dash = STROKES[i % len(STROKES)]
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        d = " ".join(f"{'M' if j == 0 else 'L'}{x(t):.1f},{y(v):.1f}" for j, (t, v) in enumerate(samples))
        parts.append(f'<path d="{d}" fill="none" stroke="{colour}" stroke-width="2"{dash_attr}/>')
    parts.append("</svg>")
    return "".join(parts)
