"""Judging a unit's trends day by day: the feeds, the fault rules, freeze events, and what they raise.

For each site-local day and each unit with mapped points (``trends_judge``):

1. Run-hours and filter loading feed the schedule (``automation.feeds``).
2. The unit's points are put on one regular grid and judged by ASHRAE Guideline 36's AHU fault conditions
   (``automation.judging_rules``: every unit of the site-day before any writes, units alike in one pass).
3. The supply air (and the air after a preheater, where mapped) is judged against the guideline's
   freeze-protection stages (the same module).
4. Each fault found opens or updates the unit's one open ``Fault`` of that rule and proposes its corrective
   work through ``scheduling.services.corrective_work_order_propose`` (``automation.fault_keeping``; the path
   findings use: one open corrective work order per unit, part and scheduling condition). A fault the rules
   judged but did not find for ``PLENUM_FAULT_CLOSE_AFTER_DAYS`` days (7 by default) closes. A freeze event
   keeps the unit "not ready" in ``inspections.freeze.freeze_readiness`` until a freeze-protection test passes.
5. Each open fault is one finding of its unit through the findings' own path (``automation.fault_findings``):
   source building-automation trends with the rule, its evidence window and share; it holds the fault's
   corrective work and closes with the fault (absent for the set time, or its work completed).

Re-running a day replaces that day's evidence and adds nothing twice.
"""

from __future__ import annotations

import datetime as dt
import functools
from dataclasses import dataclass, field

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.changes import changes_deferred
from engineering.errors import EngineeringInputError
from engineering.faults import AhuFaults, FreezeEvent
from inventory.models import AHU, Site
from inventory.today import today_for

from .fault_keeping import (
    FAULT_WORK,
    Seen,
    fault_keep,
    fault_reason,
    faults_close_absent,
    freeze_blockers,
    seen_fault,
    seen_freeze,
    work_order_moved,
)
from .fault_models import Fault
from .feeds import fan_of, filter_days_forecast, filter_feed, run_hours_feed
from .freeze_moments import freeze_moment
from .judging_rules import LEAD, RulesDay, rules_judge
from .models import Point
from .series import Samples, UnitTrends, samples_for, site_day_window, unit_trends

# Names other apps and tests read here: the faults' work table, a fault's text, the followers.
__all__ = [
    "FAULT_WORK",
    "JudgeResult",
    "SiteDayReads",
    "UnitDay",
    "fault_reason",
    "freeze_blockers",
    "site_day_reads",
    "sites_with_points",
    "trends_judge",
    "trends_judge_yesterday",
    "unit_day_judge",
    "unit_day_trends",
    "unit_points",
    "work_order_moved",
]


@dataclass
class UnitDay:
    """What one unit's day of trends gave."""

    ahu: AHU
    day: dt.date
    run_hours: object = None
    filters: list = field(default_factory=list)
    faults: AhuFaults | None = None
    freeze: tuple[FreezeEvent, ...] = ()
    opened: list[Fault] = field(default_factory=list)
    updated: list[Fault] = field(default_factory=list)
    closed: list[Fault] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


@dataclass
class JudgeResult:
    days: list[UnitDay] = field(default_factory=list)

    @property
    def opened(self) -> list[Fault]:
        return [f for d in self.days for f in d.opened]

    @property
    def closed(self) -> list[Fault]:
        return [f for d in self.days for f in d.closed]


@dataclass
class SiteDayReads:
    """What judging one site-local day reads for every unit of the site, read once for the site (a fixed number
    of queries, whatever its number of units) inside the site-day's transaction, before any unit's writes; the
    units' rows are locked in it (for their meter readings)."""

    start: dt.datetime
    end: dt.datetime
    samples: dict[int, Samples]  # point id: samples from ``start - LEAD`` to ``end``
    meters: dict[int, tuple]  # fan id: ``feeds.fan_meters``
    open_faults: dict[int, list[Fault]]  # unit id: its open faults, locked, newest first (``Fault.Meta.ordering``)
    filter_findings: dict[int, object]  # bank id: its open "filter loaded" finding from the trends


def site_day_reads(*, units: list[AHU], points_of: dict[int, list[Point]], day: dt.date) -> SiteDayReads:
    """Everything ``unit_day_judge`` reads before it writes, for ``units`` (one site's) on ``day``."""
    from .fault_findings import open_filter_findings
    from .feeds import FILTER_SENSOR, fan_meters

    start, end = site_day_window(ahu=units[0], day=day)
    points = [p for u in units for p in points_of.get(u.pk, [])]
    fans = {p.component.pk: p.component for p in points if p.component is not None and p.component.kind == "fan"}
    banks = [p.component for p in points if p.brick_class == FILTER_SENSOR and p.component is not None]
    # The units' rows locked once for the day's meter readings (the meter service locks one per reading).
    list(AHU.objects.select_for_update().filter(pk__in=[u.pk for u in units]).order_by("pk").values_list("pk"))
    open_faults: dict[int, list[Fault]] = {u.pk: [] for u in units}
    for fault in Fault.objects.select_for_update().filter(ahu__in=units, state=Fault.State.OPEN):
        open_faults[fault.ahu_id].append(fault)
    return SiteDayReads(
        start=start,
        end=end,
        samples=samples_for(points=points, since=start - LEAD, until=end),
        meters=fan_meters(fans=list(fans.values()), end=end) if fans else {},
        open_faults=open_faults,
        filter_findings=open_filter_findings(banks=banks) if banks else {},
    )


def unit_points(ahu: AHU, points: list[Point] | None = None) -> list[Point]:
    """The unit's mapped points (read when not given), each part's unit the one already read (its site's zone and
    organisation) for every part's reader."""
    points = list(points if points is not None else Point.objects.filter(ahu=ahu).select_related("component"))
    for p in points:
        if p.component is not None and p.component.ahu_id == ahu.pk:
            p.component.ahu = ahu
    return points


def unit_day_trends(*, ahu: AHU, points: list[Point], reads: SiteDayReads) -> UnitTrends:
    """The unit's day (with its lead) from what ``site_day_reads`` read for its site."""
    return unit_trends(ahu=ahu, start=reads.start, end=reads.end, lead=LEAD, points=points, samples=reads.samples)


@transaction.atomic
def unit_day_judge(
    *,
    ahu: AHU,
    day: dt.date,
    points: list[Point] | None = None,
    reads: SiteDayReads | None = None,
    forecast_later: list | None = None,
    trends: UnitTrends | None = None,
    rules: RulesDay | None = None,
    by=None,
) -> UnitDay:
    """``unit_day_judged`` in a savepoint of its own: a refused write takes back the unit's day alone."""
    return unit_day_judged(
        ahu=ahu,
        day=day,
        points=points,
        reads=reads,
        forecast_later=forecast_later,
        trends=trends,
        rules=rules,
        by=by,
    )


def unit_day_judged(
    *,
    ahu: AHU,
    day: dt.date,
    points: list[Point] | None = None,
    reads: SiteDayReads | None = None,
    forecast_later: list | None = None,
    trends: UnitTrends | None = None,
    rules: RulesDay | None = None,
    by=None,
    careful: bool = True,
) -> UnitDay:
    """Judge one unit's site-local ``day`` of trends: feeds, faults, freeze events; idempotent. ``reads``: what
    ``site_day_reads`` read for the unit's site that day, in the caller's transaction (read here when None).
    ``forecast_later``: where to leave the filter days whose forecast words the caller adds for the whole site
    (``feeds.filter_feed``); worded here when None. ``trends`` and ``rules``: the unit's day as
    ``unit_day_trends`` gives it and what ``rules_judge`` found in it, when the caller judged many units' days at
    once (both from ``reads``); else made here. ``careful`` False (the caller's fast pass, in its savepoint): a
    meter's first day without a savepoint of its own (``feeds.run_hours_feed``)."""
    from accounts.changes import work_changed

    if trends is None:
        points = unit_points(ahu, points)
        if reads is None:
            reads = site_day_reads(units=[ahu], points_of={ahu.pk: points}, day=day)
        trends = unit_day_trends(ahu=ahu, points=points, reads=reads)
    elif reads is None:
        raise ValueError("unit_day_judge(trends=…) needs the reads the trends were made from")
    if rules is None:
        rules = rules_judge([trends])[0]
    start, end = reads.start, reads.end
    out = UnitDay(ahu=ahu, day=day)
    fan_point, _, _ = fan_of(trends)
    meter = reads.meters.get(fan_point.component.pk) if fan_point is not None else None
    out.run_hours = run_hours_feed(trends=trends, by=by, meter=meter, unit_locked=True, careful=careful)
    if out.run_hours is not None and out.run_hours.note and out.run_hours.reading is None:
        out.notes.append(f"run-hours: {out.run_hours.note}")
    hours = out.run_hours.reading.hours if out.run_hours is not None and out.run_hours.reading is not None else None
    out.filters = filter_feed(
        trends=trends,
        day=day,
        meter_hours=hours,
        open_findings=reads.filter_findings,
        forecast_later=forecast_later,
        by=by,
    )
    out.faults, out.freeze = rules.faults, rules.freeze
    if rules.why:
        out.notes.append(rules.why)
    seen: list[Seen] = []
    judged: set[str] = set()
    if out.faults is not None:
        for code, r in out.faults.results.items():
            if r.judged and r.applicable_s > 0:
                judged.add(code)
            found = seen_fault(r, day, start, end) if r.present else None
            if found is not None:
                seen.append(found)
    supply = trends.of("sat")
    if supply is not None and supply.seconds.size:
        judged.add(Fault.FREEZE)
    moments = [
        freeze_moment(trends, e, air=air)
        for e, air in zip(out.freeze, rules.freeze_air or ("sat",) * len(out.freeze), strict=True)
    ]
    freeze = seen_freeze(out.freeze, day, zone=ahu.building.site.time_zone, moments=moments)
    if freeze is not None:
        seen.append(freeze)
    open_faults = reads.open_faults.get(ahu.pk, [])
    for f in open_faults:
        f.ahu = ahu
    for s in seen:
        fault, new = fault_keep(ahu=ahu, day=day, seen=s, open_faults=open_faults, by=by)
        (out.opened if new else out.updated).append(fault)
    out.closed = faults_close_absent(
        day=day, end=end, judged=judged, present={s.code for s in seen}, open_faults=open_faults, by=by
    )
    if seen or out.closed:
        # Faults opened or closed; corrective work they proposed or withdrew moved its own versions (services).
        work_changed(organisation_id=ahu.building.site.organisation_id)
    return out


def trends_judge(*, site: Site, start: dt.date, end: dt.date, by=None) -> JudgeResult:
    """Judge every unit of ``site`` with mapped points over the site-local days ``start``–``end``, day by day in
    order (so run-hour readings follow each other). Each site-day is one transaction; its units' days are kept in
    one savepoint, and when a write is refused, kept again each in a savepoint of its own: a unit whose day is
    refused is rolled back alone."""
    if end < start:
        raise ValidationError(
            {"end": [f"End day {end.isoformat()} is before start day {start.isoformat()}; allowed: on or after it"]}
        )
    result = JudgeResult()
    units = list(
        AHU.objects.filter(building__site=site, points__isnull=False)
        .exclude(status=AHU.Status.RETIRED)
        .select_related("building__site__organisation")
        .distinct()
        .order_by("pk")
    )
    points_of: dict[int, list[Point]] = {}
    for p in Point.objects.filter(ahu__in=units).select_related("component"):
        points_of.setdefault(p.ahu_id, []).append(p)
    for ahu in units:
        points_of[ahu.pk] = unit_points(ahu, points_of.get(ahu.pk, []))
    day = start
    while day <= end:
        # One transaction a site-day; the organisation's answers move once.
        with transaction.atomic(), changes_deferred():
            reads = site_day_reads(units=units, points_of=points_of, day=day) if units else None
            # Every unit's day judged by the rules first (no writes; units alike judged at once), then kept unit by
            # unit.
            day_trends = [unit_day_trends(ahu=ahu, points=points_of.get(ahu.pk, []), reads=reads) for ahu in units]
            found = rules_judge(day_trends)
            try:
                # The fast pass: every unit's day in one savepoint, none of its own.
                with transaction.atomic():
                    days, to_keep = site_day_keep(units, day_trends, found, reads=reads, day=day, by=by, careful=False)
            except (ValidationError, EngineeringInputError):
                # A write was refused: the pass is taken back and made again, each unit's day in a savepoint of its
                # own, so a unit whose day is refused is rolled back alone (what it had read is read again).
                reads = site_day_reads(units=units, points_of=points_of, day=day)
                days, to_keep = site_day_keep(units, day_trends, found, reads=reads, day=day, by=by, careful=True)
            result.days += days
            filter_days_forecast(days=to_keep, day=day)
        day += dt.timedelta(days=1)
    return result


def site_day_keep(
    units: list[AHU], day_trends: list[UnitTrends], found: list[RulesDay], *, reads, day: dt.date, by, careful: bool
) -> tuple[list[UnitDay], list]:
    """Each unit's judged day kept (``unit_day_judged``), in order; and the filter days the units leave for the site
    to store and word at once. ``careful``: each unit's day in a savepoint of its own, a refused one noted;
    else none, and a refusal raised."""
    days: list[UnitDay] = []
    to_keep: list = []
    for ahu, trends, rules in zip(units, day_trends, found, strict=True):
        mine: list = []
        judge = unit_day_judge if careful else functools.partial(unit_day_judged, careful=False)
        try:
            judged = judge(
                ahu=ahu,
                day=day,
                points=trends.points,
                reads=reads,
                forecast_later=mine,
                trends=trends,
                rules=rules,
                by=by,
            )
        except (ValidationError, EngineeringInputError) as exc:
            if not careful:
                raise
            # One unit's refused write (its day rolled back) never stops the site's other units.
            words = " ".join(exc.messages) if isinstance(exc, ValidationError) else str(exc)
            days.append(UnitDay(ahu=ahu, day=day, notes=[f"not judged: {words}"]))
            continue
        days.append(judged)
        to_keep += mine
    return days, to_keep


def trends_judge_yesterday(*, site: Site, now: dt.datetime | None = None) -> JudgeResult:
    """The nightly run: the site's local yesterday."""
    yesterday = today_for(site, now=now) - dt.timedelta(days=1)
    return trends_judge(site=site, start=yesterday, end=yesterday)


def sites_with_points() -> list[int]:
    return list(Site.objects.filter(buildings__ahus__points__isnull=False).distinct().values_list("pk", flat=True))
