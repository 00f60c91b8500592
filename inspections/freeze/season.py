"""The freeze season to judge and the day its window opens, by the site's normals."""

from __future__ import annotations

import datetime as dt

from engineering.freeze import daily_minimums_from_normals
from inventory.models import Site


def last_season_end(*, site: Site, season_start: dt.date) -> dt.date:
    """The last cold day of the season before ``season_start``, by the site's normals.

    Walking back from the start: first past the days the normals already call cold (a
    measured or forecast start can come later than the normals' own), then past the warm
    season; the cold day reached is the last one of the season before. Without one the
    window opens 365 days before the start.
    """
    window_start = season_start - dt.timedelta(days=365)
    series = daily_minimums_from_normals(monthly_min_c=site.normals_min_c, start=window_start, days=365)
    cold = [t <= site.preheat_threshold_c for _, t in series]
    i = len(series) - 1
    while i >= 0 and cold[i]:
        i -= 1
    while i >= 0 and not cold[i]:
        i -= 1
    return series[i][0] if i >= 0 else window_start


def season_window(*, site: Site, today: dt.date) -> tuple[dt.date | None, dt.date | None]:
    """The season to judge (the running one while it runs, else the coming one) and the day its window opens."""
    coming = site.freeze_season_start
    if coming is None:
        return None, None
    coming_opens = last_season_end(site=site, season_start=coming)
    try:
        running = coming.replace(year=coming.year - 1)
    except ValueError:  # 29 February
        running = coming.replace(year=coming.year - 1, day=28)
    if running <= today <= coming_opens:
        return running, last_season_end(site=site, season_start=running)
    return coming, coming_opens
