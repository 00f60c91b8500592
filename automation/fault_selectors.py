"""Reads of what the trends found: faults, the filters they found loaded, a unit's trend with its fault windows, a
bank's filter days.

Every list starts from ``inventory.selectors.sites_visible_to`` (the tenancy rule); one fault named in a URL
comes through ``fault_for``.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from django.db.models import QuerySet
from django.http import Http404

from accounts.models import User
from inspections.models import Finding
from inventory.models import AHU, Component, Site
from inventory.selectors import sites_visible_to

from .fault_models import Fault, FilterDay
from .models import Point
from .series import role_of, samples_for


def faults_visible_to(
    *, user: User, site: Site | None = None, ahu_id: int | None = None, open_only: bool = True
) -> QuerySet[Fault]:
    """Faults of the units on the sites the person may see (optionally one site or unit), latest seen first,
    with their unit, site, part and corrective work read in the same query."""
    faults = Fault.objects.filter(ahu__building__site__in=sites_visible_to(user=user))
    if site is not None:
        faults = faults.filter(ahu__building__site=site)
    if ahu_id is not None:
        faults = faults.filter(ahu_id=ahu_id)
    if open_only:
        faults = faults.filter(state=Fault.State.OPEN)
    return faults.select_related("ahu__building__site", "component", "corrective_work_order").order_by(
        "-last_seen_at", "-id"
    )


def loaded_filters_visible_to(*, user: User, site: Site | None = None) -> QuerySet[Finding]:
    """The open findings "filter loaded" the trends raised (``automation.feeds.filter_feed`` through
    ``fault_findings.filter_finding_keep``: a bank's pressure sensor at its change point, the change proposed) on the
    sites the person may see (optionally one site), latest seen first, with their unit, site, bank and proposed work
    read in the same query. They are no ``Fault`` (no guideline rule found them), yet the faults pages list them
    beside the faults with the work each proposed."""
    from inspections.selectors import findings_visible_to

    from .fault_findings import FILTER_RULE, SOURCE

    found = findings_visible_to(user=user).filter(source=SOURCE, rule=FILTER_RULE, state=Finding.State.OPEN)
    if site is not None:
        found = found.filter(ahu__building__site=site)
    return found.select_related("ahu__building__site", "component", "corrective_work_order").order_by(
        "-last_seen_at", "-id"
    )


def fault_for(*, user: User, id: int) -> Fault:
    """One fault: ``Http404`` unless the person may see its unit's site. Faults are written by the judging only."""
    fault = faults_visible_to(user=user, open_only=False).filter(pk=id).first()
    if fault is None:
        raise Http404("No such fault, or not one you may see.")
    return fault


@dataclass(frozen=True)
class TrendLine:
    point: Point
    role: str | None  # the fault engine's role, None for a point no rule reads
    samples: list[tuple[dt.datetime, float]]  # SI values; percent points as fractions 0–1


@dataclass(frozen=True)
class UnitTrendView:
    """A unit's trends over a stretch of time with the fault windows in it, for a chart."""

    ahu: AHU
    start: dt.datetime
    end: dt.datetime
    lines: list[TrendLine]
    windows: list[dict]  # {code, title, start, end, fault id} overlapping the stretch, from the faults' evidence


def unit_trend_view(*, ahu: AHU, start: dt.datetime, end: dt.datetime) -> UnitTrendView:
    """The unit's points and samples in [start, end) and the evidence windows of its faults that overlap it.
    The unit already came through a tenancy-checked read (``faults_visible_to``, ``points_visible_to``)."""
    points = list(Point.objects.filter(ahu=ahu).select_related("component").order_by("name"))
    got = samples_for(points=points, since=start, until=end)
    lines = [
        TrendLine(
            point=p,
            role=role_of(p),
            samples=[
                (dt.datetime.fromtimestamp(s, tz=dt.UTC), v)
                for s, v in zip(got[p.pk].seconds.tolist(), got[p.pk].values.tolist(), strict=True)
            ],
        )
        for p in points
    ]
    windows = []
    for fault in Fault.objects.filter(ahu=ahu, first_seen_at__lt=end, last_seen_at__gt=start).order_by("pk"):
        for w in fault.windows:
            w_start, w_end = dt.datetime.fromisoformat(w["start"]), dt.datetime.fromisoformat(w["end"])
            if w_start < end and w_end > start:
                windows.append(
                    {"code": fault.code, "title": fault.title, "start": w_start, "end": w_end, "fault": fault.pk}
                )
    return UnitTrendView(ahu=ahu, start=start, end=end, lines=lines, windows=windows)


def filter_days_for(
    *, component: Component, since: dt.date | None = None, until: dt.date | None = None
) -> QuerySet[FilterDay]:
    """A filter bank's days from its pressure sensor, oldest first (the bank came through a tenancy check)."""
    days = FilterDay.objects.filter(component=component)
    if since is not None:
        days = days.filter(day__gte=since)
    if until is not None:
        days = days.filter(day__lte=until)
    return days.order_by("day")


def filter_series_points(*, components: list[Component], before: dt.datetime | None = None) -> dict[int, list]:
    """The banks' trend days as points of the shared filter series (``inspections.selectors.filter_series``),
    {bank id: [FilterSeriesPoint]}, in one query; registered in ``AutomationConfig.ready``.

    Each day's point stands at the end of the site's day (when its run-hour meter reading was taken), with the
    day's median already at design airflow, the trend-fed meter's hours and the source ``bas_trend``; only days
    ended before ``before`` count, when given."""
    import zoneinfo

    from inspections.selectors import FILTER_TREND, FilterSeriesPoint

    days = FilterDay.objects.filter(component__in=[c.pk for c in components])
    if before is not None:
        days = days.filter(day__lt=before.date() + dt.timedelta(days=1))
    out: dict[int, list] = {}
    zones: dict[str, zoneinfo.ZoneInfo] = {}
    for bank_id, day, dp, q, hours, tz_name in days.order_by("component_id", "day").values_list(
        "component_id",
        "day",
        "corrected_dp_pa",
        "design_airflow_m3s",
        "run_hours",
        "component__ahu__building__site__time_zone",
    ):
        tz = zones.setdefault(tz_name or "UTC", zoneinfo.ZoneInfo(tz_name or "UTC"))
        at = dt.datetime.combine(day + dt.timedelta(days=1), dt.time(), tzinfo=tz).astimezone(dt.UTC)
        if before is not None and at > before:
            continue
        out.setdefault(bank_id, []).append(
            FilterSeriesPoint(
                at=at,
                inspection_id=None,
                dp_pa=dp,
                airflow_m3s=q,
                corrected_dp_pa=dp,
                run_hours=hours,
                after_change=False,
                source=FILTER_TREND,
            )
        )
    return out
