"""Reads of what the trends found: faults, a unit's trend with its fault windows, a bank's filter days.

Every list starts from ``inventory.selectors.sites_visible_to`` (the tenancy rule); one fault named in a URL
comes through ``fault_for``.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from django.db.models import QuerySet
from django.http import Http404

from accounts.models import User
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
