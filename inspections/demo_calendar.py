"""The demo history's calendar and weather: a visit every ``VISIT_DAYS``, the visits that test freeze protection
before each freeze season (by the site's normals), an invented outdoor temperature near the month's normals and a
filter's pressure drop at part load (the filter law)."""

from __future__ import annotations

import datetime as dt
import random

from engineering import filters
from engineering.freeze import daily_minimums_from_normals, freeze_season_start
from scheduling.services.seasons import season_key

from .freeze import season_window

VISIT_DAYS = 30


def _freeze_starts(site, first: dt.date, last: dt.date) -> list[dt.date]:
    """The freeze-season starts by the site's normals between ``first`` and ``last`` (one per autumn)."""
    days = (last - first).days + 400
    series = daily_minimums_from_normals(
        monthly_min_c=site.normals_min_c, start=first - dt.timedelta(days=200), days=days
    )
    starts, search = [], first - dt.timedelta(days=200)
    while True:
        start = freeze_season_start(daily_minimums=series, threshold_c=site.preheat_threshold_c, search_from=search)
        if start is None or start > last:
            return starts
        if start >= first:
            starts.append(start)
        search = start + dt.timedelta(days=200)


def freeze_test_visits(*, site, today: dt.date, months: int) -> dict[dt.date, str]:
    """The visits that test the preheat and freeze protection, each with the season key it proves.

    One visit before each earlier freeze season by the site's normals (the last within a month of its
    start); and for the season freeze readiness judges today (``inspections.freeze.season_window``, from the
    site's stored season start) the latest visit in its window up to that start, so the demo's units are
    ready, or not ready for a reason, whatever the date it is loaded on.
    """
    visits = [today - dt.timedelta(days=VISIT_DAYS * m) for m in range(months, 0, -1)]
    first = visits[0] if visits else today
    judged, opens = season_window(site=site, today=today)
    out: dict[dt.date, str] = {}
    for start in _freeze_starts(site, first, today):
        before = [d for d in visits if start - dt.timedelta(days=VISIT_DAYS) <= d < start]
        if opens is not None:
            before = [d for d in before if d < opens]  # the judged season's test is chosen below
        for d in before[-1:]:
            out[d] = season_key(season="freeze", start=start, latitude=site.latitude)
    if judged is not None and opens is not None:
        window = [d for d in visits if opens <= d <= judged]
        if window:
            key = season_key(season="freeze", start=judged, latitude=site.latitude)
            # One test proves a season: an earlier visit that took the same season's key above (its start
            # the judged one, the visit before the window opened) gives it up to the window's latest.
            out = {d: k for d, k in out.items() if k != key}
            out[window[-1]] = key
    return out


def outdoor_c(site, when: dt.date, rng: random.Random) -> float:
    """An invented outdoor temperature on ``when``: the middle of the month's normals, give or take 3 K."""
    m = when.month - 1
    return round((site.normals_min_c[m] + site.normals_max_c[m]) / 2 + rng.uniform(-3, 3), 1)


def part_load(bank, ahu, airflow_m3s: float) -> float:
    """Factor on a filter's pressure drop at ``airflow_m3s`` against its design airflow (the filter law,
    engineering.filters: Δp ∝ Q^n)."""
    design = bank.specs.get("design_airflow_m3s") or ahu.design_supply_airflow_m3s
    return (airflow_m3s / design) ** filters.DEFAULT_EXPONENT
