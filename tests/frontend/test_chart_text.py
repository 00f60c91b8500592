"""A chart's title fits its width and its dates read as the rest of the app writes them ("7 Dec 2025")."""

import datetime as dt
import re

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
