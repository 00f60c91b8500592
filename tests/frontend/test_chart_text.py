"""A chart's title fits its width and its dates read as the rest of the app writes them ("7 Dec 2025")."""

import datetime as dt
import itertools
import re

import pytest

from frontend.charts import line_chart


def _chart(title: str) -> str:
    points = [(dt.date(2025, 12, 7), 120.0), (dt.date(2026, 3, 2), 180.0)]
    return line_chart(title=title, unit="Pa", series=points)


def test_a_long_title_is_fitted_to_the_chart_and_a_short_one_left_alone():
    long = _chart("AHU-L1 (Elderbank Library) Pre-filters pressure drop at design airflow")
    assert re.search(r'textLength="632" lengthAdjust="spacingAndGlyphs">AHU-L1', long)
    assert "textLength" not in _chart("Pre-filters")


def test_axis_dates_have_no_leading_zero():
    svg = _chart("Pre-filters")
    assert ">7 Dec 2025<" in svg and ">2 Mar 2026<" in svg and "07 Dec" not in svg


# A limit line's words never lie over a plotted line: checked by geometry on the SVG, each path's segments, each point
# and each marked date's line against the words' box (its glyphs estimated at 0.6 em, as frontend.charts.text_box).
D0 = dt.date(2026, 1, 5)


def _drawn(svg: str) -> list[tuple[float, float, float, float]]:
    segments = []
    for d in re.findall(r'<path d="([^"]+)"', svg):
        pts = [tuple(map(float, p.split(","))) for p in re.findall(r"[ML]([-\d.]+,[-\d.]+)", d)]
        segments += [(*a, *b) for a, b in itertools.pairwise(pts)]
    for cx, cy in re.findall(r'<circle cx="([-\d.]+)" cy="([-\d.]+)"', svg):
        segments.append((float(cx) - 3, float(cy), float(cx) + 3, float(cy)))
        segments.append((float(cx), float(cy) - 3, float(cx), float(cy) + 3))
    for x1, y1, x2, y2 in re.findall(r'<line x1="([-\d.]+)" y1="([-\d.]+)" x2="([-\d.]+)" y2="([-\d.]+)"', svg):
        segments.append((float(x1), float(y1), float(x2), float(y2)))
    return segments


def _label_box(svg: str) -> tuple[float, float, float, float]:
    from frontend.charts import text_box

    x, y, anchor, words = re.search(
        r'<text x="([-\d.]+)" y="([-\d.]+)"(?: text-anchor="(\w+)")? fill="currentColor" font-size="18" '
        r'data-limit-label="[^"]+">([^<]+)</text>',
        svg,
    ).groups()
    return text_box(float(x), float(y), words, 18, anchor or "start")


@pytest.mark.parametrize(
    "values",
    [
        [120, 160, 200, 240, 280, 296],  # rising to just under final at the right end (the old label sat on it)
        [296, 280, 240, 200, 160, 120],  # falling from final at the left end
        [290, 295, 298, 299, 297, 300],  # along final the whole way
    ],
)
def test_the_final_label_never_lies_over_a_plotted_line(values):
    from frontend.charts import segment_hits

    series = [(D0 + dt.timedelta(days=10 * i), float(v)) for i, v in enumerate(values)]
    forecast = [(D0 + dt.timedelta(days=60), 300.0)]
    svg = line_chart(
        title="Final filters",
        unit="Pa",
        series=[],
        segments=[series[:3], series[3:]],
        forecast=forecast,
        markers=[(D0 + dt.timedelta(days=25), "filters changed")],
        hline=(300.0, "final 300 Pa"),
    )
    box = _label_box(svg)
    hits = [s for s in _drawn(svg) if segment_hits(s, box, margin=0.0)]
    assert not hits, (box, hits)
    assert box[0] >= 0 and box[2] <= 640 and box[1] >= 0 and box[3] <= 320


def test_the_label_keeps_its_place_beside_its_line_where_nothing_is_drawn():
    series = [(D0 + dt.timedelta(days=10 * i), float(v)) for i, v in enumerate([100, 110, 120])]
    svg = line_chart(title="Final filters", unit="Pa", series=series, hline=(300.0, "final 300 Pa"))
    hy = float(
        re.search(
            r'<line x1="64" y1="([-\d.]+)" x2="628" y2="[-\d.]+" stroke="currentColor" stroke-dasharray="2 4"', svg
        ).group(1)
    )
    box = _label_box(svg)
    assert box[3] <= hy and hy - box[3] < 10  # just above the line, clear of it
    assert box[2] == pytest.approx(624, abs=1)  # at its right end
