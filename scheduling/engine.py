"""The due-date engine: rules × units → work orders.

``work_orders_generate`` computes every due occurrence of every task on every
in-service unit (or its components) for a horizon, bundles what falls due for
one unit within ``bundle_days`` into one visit, and writes only what is new.
It reads everything it needs in a fixed number of queries and writes in bulk.

Occurrence keys (unique per unit, task code and component in the database):

* interval, fixed to the calendar: ``c:<due date>`` on the grid anchor + k·interval
  (anchor: the unit's service start, else the day it was registered);
* interval, floating: ``after:<basis>`` — one open occurrence at a time, basis =
  date of the last completion (else the anchor), so completing it restarts the clock;
* run-hours: ``h:<meter>:<target hours>`` — the target stays, the projected date
  moves with the rate (the row is updated, not duplicated);
* season: ``<season>:<year of the season start>`` — due its lead time before the
  start, or at once when that window has already opened; moves with the forecast.
"""

from __future__ import annotations

import calendar
import datetime as dt
import zoneinfo
from collections import defaultdict
from dataclasses import dataclass, field

from django.db import transaction
from django.db.models import Max, Q
from django.utils import timezone

from engineering.errors import EngineeringInputError
from engineering.trends import run_hours_per_day
from inventory.models import AHU

from .models import MeterReading, TaskDefinition, UnitTaskSetting, WorkOrder, WorkOrderTask
from .selectors import effective_tasks
from .services.seasons import SEASON_LOOKBACK_DAYS, season_starts
from .targets import task_targets

BUNDLE_DAYS = 14
RATE_WINDOW_DAYS = 120  # "recent" run-hour rate: readings of the last four months (common practice)
RATE_MAX_READINGS = 20
MOVABLE_STATES = frozenset({WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED})
Trigger = TaskDefinition.Trigger


@dataclass
class GenerationResult:
    created: int = 0
    moved: int = 0
    unchanged: int = 0
    work_orders_created: int = 0
    lines: list[str] = field(default_factory=list)


@dataclass
class _Occ:
    ahu: AHU
    task: TaskDefinition
    component: object
    due: dt.date
    key: str
    movable: bool
    clamped: bool = False  # the natural date was already past, so it is due today

    @property
    def ident(self) -> tuple:
        return (self.ahu.pk, self.task.code, self.component.pk if self.component else 0, self.key)


def add_months(day: dt.date, months: int) -> dt.date:
    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def add_interval(day: dt.date, value: int, unit: str, times: int = 1) -> dt.date:
    if unit == TaskDefinition.IntervalUnit.MONTHS:
        return add_months(day, value * times)
    step = value * (7 if unit == TaskDefinition.IntervalUnit.WEEKS else 1)
    return day + dt.timedelta(days=step * times)


def calendar_occurrences(*, anchor: dt.date, value: int, unit: str, start: dt.date, end: dt.date) -> list[dt.date]:
    """Dates anchor + k·interval (k ≥ 1) falling in [start, end]."""
    if unit == TaskDefinition.IntervalUnit.MONTHS:
        months = (start.year - anchor.year) * 12 + start.month - anchor.month
        k = max(1, months // value - 1)
    else:
        step = value * (7 if unit == TaskDefinition.IntervalUnit.WEEKS else 1)
        k = max(1, (start - anchor).days // step)
    out = []
    while True:
        due = add_interval(anchor, value, unit, k)
        if due > end:
            return out
        if due >= start:
            out.append(due)
        k += 1


def _local(when: dt.datetime, tz: zoneinfo.ZoneInfo) -> dt.date:
    return when.astimezone(tz).date()


class _Meters:
    """Run-hour readings of the units, grouped per meter, since each meter's last reset."""

    def __init__(self, ahu_ids: list[int], now: dt.datetime):
        self.by_meter: dict[tuple[int, int], list[tuple[dt.datetime, float, bool, int]]] = defaultdict(list)
        rows = (
            MeterReading.objects.filter(ahu_id__in=ahu_ids, taken_at__gte=now - dt.timedelta(days=800))
            .order_by("taken_at", "id")
            .values_list("ahu_id", "component_id", "taken_at", "hours", "is_reset", "id")
        )
        for ahu_id, comp_id, taken_at, hours, is_reset, pk in rows:
            series = self.by_meter[(ahu_id, comp_id or 0)]
            if is_reset:
                series.clear()
            series.append((taken_at, hours, is_reset, pk))

    def meter_for(self, ahu: AHU, components) -> tuple[int, int] | None:
        if self.by_meter.get((ahu.pk, 0)):
            return (ahu.pk, 0)
        fans = [c for c in components if c.kind == "fan"]
        fans.sort(key=lambda c: (c.specs.get("role") != "supply", c.pk))
        for fan in fans:
            if self.by_meter.get((ahu.pk, fan.pk)):
                return (ahu.pk, fan.pk)
        return None

    def projection(self, meter, *, run_hours: int, last_done: dt.datetime | None, now: dt.datetime):
        """(key part, projected date-time when the next ``run_hours`` are reached) or None without a rate."""
        series = self.by_meter[meter]
        recent = [r for r in series if r[0] >= now - dt.timedelta(days=RATE_WINDOW_DAYS)][-RATE_MAX_READINGS:]
        if len(recent) < 2:
            recent = series[-2:]
        try:
            rate = run_hours_per_day(readings=[(r[0], r[1]) for r in recent])
        except EngineeringInputError:
            return None
        if rate.slope <= 0:
            return None
        reset_id = series[0][3] if series[0][2] else 0
        if last_done is not None and last_done >= series[0][0]:
            before = [r for r in series if r[0] <= last_done]
            basis = (before[-1] if before else series[0])[1]
            target = basis + run_hours
        else:
            target = (int(series[-1][1] // run_hours) + 1) * run_hours
        last_at, last_hours = series[-1][0], series[-1][1]
        when = last_at + dt.timedelta(days=max(0.0, (target - last_hours) / rate.slope))
        return f"h:{reset_id}:{round(target)}", when


def _season_starts_for(site, today: dt.date) -> tuple[dt.date | None, dt.date | None]:
    floor = today - dt.timedelta(days=SEASON_LOOKBACK_DAYS)
    stored_ok = site.season_source and all(
        d is not None and d >= floor for d in (site.freeze_season_start, site.cooling_season_start)
    )
    if stored_ok:
        return site.freeze_season_start, site.cooling_season_start
    freeze, cooling, _ = season_starts(site=site, today=today)
    return freeze, cooling


def _occurrences(*, ahu, components, task, today, end, last_done, meters, seasons, now) -> list[_Occ]:
    site = ahu.building.site
    tz = zoneinfo.ZoneInfo(site.time_zone)
    targets = task_targets(task=task, ahu=ahu, components=components)
    out: list[_Occ] = []
    anchor = ahu.service_start or _local(ahu.created_at, tz)
    for comp in targets:
        ck = comp.pk if comp else 0
        done = last_done.get((ahu.pk, task.code, ck))
        if task.trigger == Trigger.INTERVAL:
            if task.anchor == TaskDefinition.Anchor.FLOATING:
                basis = _local(done, tz) if done else anchor
                due = max(add_interval(basis, task.interval_value, task.interval_unit), today)
                if due <= end:
                    out.append(_Occ(ahu, task, comp, due, f"after:{basis.isoformat()}", False))
            else:
                for due in calendar_occurrences(
                    anchor=anchor, value=task.interval_value, unit=task.interval_unit, start=today, end=end
                ):
                    out.append(_Occ(ahu, task, comp, due, f"c:{due.isoformat()}", False))
        elif task.trigger == Trigger.RUNTIME:
            meter = meters.meter_for(ahu, components)
            if meter is None:
                continue
            proj = meters.projection(meter, run_hours=task.run_hours, last_done=done, now=now)
            if proj is None:
                continue
            key, when = proj
            natural = _local(when, tz)
            if natural <= end:
                out.append(_Occ(ahu, task, comp, max(natural, today), key, True, natural < today))
        elif task.trigger == Trigger.SEASON:
            freeze, cooling = seasons[site.pk]
            start = freeze if task.season == TaskDefinition.Season.FREEZE else cooling
            if start is None or start < today - dt.timedelta(days=SEASON_LOOKBACK_DAYS):
                continue
            natural = start - dt.timedelta(days=task.lead_days or 0)
            if natural <= end:
                out.append(
                    _Occ(ahu, task, comp, max(natural, today), f"{task.season}:{start.year}", True, natural < today)
                )
    return out


def _title(tasks: list[TaskDefinition]) -> str:
    names = ", ".join(sorted({t.name for t in tasks}))
    title = f"Preventive maintenance: {names}"
    return title if len(title) <= 200 else title[:197] + "…"


def work_orders_generate(
    *,
    organisation,
    today: dt.date | None = None,
    horizon_days: int = 90,
    site=None,
    dry_run: bool = False,
    bundle_days: int = BUNDLE_DAYS,
) -> GenerationResult:
    """Create the due preventive work for ``horizon_days`` from today (each site's own date unless given).

    Idempotent: a second run creates nothing; two concurrent runs create each
    occurrence once (database unique constraint with ON CONFLICT DO NOTHING).
    """
    now = timezone.now()
    tasks = [t for t in effective_tasks(organisation=organisation).values() if t.trigger != Trigger.CONDITION]
    ahus_qs = (
        AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE)
        .select_related("building__site")
        .prefetch_related("components")
        .order_by("pk")
    )
    if site is not None:
        ahus_qs = ahus_qs.filter(building__site=site)
    ahus = list(ahus_qs)
    ahu_ids = [a.pk for a in ahus]
    result = GenerationResult()
    if not ahus or not tasks:
        return result
    disabled = set(UnitTaskSetting.objects.filter(ahu_id__in=ahu_ids, enabled=False).values_list("ahu_id", "task_code"))
    last_done = {
        (r["ahu_id"], r["task_code"], r["component_key"]): r["last"]
        for r in WorkOrderTask.objects.filter(ahu_id__in=ahu_ids, completed_at__isnull=False)
        .values("ahu_id", "task_code", "component_key")
        .annotate(last=Max("completed_at"))
    }
    meters = _Meters(ahu_ids, now)
    site_today: dict[int, dt.date] = {}
    seasons: dict[int, tuple] = {}
    for a in ahus:
        s = a.building.site
        if s.pk not in site_today:
            site_today[s.pk] = today or now.astimezone(zoneinfo.ZoneInfo(s.time_zone)).date()
            seasons[s.pk] = _season_starts_for(s, site_today[s.pk])

    wanted: list[_Occ] = []
    for a in ahus:
        comps = list(a.components.all())
        day = site_today[a.building.site_id]
        end = day + dt.timedelta(days=horizon_days)
        for task in tasks:
            if (a.pk, task.code) in disabled:
                continue
            wanted.extend(
                _occurrences(
                    ahu=a,
                    components=comps,
                    task=task,
                    today=day,
                    end=end,
                    last_done=last_done,
                    meters=meters,
                    seasons=seasons,
                    now=now,
                )
            )

    earliest = min(site_today.values()) - dt.timedelta(days=800)
    existing = {
        (ahu_id, code, ck, key): (pk, due, wo_id, state)
        for pk, ahu_id, code, ck, key, due, wo_id, state in WorkOrderTask.objects.filter(ahu_id__in=ahu_ids)
        .filter(Q(completed_at__isnull=True) | Q(due_date__gte=earliest))
        .values_list(
            "id",
            "ahu_id",
            "task_code",
            "component_key",
            "occurrence_key",
            "due_date",
            "work_order_id",
            "work_order__state",
        )
    }
    open_visits: dict[int, list[list]] = defaultdict(list)  # ahu -> [[wo_id, due, created_here]]
    for wo_id, ahu_id, due in WorkOrder.objects.filter(
        ahu_id__in=ahu_ids, kind=WorkOrder.Kind.PREVENTIVE, state__in=MOVABLE_STATES
    ).values_list("id", "ahu_id", "due_date"):
        open_visits[ahu_id].append([wo_id, due, False])

    new: list[_Occ] = []
    moves: list[tuple[int, dt.date, int]] = []
    for occ in wanted:
        found = existing.get(occ.ident)
        if found is None:
            new.append(occ)
        elif (
            occ.movable
            and found[1] != occ.due
            and found[3] in MOVABLE_STATES
            and not (occ.clamped and found[1] <= occ.due)  # already due: a later "today" is no move
        ):
            moves.append((found[0], occ.due, found[2]))
        else:
            result.unchanged += 1
    result.moved = len(moves)
    result.created = len(new)
    if dry_run:
        result.lines = [f"would create {o.task.code} on {o.ahu.tag} due {o.due}" for o in new]
        return result

    with transaction.atomic():
        # Bundle per unit: attach to an open visit within the window, else start a new visit.
        new.sort(key=lambda o: (o.ahu.pk, o.due, o.task.code))
        fresh: list[tuple[WorkOrder, list[_Occ]]] = []
        attach: list[tuple[int, _Occ]] = []
        for occ in new:
            visits = open_visits[occ.ahu.pk]
            home = next((v for v in visits if abs((v[1] - occ.due).days) <= bundle_days), None)
            if home is None:
                wo = WorkOrder(
                    organisation=organisation,
                    ahu=occ.ahu,
                    kind=WorkOrder.Kind.PREVENTIVE,
                    due_date=occ.due,
                    title="",
                    overdue_on=occ.due + dt.timedelta(days=occ.task.grace_days),
                )
                fresh.append((wo, [occ]))
                visits.append([wo, occ.due, True])
            elif home[2]:
                next(f for f in fresh if f[0] is home[0])[1].append(occ)
            else:
                attach.append((home[0], occ))
        for wo, occs in fresh:
            wo.title = _title([o.task for o in occs])
            wo.due_date = min(o.due for o in occs)
            wo.overdue_on = min(o.due + dt.timedelta(days=o.task.grace_days) for o in occs)
        WorkOrder.objects.bulk_create([wo for wo, _ in fresh])
        rows = [
            WorkOrderTask(
                work_order_id=wo.pk,
                task=o.task,
                task_code=o.task.code,
                ahu=o.ahu,
                component=o.component,
                component_key=o.component.pk if o.component else 0,
                due_date=o.due,
                occurrence_key=o.key,
            )
            for wo, occs in fresh
            for o in occs
        ]
        rows += [
            WorkOrderTask(
                work_order_id=wo_id,
                task=o.task,
                task_code=o.task.code,
                ahu=o.ahu,
                component=o.component,
                component_key=o.component.pk if o.component else 0,
                due_date=o.due,
                occurrence_key=o.key,
            )
            for wo_id, o in attach
        ]
        WorkOrderTask.objects.bulk_create(rows, ignore_conflicts=True, batch_size=2000)
        fresh_ids = [wo.pk for wo, _ in fresh]
        if fresh_ids:
            # A concurrent run may have created some occurrences first; its rows won, so drop empty visits.
            empty = list(WorkOrder.objects.filter(pk__in=fresh_ids, tasks__isnull=True).values_list("pk", flat=True))
            if empty:
                lost = sum(len(occs) for wo, occs in fresh if wo.pk in set(empty))
                WorkOrder.objects.filter(pk__in=empty).delete()
                result.created -= lost
                result.unchanged += lost
            result.work_orders_created = len(fresh_ids) - len(empty)
        if moves:
            task_rows = [WorkOrderTask(pk=pk, due_date=due) for pk, due, _ in moves]
            WorkOrderTask.objects.bulk_update(task_rows, ["due_date"])
            touched = {wo_id for _, _, wo_id in moves}
            firsts = {}
            for wo_id, due in WorkOrderTask.objects.filter(work_order_id__in=touched).values_list(
                "work_order_id", "due_date"
            ):
                firsts[wo_id] = min(due, firsts.get(wo_id, due))
            orders = list(WorkOrder.objects.filter(pk__in=touched).only("id", "due_date", "overdue_on", "version"))
            for wo in orders:
                shift = firsts[wo.pk] - wo.due_date
                wo.due_date = firsts[wo.pk]
                wo.overdue_on = (wo.overdue_on or wo.due_date) + shift
                wo.version += 1
            WorkOrder.objects.bulk_update(orders, ["due_date", "overdue_on", "version"])
    return result
