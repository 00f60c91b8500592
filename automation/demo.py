"""Synthetic building-automation trends for the invented demo, with four seeded faults.

Every value is invented (deterministic: numpy's generator seeded by site, unit and day names, never row ids) but
physically sensible, and goes through the real paths: points are mapped by ``automation.services.point_create``,
samples stored by ``automation.trends.trend_samples_store``, and the days judged by
``automation.judging.trends_judge``, so run-hours, filter days, faults, their corrective work and freeze readiness
come from the same code as a real site's.

The units (15-minute samples, the site's zone):

- outdoor air from the site's climate normals (``engineering.freeze.daily_values_from_normals``): a daily swing
  between the day's minimum near 05:00 and its maximum near 15:00, each day shifted by up to ±3 K;
- the supply fan runs on weekdays 06:00–19:00 (a corridor unit that runs at reduced speed outside the
  building's hours runs all day); off, its status, speed, damper and valves are 0;
- a simple economiser controller in Guideline 36's operating states: heating with the outdoor-air damper at
  its minimum; free cooling, the damper modulating so the mixed air plus fan heat meets the set point; cooling
  with 100 % outdoor air; cooling at minimum outdoor air when the outdoor air is warmer than the return air.
  Mixed air is return air plus the outdoor-air fraction of the difference; the supply air holds its set point
  (plus 0.8 K fan heat where nothing acts on it);
- a unit with a preheater or a preheat coil: the air after it held at ``PREHEAT_C`` or above while the fan runs
  (the preheat coil's valve opening for it), its frost thermostat at rest; on the seeded freezing night the
  preheater trips, the air passes it unheated and the frost thermostat trips, so the freeze event's words read
  the air after the preheater and the thermostat's point;
- each filter bank's pressure drop rises with the days since its last change recorded in the demo history
  (``inspections.selectors.filter_series``) and falls at each change; the measured value is at the fan's speed
  (the filter law, Δp ∝ Q^1.5).

Seeded faults (``SEEDED``): a final filter bank that crosses its change limit between visits; an outdoor-air
damper stuck fully open (the command moves, the mixed air says the outdoor-air fraction does not); a leaking
cooling valve (air cooled across the closed coil in free cooling: Guideline 36's FC#14 needs the coil's
entering and leaving air temperatures, which no mapped point carries, so the guideline's FC#8 — supply and
mixed air apart in free cooling — is the rule that finds it here); and a night with the supply air near
freezing (the electric preheater tripped), which keeps the unit "not ready" for freeze protection until a
freeze-protection test passes after it. Every other unit's data must trip no rule.

Stored: a year for the units with seeded faults, ``HEALTHY_DAYS`` for the others; judged: the last
``JUDGE_DAYS`` days for every trended unit, and the freezing night's day when it lies before them.

The scenario's numbers and each unit's values: ``demo_values``; the points mapped: ``demo_points``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

from inventory.models import AHU

from .demo_points import unit_points
from .demo_values import (
    FREEZE_NIGHT,
    HEALTHY_DAYS,
    JUDGE_DAYS,
    SEEDED,
    YEAR_DAYS,
    freeze_night,
    outdoor_days,
    unit_key,
    unit_values,
)
from .models import Point, TrendDay


@dataclass
class DemoTrends:
    units: int = 0
    points_created: int = 0
    values: int = 0
    days_judged: int = 0
    faults_opened: int = 0


def _stored_through(points: dict[str, Point], first_utc: dt.date, last_utc: dt.date) -> bool:
    """Whether every point already holds a bucket for each UTC day of the range (a rerun stores nothing)."""
    expected = len(points) * ((last_utc - first_utc).days + 1)
    got = TrendDay.objects.filter(point__in=list(points.values()), day__gte=first_utc, day__lte=last_utc).count()
    return got >= expected


def demo_trends_load(*, organisation, today: dt.date) -> DemoTrends:
    """Map the demo units' points, store their synthetic trends and judge the needed days; idempotent."""
    from django.db import transaction

    from .judging import trends_judge
    from .trends import trend_samples_store

    summary = DemoTrends()
    units = (
        AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE)
        .select_related("building__site")
        .order_by("building__site__code", "building__code", "tag")
    )
    ranges: dict[int, tuple[object, set[tuple[dt.date, dt.date]]]] = {}
    for ahu in units:
        site = ahu.building.site
        fault = SEEDED.get(unit_key(ahu))
        span = YEAR_DAYS if fault else HEALTHY_DAYS
        days = [today - dt.timedelta(days=k) for k in range(span, 0, -1)]
        with transaction.atomic():
            points, created = unit_points(ahu)
        summary.units += 1
        summary.points_created += created
        tz = zoneinfo.ZoneInfo(site.time_zone or "UTC")
        first_utc = dt.datetime.combine(days[0], dt.time(), tzinfo=tz).astimezone(dt.UTC).date()
        last_utc = dt.datetime.combine(days[-1], dt.time(23, 45), tzinfo=tz).astimezone(dt.UTC).date()
        if not _stored_through(points, first_utc, last_utc):
            samples = unit_values(
                ahu=ahu, points=points, days=days, outdoor=outdoor_days(site, days), today=today, fault=fault
            )
            with transaction.atomic():
                summary.values += trend_samples_store(samples).values
        start, end = today - dt.timedelta(days=JUDGE_DAYS), today - dt.timedelta(days=1)
        wanted = ranges.setdefault(site.pk, (site, set()))[1]
        wanted.add((start, end))
        if fault == FREEZE_NIGHT and (night := freeze_night(site, today)) < start:
            wanted.add((night, night))
    for site, wanted in ranges.values():
        for start, end in sorted(wanted):  # in time order: run-hour readings follow each other
            result = trends_judge(site=site, start=start, end=end)
            summary.days_judged += len(result.days)
            summary.faults_opened += len(result.opened)
    return summary
