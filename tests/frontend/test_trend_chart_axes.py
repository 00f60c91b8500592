"""A trend chart's value axis has round ticks and its limit lines' words never print on top of each other."""

import datetime as dt
import itertools
import re
import zoneinfo

import pytest

from frontend.trend_charts import MOST_DAY_TICKS, ChartLine, day_ticks, nice_ticks, trend_chart

START = dt.datetime(2026, 1, 12, tzinfo=dt.UTC)
END = START + dt.timedelta(days=1)


def _chart(values: list[float], limits=None, label: str = "Supply fan speed") -> str:
    samples = [(START + dt.timedelta(hours=i), v) for i, v in enumerate(values)]
    return trend_chart(
        title="Commands", unit="%", lines=[ChartLine(label, samples)], start=START, end=END, zone="UTC", limits=limits
    )


@pytest.mark.parametrize(
    ("low", "high", "ticks"),
    [
        (0, 100, [0, 25, 50, 75, 100]),
        (-5, 21, [-10, 0, 10, 20, 30]),
        (0.5, 21, [0, 10, 20, 30]),
        (180, 260, [180, 200, 220, 240, 260]),
        (3, 3, [2, 2.5, 3, 3.5, 4]),
    ],
)
def test_ticks_are_round_and_span_the_values(low, high, ticks):
    got = nice_ticks(low, high)
    assert got == ticks
    assert got[0] <= low and got[-1] >= high and len(got) <= 5


def test_a_percent_axis_reads_0_to_100_not_the_padded_extremes():
    svg = _chart([0, 40, 100])
    assert re.findall(r'data-tick="([^"]+)"', svg) == ["0", "25", "50", "75", "100"]
    assert ">108<" not in svg and "−8.0" not in svg


def test_close_limit_lines_are_named_in_the_key_not_on_the_plot_and_long_labels_are_said_whole():
    """Limit lines 1.1 °C apart (freeze stages 1 and 2) would print their words over each other on the plot: the
    words are page text in the key above it, each line told apart by its own dash; a long line name is said whole
    there, wrapping on a phone, never squeezed or cut."""
    limits = [(4.4, "freeze below 4.4 °C: stage 1 after 5 min"), (3.3, "freeze below 3.3 °C: stage 2"), (1.0, "x")]
    html = _chart([-5, 21], limits=limits)
    key, plot = html.split("<svg viewBox=")
    assert re.findall(r'<span data-limit-label="([^"]+)">', key) == [words for _, words in limits]
    assert "<text" not in key and not any(f">{words}<" in plot for _, words in limits)
    dashes = re.findall(r'stroke-dasharray="([^"]+)" data-limit=', plot)
    assert len(set(dashes)) == 3
    long = "Filter differential pressure sensor of the final filters bank"
    html = _chart([1, 2], label=long)
    assert f"<span>{long}</span>" in html and "textLength" not in html


def test_tick_labels_tell_close_ticks_apart_and_never_repeat():
    """A near-flat 122 °F series: ticks 121.5, 122, 122.5 read so, not "122" three times."""
    svg = _chart([121.9, 122.0, 122.1])
    labels = re.findall(r'data-tick="[^"]+">([^<]+)<', svg)
    assert len(labels) == len(set(labels)) >= 2
    assert all("." in label for label in labels)


def test_a_dated_chart_in_inches_of_water_labels_its_axis_with_decimals():
    """Filter pressure drops of 0.33–1.20 in. w.c.: the axis ends read with a decimal, not "0" and "1"."""
    from frontend.charts import axis_labels, line_chart

    assert axis_labels([0.243, 1.287]) == ["0.2", "1.3"]
    assert axis_labels([81.0, 323.0]) == ["81", "323"]
    assert axis_labels([-0.04, 2.0]) == ["0", "2"]  # never "−0"
    day = dt.date(2026, 1, 5)
    svg = line_chart(
        title="Final filters",
        unit="in. w.c.",
        series=[(day, 0.33), (day + dt.timedelta(days=30), 1.20)],
        hline=(1.2, "final 1.20 in. w.c."),
    )
    assert re.search(r'text-anchor="end"[^>]*>0\.2</text>', svg) and re.search(
        r'text-anchor="end"[^>]*>1\.3</text>', svg
    )


AMS = "Europe/Amsterdam"


def _day_ticks(start: dt.datetime, days: int, zone: str = AMS) -> list[str]:
    line = ChartLine("Supply fan speed", [(start, 0.0), (start + dt.timedelta(days=days), 100.0)])
    svg = trend_chart(
        title="Commands", unit="%", lines=[line], start=start, end=start + dt.timedelta(days=days), zone=zone
    )
    return re.findall(r'data-day-tick="([^"]+)"', svg)


def test_the_time_axis_has_one_tick_a_day_at_the_sites_midnight():
    """A week from a Monday's midnight in Amsterdam: a tick at each of the six midnights inside it, never two in a
    day; across the spring clock change (29 March 2026) still one a day at local midnight."""
    monday = dt.datetime(2026, 11, 23, tzinfo=zoneinfo.ZoneInfo(AMS))
    ticks = _day_ticks(monday, 7)
    assert ticks == [f"2026-11-{day}" for day in range(24, 30)]
    spring = dt.datetime(2026, 3, 28, tzinfo=zoneinfo.ZoneInfo(AMS))
    assert _day_ticks(spring, 3) == ["2026-03-29", "2026-03-30"]
    ticks_at = day_ticks(spring, spring + dt.timedelta(days=3), AMS)
    assert [t.astimezone(zoneinfo.ZoneInfo(AMS)).hour for t in ticks_at] == [0, 0]


def test_a_long_stretch_has_fewer_ticks_evenly_spaced():
    """31 days would be 30 ticks in a 520-wide view: weekly ones instead (at most MOST_DAY_TICKS)."""
    start = dt.datetime(2026, 11, 1, tzinfo=zoneinfo.ZoneInfo(AMS))
    ticks = [dt.date.fromisoformat(t) for t in _day_ticks(start, 31)]
    assert 2 <= len(ticks) <= MOST_DAY_TICKS
    assert {(b - a).days for a, b in itertools.pairwise(ticks)} == {7}


def _commands(damper: list[float], fan: list[float]) -> str:
    samples = [START + dt.timedelta(hours=i) for i in range(len(fan))]
    lines = [ChartLine("Outdoor-air damper position", list(zip(samples, damper, strict=True)))]
    lines.append(ChartLine("Supply fan speed", list(zip(samples, fan, strict=True))))
    return trend_chart(title="Commands", unit="%", lines=lines, start=START, end=END, zone="UTC")


def _widths(svg: str) -> dict[str, float]:
    return {label: float(w) for w, label in re.findall(r'stroke-width="([^"]+)"[^>]*data-line="([^"]+)"', svg)}


def test_a_line_reading_the_same_as_one_drawn_over_it_shows_wider_and_the_key_says_so():
    """A damper at 0 % while the fan is stopped (half the day) lies under the fan's line there: it is drawn wider,
    a band either side of the fan's line, and its key names the line on top and for how much of the time."""
    fan = [0.0] * 12 + [88.0] * 12
    damper = [0.0] * 12 + [35.0] * 12
    svg = _commands(damper, fan)
    widths = _widths(svg)
    assert widths["Outdoor-air damper position"] > widths["Supply fan speed"]
    key = svg.split("<svg viewBox=")[0]
    assert re.findall(r"<span class=\"hint\" data-coincides>([^<]+)</span>", key) == [
        "Supply fan speed lies on top of Outdoor-air damper position 50\u00a0% of the time, reading the same; "
        "Outdoor-air damper position shows as the wider line around it"
    ]


def test_lines_that_never_meet_keep_the_same_width_and_no_note():
    svg = _commands([30.0 + i for i in range(24)], [88.0] * 24)
    assert len(set(_widths(svg).values())) == 1 and "data-coincides" not in svg
