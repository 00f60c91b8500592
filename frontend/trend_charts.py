"""A unit's trend chart: its key in HTML above an inline SVG plot of several lines over time, fault windows shaded,
limit lines marked.

Drawn by hand like ``frontend.charts`` (no inline style: SVG presentation attributes only, so the strict CSP
holds). The key (the title, each line's name, the shaded windows, each limit line's words) is the page's own text,
so it wraps on a phone and never prints over the plot; the plot scales to its box's width (``.chart svg`` in
app.css) and holds only the axes' numbers and dates, sized to stay legible on a 360 px phone. The value axis has
round ticks (``nice_ticks``); the time axis a tick at the site's midnight each day, fewer on a long stretch
(``day_ticks``). Lines that read the same for a good part of the stretch (a damper at 0 % under a stopped fan) are
drawn wider the earlier they are drawn, so each shows as a band beside the ones on top of it, and the key says in
plain words which line lies on top of which and for how much of the stretch (``coinciding``).
"""

from __future__ import annotations

import datetime as dt
import itertools
import zoneinfo
from dataclasses import dataclass
from html import escape

from engineering.formatting import format_number

from .charts import axis_labels

# Lines are told apart by their dash as well as their colour (for people who do not see the colour).
STROKES = (("#1f5fa8", ""), ("#b3541e", "8 4"), ("#2e7d32", "2 4"), ("#6a3d9a", "12 4 2 4"), ("#555555", "4 4"))
MAX_POINTS = 700  # per line: more samples than a phone's width can show are thinned
DAY_STEPS = (1, 2, 7, 14, 28)  # days between the time axis's ticks: one a day, fewer on a long stretch
MOST_DAY_TICKS = 10  # about 45 units apart in a 520-wide view at the most
LINE_WIDTH, WIDER = 2.0, 1.5  # a line's stroke, and how much wider for each line drawn on top of it
TOGETHER = 0.01  # two lines within 1 % of the value axis at a moment read as one line there
TOGETHER_SHARE = 0.1  # lines reading as one for at least a tenth of their common moments are said to coincide


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


# Limit lines are red and told apart by their dash, as the key shows them.
LIMIT_COLOUR = "#b71c1c"
LIMIT_DASHES = ("3 5", "10 4", "1 3", "12 4 2 4")
BAND_FILL = "#d32f2f"


def day_ticks(start: dt.datetime, end: dt.datetime, zone: str) -> list[dt.datetime]:
    """The time axis's ticks: the site's midnights inside (start, end), every day, or every 2, 7, 14 or 28 days
    when a tick a day would be more than ``MOST_DAY_TICKS`` (a 31-day stretch: weekly)."""
    tz = zoneinfo.ZoneInfo(zone)
    first, last = start.astimezone(tz), end.astimezone(tz)
    midnights = []
    day = first.date() + dt.timedelta(days=1)
    while (midnight := dt.datetime.combine(day, dt.time(), tzinfo=tz)) < last:
        midnights.append(midnight)
        day += dt.timedelta(days=1)
    step = next((s for s in DAY_STEPS if len(midnights) <= MOST_DAY_TICKS * s), DAY_STEPS[-1])
    return midnights[step - 1 :: step]


def coinciding(lines: list[ChartLine], *, span: float) -> dict[int, list[tuple[int, float]]]:
    """For each line (by its index), the later lines drawn on top of it where they read the same, each with the
    share of the two lines' common moments they do (within ``TOGETHER`` of the value axis's ``span``), from
    ``TOGETHER_SHARE`` up."""
    readings = [dict(line.samples) for line in lines]
    out: dict[int, list[tuple[int, float]]] = {}
    for i, j in itertools.combinations(range(len(lines)), 2):
        common = readings[i].keys() & readings[j].keys()
        if not common:
            continue
        same = sum(abs(readings[i][t] - readings[j][t]) <= span * TOGETHER for t in common) / len(common)
        if same >= TOGETHER_SHARE:
            out.setdefault(i, []).append((j, same))
    return out


def _widths(count: int, under: dict[int, list[tuple[int, float]]]) -> list[float]:
    """Each line's stroke: wider by ``WIDER`` for each layer of coinciding lines drawn on top of it, so a stack of
    lines reading the same shows every one of them as a band around the next."""
    depth = [0] * count
    for i in reversed(range(count)):
        depth[i] = max((depth[j] + 1 for j, _ in under.get(i, [])), default=0)
    return [LINE_WIDTH + WIDER * d for d in depth]


def _swatch(*, colour: str, dash: str = "", band: bool = False, width: float = 3) -> str:
    """A key's sample of a line (its colour and dash) or of a shaded window, a small inline SVG."""
    if band:
        shape = f'<rect x="0" y="1" width="32" height="12" fill="{BAND_FILL}" fill-opacity="0.25"/>'
    else:
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        shape = f'<line x1="0" y1="7" x2="32" y2="7" stroke="{colour}" stroke-width="{width:g}"{dash_attr}/>'
    return f'<svg class="swatch" viewBox="0 0 32 14" width="32" height="14" aria-hidden="true">{shape}</svg>'


def _on_top_words(label: str, over: list[tuple[str, float]]) -> str:
    """Plain words for the lines drawn on top of ``label`` where they read the same (``coinciding``): "Supply fan
    speed lies on top of Outdoor-air damper position 50 % of the time, reading the same; Outdoor-air damper position
    shows as the wider line around it"; "" when none does."""
    if not over:
        return ""
    (first, share), *more = over
    words = f"{first} lies on top of {label} {_pct(share)} of the time"
    words += "".join(f", {name} {_pct(other)}" for name, other in more)
    return words + f", reading the same; {label} shows as the wider line around {'it' if not more else 'them'}"


def _pct(share: float) -> str:
    return f"{format_number(share * 100, decimals=0)}\u00a0%"


def _key(
    *,
    label: str,
    lines: list[ChartLine],
    bands: list[Band],
    limits: list[tuple[float, str]],
    under: dict[int, list[tuple[int, float]]],
    widths: list[float],
) -> str:
    """The chart's title and key as HTML above the plot: each line's sample and name (and the lines drawn on top of
    it where they read the same), the shaded windows' title and each limit line's dash and words. Text of the page's
    own size, wrapping on a phone: nothing is squeezed and nothing prints over the plot or over another label."""
    items = []
    for i, line in enumerate(lines):
        colour, dash = STROKES[i % len(STROKES)]
        said = _on_top_words(line.label, [(lines[j].label, share) for j, share in under.get(i, [])])
        note = f' <span class="hint" data-coincides>{escape(said)}</span>' if said else ""
        items.append(
            f"<li>{_swatch(colour=colour, dash=dash, width=min(widths[i] + 1, 9))} <span>{escape(line.label)}</span>"
            f"{note}</li>"
        )
    titles = list(dict.fromkeys(b.title for b in bands))
    for title in titles:
        items.append(
            f"<li data-band-key>{_swatch(colour=BAND_FILL, band=True)} <span>Shaded: {escape(title)}</span></li>"
        )
    for i, (_value, words) in enumerate(sorted(limits, key=lambda lim: -lim[0])):
        dash = LIMIT_DASHES[i % len(LIMIT_DASHES)]
        items.append(
            f"<li>{_swatch(colour=LIMIT_COLOUR, dash=dash)} "
            f'<span data-limit-label="{escape(words)}">{escape(words)}</span></li>'
        )
    return (
        f'<figcaption class="chart-key"><strong>{escape(label)}</strong>'
        f'<ul class="plain">{"".join(items)}</ul></figcaption>'
    )


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
    height: int = 340,
) -> str:
    """Lines of one quantity over [start, end) with shaded ``bands`` (each with its title) and dashed ``limits``
    (value, words), as a figure's inside: its key (``_key``, HTML) and the plot (SVG). Days are labelled on the site's
    clock (``zone``)."""
    bands = [b for b in (bands or []) if b.end > start and b.start < end]
    limits = list(limits or [])
    values = [v for line in lines for _, v in line.samples] + [v for v, _ in limits]
    if not any(line.samples for line in lines):
        return f'<p class="muted">{escape(title)}: no samples in this stretch.</p>'
    ticks = nice_ticks(min(values), max(values))
    v0, v1 = ticks[0], ticks[-1]
    fs = 22  # 22 units of a 520-wide view ≈ 13 px in the ~310 px a phone's card leaves
    left, right = 72, width - 12
    top, bottom = 14, height - 40
    t0, t1 = start.timestamp(), end.timestamp()

    def x(t: dt.datetime) -> float:
        return left + (min(max(t.timestamp(), t0), t1) - t0) / ((t1 - t0) or 1.0) * (right - left)

    def y(v: float) -> float:
        return bottom + (v - v0) / ((v1 - v0) or 1.0) * (top - bottom)

    label = f"{title} ({unit})"
    under = coinciding(lines, span=v1 - v0)
    widths = _widths(len(lines), under)
    parts = [
        _key(label=label, lines=lines, bands=bands, limits=limits, under=under, widths=widths),
        f'<svg viewBox="0 0 {width} {height}" role="img" aria-label="{escape(label)}" '
        'xmlns="http://www.w3.org/2000/svg">',
        f"<title>{escape(label)}</title>",
    ]
    for band in bands:
        bx0, bx1 = x(band.start), x(band.end)
        parts.append(
            f'<rect x="{bx0:.1f}" y="{top}" width="{max(bx1 - bx0, 2):.1f}" height="{bottom - top}" '
            f'fill="{BAND_FILL}" fill-opacity="0.15" data-band="{escape(band.title)}">'
            f"<title>{escape(band.title)}</title></rect>"
        )
    parts += [
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
        f'<line x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" stroke="currentColor" stroke-width="1"/>',
    ]
    for tick, tick_label in zip(ticks, axis_labels(ticks), strict=True):
        ty = y(tick)
        if tick != v0:
            parts.append(
                f'<line x1="{left}" y1="{ty:.1f}" x2="{right}" y2="{ty:.1f}" stroke="currentColor" '
                'stroke-opacity="0.15"/>'
            )
        parts.append(
            f'<text x="{left - 6}" y="{ty + fs / 3:.1f}" text-anchor="end" fill="currentColor" font-size="{fs}" '
            f'data-tick="{tick:g}">{tick_label}</text>'
        )
    tz = zoneinfo.ZoneInfo(zone)
    first, last = start.astimezone(tz), end.astimezone(tz)
    parts += [
        f'<text x="{left}" y="{bottom + 28}" fill="currentColor" font-size="{fs}">{first.day} {first:%b}</text>',
        f'<text x="{right}" y="{bottom + 28}" text-anchor="end" fill="currentColor" font-size="{fs}">'
        f"{last.day} {last:%b %Y}</text>",
    ]
    # A faint tick at the site's midnight, each day or fewer on a long stretch.
    for day in day_ticks(start, end, zone):
        dx = x(day)
        parts.append(
            f'<line x1="{dx:.1f}" y1="{bottom}" x2="{dx:.1f}" y2="{bottom + 8}" stroke="currentColor" '
            f'data-day-tick="{day.date().isoformat()}"/>'
        )
    # Limit lines carry no words on the plot (close lines, 3.3 and 1.0 °C, would print them over each other): each
    # has its own dash, named in the key.
    for i, (value, words) in enumerate(sorted(limits, key=lambda lim: -lim[0])):
        ly = y(value)
        dash = LIMIT_DASHES[i % len(LIMIT_DASHES)]
        parts.append(
            f'<line x1="{left}" y1="{ly:.1f}" x2="{right}" y2="{ly:.1f}" stroke="{LIMIT_COLOUR}" stroke-width="2" '
            f'stroke-dasharray="{dash}" data-limit="{escape(words)}" data-value="{value:g}"/>'
        )
    for i, line in enumerate(lines):
        samples = _thin(line.samples)
        if not samples:
            continue
        colour, dash = STROKES[i % len(STROKES)]
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        d = " ".join(f"{'M' if j == 0 else 'L'}{x(t):.1f},{y(v):.1f}" for j, (t, v) in enumerate(samples))
        parts.append(
            f'<path d="{d}" fill="none" stroke="{colour}" stroke-width="{widths[i]:g}"{dash_attr} '
            f'data-line="{escape(line.label)}"/>'
        )
    parts.append("</svg>")
    return "".join(parts)
