"""The freeze season to judge and the day its window opens, by the site's normals."""

from __future__ import annotations

import datetime as dt

from accounts.clock import local_date_of
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


def season_words(*, season_start: dt.date | None, running: bool) -> str:
    """The judged season in words, as pages and PDFs name it: "the freeze season that began 19 Oct 2026" while it
    runs (``season_window`` judges the running one then), else "the freeze season starting 19 Oct 2027"."""
    if season_start is None:
        return "a freeze season not yet known (no site normals)"
    if running:
        return f"the freeze season that began {local_date_of(season_start)}"
    return f"the freeze season starting {local_date_of(season_start)}"


def seasons_words(seasons: set[tuple[dt.date | None, bool]]) -> str:
    """Several sites' judged seasons (start, running) in one phrase, for a summary over them: one season in its own
    words (``season_words``), else whether they run or are coming, with their starts."""
    if not seasons:
        return "the coming freeze season"
    if len(seasons) == 1:
        start, running = next(iter(seasons))
        return season_words(season_start=start, running=running)
    starts = ", ".join(local_date_of(d) for d in sorted({d for d, _ in seasons if d is not None}))
    if all(running for d, running in seasons if d is not None):
        return f"the freeze seasons under way (began {starts})"
    if not any(running for _, running in seasons):
        return f"the coming freeze seasons (starting {starts})"
    return "each site's freeze season, under way or coming (dates per unit below)"
