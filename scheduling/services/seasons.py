"""Outdoor temperatures in, season starts out.

A season start is the first crossing of the site's threshold on or after
``today - SEASON_LOOKBACK_DAYS`` (engineering.freeze), over a series that takes
stored forecast/CSV days where there are any and the site's monthly normals
elsewhere. The look-back keeps a season that has just begun visible, so its
check still falls due at once when the window opened without one.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Iterable
from functools import lru_cache

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.changes import organisation_changed
from accounts.models import Organisation
from engineering.freeze import cooling_season_start, freeze_season_start
from inventory.models import Site

from ..models import OutdoorTemperature
from ..weather import DailyTemperature, HttpForecastProvider, normals_daily, parse_temperature_csv

SEASON_LOOKBACK_DAYS = 30
SEASON_SEARCH_DAYS = 430


Measured = tuple[tuple[dt.date, float, float, str], ...]


@lru_cache(maxsize=4096)
def _starts(
    normals_min: tuple[float, ...],
    normals_max: tuple[float, ...],
    freeze_c: float,
    cooling_c: float,
    start: dt.date,
    measured: Measured,
) -> tuple[dt.date | None, dt.date | None, str]:
    """Season starts over ``SEASON_SEARCH_DAYS`` from ``start``: measured days where given, normals elsewhere.

    A pure function of its arguments, so it is kept across calls: a portfolio's
    nightly run asks the same question for every site again and the answer only
    changes when new temperatures arrive or the day moves on.
    """

    class _Normals:
        normals_min_c = list(normals_min)
        normals_max_c = list(normals_max)

    by_day = {d: (lo, hi, src) for d, lo, hi, src in measured}
    lows: list[tuple[dt.date, float]] = []
    highs: list[tuple[dt.date, float]] = []
    for day in normals_daily(_Normals, start=start, days=SEASON_SEARCH_DAYS):
        lo, hi, _ = by_day.get(day.date, (day.min_c, day.max_c, ""))
        lows.append((day.date, lo))
        highs.append((day.date, hi))
    freeze = freeze_season_start(daily_minimums=lows, threshold_c=freeze_c)
    cooling = cooling_season_start(daily_maximums=highs, threshold_c=cooling_c)
    source = by_day[freeze][2] if freeze in by_day else "normals"
    return freeze, cooling, source


def cache_clear() -> None:
    """Forget the seasons' starts kept in this process (``config.caches.clear_module_caches``)."""
    _starts.cache_clear()


def season_starts(
    *, site: Site, today: dt.date, stored: Iterable[tuple[dt.date, float, float, str]] = ()
) -> tuple[dt.date | None, dt.date | None, str]:
    """(freeze start, cooling start, source) for the site as seen on ``today``.

    ``stored`` holds (date, min_c, max_c, source) rows from forecasts or CSV;
    they come first, normals fill the rest. The source names what the freeze
    start came from.
    """
    start = today - dt.timedelta(days=SEASON_LOOKBACK_DAYS)
    stop = start + dt.timedelta(days=SEASON_SEARCH_DAYS)
    measured = tuple(sorted((d, lo, hi, src) for d, lo, hi, src in stored if start <= d < stop))
    return _starts(
        tuple(site.normals_min_c),
        tuple(site.normals_max_c),
        float(site.preheat_threshold_c),
        float(site.cooling_threshold_c),
        start,
        measured,
    )


def season_starts_for_sites(
    *, sites: Iterable[Site], today_by_site: dict[int, dt.date]
) -> dict[int, tuple[dt.date | None, dt.date | None, str]]:
    """``season_starts`` for many sites, from their stored forecast/CSV days (one query) and their normals.

    This is what the engine uses, so a new forecast or CSV counts at the next
    generation run even before the nightly season refresh has stored it on the site.
    """
    sites = list(sites)
    if not sites:
        return {}
    floor = min(today_by_site[s.pk] for s in sites) - dt.timedelta(days=SEASON_LOOKBACK_DAYS)
    stored: dict[int, list[tuple[dt.date, float, float, str]]] = defaultdict(list)
    rows = OutdoorTemperature.objects.filter(site__in=[s.pk for s in sites], date__gte=floor).values_list(
        "site_id", "date", "min_c", "max_c", "source"
    )
    for site_id, day, lo, hi, src in rows:
        stored[site_id].append((day, lo, hi, src))
    return {s.pk: season_starts(site=s, today=today_by_site[s.pk], stored=stored[s.pk]) for s in sites}


def season_key(*, season: str, start: dt.date, latitude: float) -> str:
    """The occurrence key of one season's check: ``<season>:<season year>``.

    A season whose start can fall either side of 1 January in its hemisphere
    (freeze in the north, cooling in the south) is filed under the year of the
    July before it, so a start that moves from 28 December to 3 January stays
    the same season; the other two are filed under the calendar year of their
    start, whose New Year falls in the opposite season.
    """
    spans_new_year = (season == "freeze") == (latitude >= 0)
    year = start.year - 1 if spans_new_year and start.month < 7 else start.year
    return f"{season}:{year}"


@transaction.atomic
def outdoor_temperatures_store(*, site: Site, days: Iterable[DailyTemperature], source: str) -> int:
    """Upsert daily outdoor temperatures for a site; a forecast never overwrites an imported (measured) day."""
    if source not in OutdoorTemperature.Source.values:
        raise ValidationError(
            {"source": [f"source={source!r} is not one of {', '.join(OutdoorTemperature.Source.values)}"]}
        )
    days = list(days)
    existing = {o.date: o for o in OutdoorTemperature.objects.filter(site=site, date__in=[d.date for d in days])}
    new, changed = [], []
    for d in days:
        row = existing.get(d.date)
        if row is None:
            new.append(
                OutdoorTemperature(site=site, date=d.date, min_c=d.min_c, max_c=d.max_c, mean_c=d.mean_c, source=source)
            )
        elif not (source == OutdoorTemperature.Source.FORECAST and row.source == OutdoorTemperature.Source.CSV):
            row.min_c, row.max_c, row.mean_c, row.source = d.min_c, d.max_c, d.mean_c, source
            changed.append(row)
    OutdoorTemperature.objects.bulk_create(new)
    OutdoorTemperature.objects.bulk_update(changed, ["min_c", "max_c", "mean_c", "source"])
    return len(new) + len(changed)


@transaction.atomic
def outdoor_temperatures_import_csv(*, organisation: Organisation, text: str) -> dict[str, int]:
    """Import a CSV of daily or hourly outdoor temperatures (see weather.parse_temperature_csv), all or nothing."""
    try:
        by_site = parse_temperature_csv(text)
    except ValueError as exc:
        raise ValidationError({"file": [str(exc)]}) from None
    sites = {s.code: s for s in Site.objects.filter(organisation=organisation, code__in=list(by_site))}
    unknown = sorted(set(by_site) - set(sites))
    if unknown:
        raise ValidationError({"file": [f"site_code {', '.join(map(repr, unknown))} is not a site of {organisation}"]})
    return {
        code: outdoor_temperatures_store(site=sites[code], days=days, source=OutdoorTemperature.Source.CSV)
        for code, days in by_site.items()
    }


@transaction.atomic
def site_seasons_refresh(
    *, site: Site, today: dt.date, provider: HttpForecastProvider | None = None, fetch: bool = True
) -> Site:
    """Fetch the forecast (when a provider or URL is there), then set the site's season starts.

    A failing forecast is not fatal: the stored days and the normals still give a start.
    """
    from ..weather import ForecastError

    if fetch and provider is None and HttpForecastProvider().url:
        provider = HttpForecastProvider()
    if fetch and provider is not None:
        try:
            outdoor_temperatures_store(site=site, days=provider.daily(site), source=provider.source)
        except ForecastError:
            import logging

            logging.getLogger(__name__).warning(
                "forecast for site %s failed; using stored days and normals", site.code, exc_info=True
            )
    stored = OutdoorTemperature.objects.filter(
        site=site, date__gte=today - dt.timedelta(days=SEASON_LOOKBACK_DAYS)
    ).values_list("date", "min_c", "max_c", "source")
    freeze, cooling, source = season_starts(site=site, today=today, stored=stored)
    site.freeze_season_start, site.cooling_season_start, site.season_source = freeze, cooling, source
    site.save(update_fields=["freeze_season_start", "cooling_season_start", "season_source"])
    organisation_changed(organisation_id=site.organisation_id)
    return site
