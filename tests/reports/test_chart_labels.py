"""A chart's words never lie on its lines or points: the tryout's unit history had "filters changed" and
"change 31 Mar 2027" written down their vertical lines, across the "final" line and a reading. Checked on the
figure's geometry as drawn (the SVG is this figure saved): each label's box against every line's path and point."""

from __future__ import annotations

import itertools
from datetime import date, timedelta

import pytest
from matplotlib import pyplot as plt
from matplotlib.path import Path

from reports import charts


def _filter_chart(change: date, forecast_on: date):
    first = [date(2026, 1, 10) + timedelta(days=30 * i) for i in range(6)]
    second = [change + timedelta(days=30 * i) for i in range(1, 5)]
    return charts.time_series_figure(
        series=[
            ("Earlier filters", first, [60 + 15 * i for i in range(6)], "line"),
            (f"Filters fitted {change}", second, [55 + 12 * i for i in range(4)], "line"),
            ("Forecast", [second[-1], forecast_on], [91, 150], "dashed"),
        ],
        y_label="Pressure drop at design airflow (Pa)",
        hlines=[(150.0, "final")],
        markers=[(change, "filters changed"), (forecast_on, f"change {forecast_on:%d %b %Y}")],
    )


@pytest.mark.parametrize("forecast_days", [5, 40, 120, 400])
def test_no_label_lies_on_a_line_or_a_point(forecast_days):
    change = date(2026, 7, 14)
    with plt.rc_context(charts.STYLE):
        fig = _filter_chart(change, change + timedelta(days=120 + forecast_days))
        renderer = fig.canvas.get_renderer()
        ax = fig.axes[0]
        labels = [(t.get_text(), t.get_window_extent(renderer)) for t in ax.texts]
        assert {"final", "filters changed"} <= {name for name, _ in labels}
        for line in ax.lines:
            xy = line.get_transform().transform(line.get_xydata())
            path = Path(xy)
            for name, box in labels:
                assert not path.intersects_bbox(box, filled=False), (name, line.get_label())
                if line.get_marker() not in (None, "None", ""):
                    assert not any(box.expanded(1.0, 1.0).contains(x, y) for x, y in xy), (name, line.get_label())
        axes = ax.get_window_extent(renderer)
        for name, box in labels:  # outside the plot: right of it (a line's name) or above it (a date's)
            assert box.x0 >= axes.x1 or box.y0 >= axes.y1, name
        for (a, box_a), (b, box_b) in itertools.combinations(labels, 2):
            assert not box_a.overlaps(box_b), (a, b)
        plt.close(fig)
