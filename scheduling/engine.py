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
* season: ``<season>:<season year>`` (``services.seasons.season_key``: the freeze
  season of winter 2026/27 in the north is ``freeze:2026`` whether it starts on
  28 December or 3 January) — due its lead time before the start, or at once when
  that window has already opened; moves with the forecast. The start comes from
  the stored forecast/CSV days first, the site's normals elsewhere.

Speed: a nightly run over thousands of units is mostly idempotent, so the loop
works on light rows read with ``values_list`` (no model instances), reads each
meter's rate and each task's target rule once, and reads back only the stored
occurrences a run could want again.
"""

from __future__ import annotations

import calendar
import datetime as dt
import json
import zoneinfo
from collections import defaultdict
from dataclasses import dataclass, field
from functools import lru_cache

from django.db import connections, transaction
from django.db.models import Max, Q, TextField
from django.db.models.functions import Cast
from django.utils import timezone

from accounts.changes import organisation_changed
from accounts.models import AuditEvent
from engineering.errors import EngineeringInputError
from engineering.trends import run_hours_per_day
from inventory.models import AHU, Component, Site
from inventory.today import today_for

from .inputs import task_problem, unit_problem
from .models import MeterReading, TaskDefinition, UnitTaskSetting, WorkOrder, WorkOrderTask, overdue_day
from .selectors import effective_tasks, task_for_unit, unit_rule_numbers
from .services.seasons import SEASON_LOOKBACK_DAYS, season_key, season_starts_for_sites
from .targets import TaskTargets
from .titles import visit_title

BUNDLE_DAYS = 14
RATE_WINDOW_DAYS = 120  # "recent" run-hour rate: readings of the last four months (common practice)
RATE_MAX_READINGS = 20
METER_HISTORY_DAYS = 800
# A fan meter fed by the building-automation trend (its latest reading's source is "bas_trend") counts every hour
# the fan ran, where a typed meter is read a few times a year; it is the run-hour basis while its latest reading is
# at most this old. The nightly judging writes one each night, so a week without one means the feed has stopped
# (common practice; the same week closes a fault absent from the trends), and the unit's typed meter is used again.
TREND_METER_CURRENT_DAYS = 7
MOVABLE_STATES = frozenset({WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED})
Trigger = TaskDefinition.Trigger
_WO_LABEL = WorkOrder._meta.label_lower
_MONTHS = TaskDefinition.IntervalUnit.MONTHS
_WEEKS = TaskDefinition.IntervalUnit.WEEKS


@dataclass
class GenerationResult:
    created: int = 0
    moved: int = 0
    unchanged: int = 0
    work_orders_created: int = 0
    lines: list[str] = field(default_factory=list)
    # Units and rules left out of this run, one line each in plain words ("AHU-03 at Site X: service start
    # 9999-12-31 is outside 2000–2036"); the rest of the organisation's work is generated.
    skipped: list[str] = field(default_factory=list)


class _Part:
    """A component as the engine needs it (what ``targets`` reads: kind, specs).

    The specs stay JSON text until a rule reads them: most components are matched on their kind alone,
    and decoding every component's JSON was most of the registry read on a large portfolio."""

    __slots__ = ("_specs", "_text", "kind", "pk", "position")

    def __init__(self, pk: int, kind: str, text: str | None, position: int) -> None:
        self.pk, self.kind, self._text, self.position, self._specs = pk, kind, text, position, None

    @property
    def specs(self) -> dict:
        if self._specs is None:
            self._specs = (json.loads(self._text) if self._text else None) or {}
        return self._specs


@dataclass(slots=True)
class _Unit:
    """An in-service AHU as the engine needs it."""

    pk: int
    tag: str
    site_id: int
    full_outdoor_air: bool
    anchor: dt.date
    parts: list[_Part] = field(default_factory=list)
    by_kind: dict[str, list[_Part]] = field(default_factory=dict)


@dataclass(slots=True)
class _Occ:
    unit: _Unit
    task: TaskDefinition
    ck: int  # component id, 0 for the unit itself
    due: dt.date
    key: str
    movable: bool
    clamped: bool = False  # the natural date was already past, so it is due today

    @property
    def ident(self) -> tuple:
        return (self.unit.pk, self.task.code, self.ck, self.key)


def add_months(day: dt.date, months: int) -> dt.date:
    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def add_interval(day: dt.date, value: int, unit: str, times: int = 1) -> dt.date:
    if unit == _MONTHS:
        return add_months(day, value * times)
    step = value * (7 if unit == _WEEKS else 1)
    return day + dt.timedelta(days=step * times)


def calendar_occurrences(*, anchor: dt.date, value: int, unit: str, start: dt.date, end: dt.date) -> list[dt.date]:
    """Dates anchor + k·interval (k ≥ 1) falling in [start, end]."""
    if unit == _MONTHS:
        months = (start.year - anchor.year) * 12 + start.month - anchor.month
        k = max(1, months // value - 1)
    else:
        step = value * (7 if unit == _WEEKS else 1)
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


@lru_cache(maxsize=20_000)
def _rate_per_day(readings: tuple[tuple[dt.datetime, float], ...]) -> float | None:
    """Robust run-hour rate (h/day) of the readings, None when none can be drawn.

    A pure function of the readings, kept across runs: a unit's recent readings
    rarely change between two nightly runs, and the Theil–Sen fit is the
    engine's costliest step per unit.
    """
    try:
        return run_hours_per_day(readings=list(readings)).slope
    except EngineeringInputError:
        return None


def _plain_rows(values_qs) -> list[tuple]:
    """The rows of a ``values_list`` query as the database driver returns them, without Django's per-value
    converters: on the meter history (over 100,000 readings on a large portfolio) making each reading's time
    aware one by one took half the read. Callers make datetimes aware and booleans ``bool`` themselves."""
    sql, params = values_qs.query.sql_with_params()
    with connections[values_qs.db].cursor() as cursor:
        cursor.execute(sql, params)
        return cursor.fetchall()


class _Meters:
    """Run-hour readings of the units, grouped per meter, since each meter's last reset."""

    def __init__(self, ahu_ids, now: dt.datetime):
        self.now = now
        self.by_meter: dict[tuple[int, int], list[tuple[dt.datetime, float, bool, int]]] = defaultdict(list)
        self._rates: dict[tuple[int, int], float | None] = {}
        # The times as text, parsed by datetime.fromisoformat (C): the driver's time-zone-aware loader is
        # Python, and over 100,000 readings it was a fifth of an idempotent run. Text keeps the exact
        # microseconds (a reading typed on the form has its inspection's finishing time, compared below).
        self.source: dict[tuple[int, int], str] = {}  # each meter's latest reading's source
        rows = (
            MeterReading.objects.filter(ahu_id__in=ahu_ids, taken_at__gte=now - dt.timedelta(days=METER_HISTORY_DAYS))
            .order_by("taken_at", "id")
            .annotate(taken_text=Cast("taken_at", TextField()))
            .values_list("ahu_id", "component_id", "taken_text", "hours", "is_reset", "id", "source")
        )
        parse = dt.datetime.fromisoformat
        for ahu_id, comp_id, taken_text, hours, is_reset, pk, source in _plain_rows(rows):
            taken_at = parse(taken_text)
            if taken_at.tzinfo is None:  # SQLite keeps naive UTC
                taken_at = taken_at.replace(tzinfo=dt.UTC)
            series = self.by_meter[(ahu_id, comp_id or 0)]
            if is_reset:
                series.clear()
            series.append((taken_at, hours, bool(is_reset), pk))
            self.source[(ahu_id, comp_id or 0)] = source

    def meter_for(self, unit: _Unit) -> tuple[int, int] | None:
        """The typed basis: the unit's own meter, else its (supply first) fan's."""
        if self.by_meter.get((unit.pk, 0)):
            return (unit.pk, 0)
        for fan in self._fans(unit):
            if self.by_meter.get((unit.pk, fan.pk)):
                return (unit.pk, fan.pk)
        return None

    @staticmethod
    def _fans(unit: _Unit) -> list:
        return sorted(unit.by_kind.get("fan", ()), key=lambda c: (c.specs.get("role") != "supply", c.pk))

    def trend_meter_for(self, unit: _Unit) -> tuple[int, int] | None:
        """The fan meter the building-automation trend feeds (supply fan first), while it is current: its latest
        reading came from the trend at most ``TREND_METER_CURRENT_DAYS`` ago."""
        since = self.now - dt.timedelta(days=TREND_METER_CURRENT_DAYS)
        for fan in self._fans(unit):
            meter = (unit.pk, fan.pk)
            series = self.by_meter.get(meter)
            if series and self.source.get(meter) == MeterReading.Source.BAS_TREND and series[-1][0] >= since:
                return meter
        return None

    def basis_for(self, unit: _Unit, *, last_done: dt.datetime | None) -> tuple[tuple[int, int] | None, str]:
        """(meter, why) a runtime task of ``unit`` last done at ``last_done`` is projected on.

        The trend-fed fan meter while it is current and reaches back to the task's last completion (a meter that
        began after the last service cannot count the hours since it); otherwise the typed basis
        (``meter_for``). ``why`` is '' for the typed basis and "trend" when the trend-fed meter replaced it."""
        typed = self.meter_for(unit)
        trend = self.trend_meter_for(unit)
        if trend is None or trend == typed:
            return typed, ""
        if typed is not None and last_done is not None and last_done < self.by_meter[trend][0][0]:
            return typed, ""
        return trend, "trend"

    def rate(self, meter) -> float | None:
        if meter not in self._rates:
            series = self.by_meter[meter]
            since = self.now - dt.timedelta(days=RATE_WINDOW_DAYS)
            recent = [r for r in series if r[0] >= since][-RATE_MAX_READINGS:]
            if len(recent) < 2:
                recent = series[-2:]
            self._rates[meter] = _rate_per_day(tuple((r[0], r[1]) for r in recent))
        return self._rates[meter]

    def projection(self, meter, *, run_hours: int, last_done: dt.datetime | None, tag: str = ""):
        """(key part, projected date-time when the next ``run_hours`` are reached) or None without a rate.

        ``tag`` names a basis other than the typed one in the key (``h:<reset>:<target>:fan<id>``), so the open
        occurrence is re-keyed, not duplicated, when the basis changes."""
        slope = self.rate(meter)
        if slope is None or slope <= 0:
            return None
        series = self.by_meter[meter]
        reset_id = series[0][3] if series[0][2] else 0
        if last_done is not None and last_done >= series[0][0]:
            before = [r for r in series if r[0] <= last_done]
            basis = (before[-1] if before else series[0])[1]
            target = basis + run_hours
        else:
            target = (int(series[-1][1] // run_hours) + 1) * run_hours
        last_at, last_hours = series[-1][0], series[-1][1]
        when = last_at + dt.timedelta(days=max(0.0, (target - last_hours) / slope))
        key = f"h:{reset_id}:{round(target)}"
        return (f"{key}:fan{meter[1]}" if tag else key), when


@dataclass(slots=True)
class _SiteDay:
    tz: zoneinfo.ZoneInfo
    today: dt.date
    end: dt.date
    seasons: dict[str, tuple[dt.date | None, str]]  # season -> (start, occurrence key)


class _Rules:
    """The organisation's generated tasks with what the loop needs of each, worked out once per run."""

    def __init__(self, tasks: list[TaskDefinition], skipped: list[str] | None = None):
        # A rule stored out of bounds (an interval of 1,000,000 months) is left out and named, not run.
        self.items = []
        for task in tasks:
            problem = task_problem(task)
            if problem is not None:
                if skipped is not None:
                    skipped.append(f"maintenance rule {problem}")
                continue
            self.items.append((task, TaskTargets(task)))
        self._grid: dict[tuple, list[dt.date]] = {}

    def grid(self, anchor: dt.date, task: TaskDefinition, start: dt.date, end: dt.date) -> list[dt.date]:
        key = (anchor, task.interval_value, task.interval_unit, start, end)
        days = self._grid.get(key)
        if days is None:
            days = self._grid[key] = calendar_occurrences(
                anchor=anchor, value=task.interval_value, unit=task.interval_unit, start=start, end=end
            )
        return days


def _occurrences(
    *,
    unit: _Unit,
    site: _SiteDay,
    rules: _Rules,
    disabled,
    last_done,
    meters,
    skipped: list[str],
    where: str = "",
    own_numbers: dict | None = None,
) -> list[_Occ]:
    """Every due occurrence of every (enabled) task on one unit within the site's horizon.

    A task whose dates cannot be worked out for this unit (date arithmetic past the calendar's end, from a
    row stored before the input policy) is left out and named in ``skipped``; the unit's other tasks stay.
    ``own_numbers`` ((unit id, code) -> numbers) are a unit's own interval, grace, lead time or run-hours,
    which hold for that unit instead of the organisation's (a unit's number out of bounds skips that rule)."""
    out: list[_Occ] = []
    meter = False  # not looked up yet
    for task, targets in rules.items:
        if (unit.pk, task.code) in disabled:
            continue
        numbers = (own_numbers or {}).get((unit.pk, task.code))
        if numbers:
            task = task_for_unit(task=task, numbers=numbers)
            problem = task_problem(task)
            if problem is not None:
                skipped.append(f"{where or unit.tag}, maintenance rule {problem} (this unit's own value)")
                continue
        try:
            found, meter = _task_occurrences(
                unit=unit,
                task=task,
                targets=targets,
                site=site,
                rules=rules,
                last_done=last_done,
                meters=meters,
                meter=meter,
            )
        except (OverflowError, ValueError) as exc:
            skipped.append(f"{where or unit.tag}, {task.name}: its next date cannot be worked out ({exc})")
            continue
        out.extend(found)
    return out


def _task_occurrences(*, unit: _Unit, task, targets, site: _SiteDay, rules: _Rules, last_done, meters, meter):
    """The due occurrences of one task on one unit, and the unit's meter (looked up once, on first need)."""
    out: list[_Occ] = []
    today, end = site.today, site.end
    comps = targets.components_grouped(ahu=unit, components_by_kind=unit.by_kind, order=lambda c: c.position)
    if not comps:
        return out, meter
    trigger = task.trigger
    if trigger == Trigger.INTERVAL:
        if task.anchor == TaskDefinition.Anchor.FLOATING:
            for comp in comps:
                ck = comp.pk if comp else 0
                done = last_done.get((unit.pk, task.code, ck))
                basis = _local(done, site.tz) if done else unit.anchor
                due = max(add_interval(basis, task.interval_value, task.interval_unit), today)
                if due <= end:
                    out.append(_Occ(unit, task, ck, due, f"after:{basis.isoformat()}", False))
        else:
            days = rules.grid(unit.anchor, task, today, end)
            for comp in comps:
                ck = comp.pk if comp else 0
                out.extend(_Occ(unit, task, ck, due, f"c:{due.isoformat()}", False) for due in days)
    elif trigger == Trigger.RUNTIME:
        for comp in comps:
            ck = comp.pk if comp else 0
            done = last_done.get((unit.pk, task.code, ck))
            basis, tag = meters.basis_for(unit, last_done=done)
            if basis is None:
                continue
            proj = meters.projection(basis, run_hours=task.run_hours, last_done=done, tag=tag)
            if proj is None:
                continue
            key, when = proj
            natural = _local(when, site.tz)
            if natural <= end:
                out.append(_Occ(unit, task, ck, max(natural, today), key, True, natural < today))
    elif trigger == Trigger.SEASON:
        start, key = site.seasons.get(task.season, (None, ""))
        if start is None or start < today - dt.timedelta(days=SEASON_LOOKBACK_DAYS):
            return out, meter
        natural = start - dt.timedelta(days=task.lead_days or 0)
        if natural <= end:
            due, clamped = max(natural, today), natural < today
            out.extend(_Occ(unit, task, comp.pk if comp else 0, due, key, True, clamped) for comp in comps)
    return out, meter


def _title(tasks: list[TaskDefinition]) -> str:
    return visit_title(t.name for t in tasks)


def _units(ahus_qs) -> tuple[list[_Unit], dict[int, Site]]:
    """Light rows of the in-service units and their components, plus the sites they are on (3 queries)."""
    rows = list(
        ahus_qs.values_list("pk", "tag", "building__site_id", "full_outdoor_air", "service_start", "created_at")
    )
    sites = {s.pk: s for s in Site.objects.filter(pk__in={r[2] for r in rows})}
    units: dict[int, _Unit] = {}
    zones: dict[int, zoneinfo.ZoneInfo] = {}
    for pk, tag, site_id, full_oa, service_start, created_at in rows:
        if site_id not in zones:
            zones[site_id] = zoneinfo.ZoneInfo(sites[site_id].time_zone)
        units[pk] = _Unit(pk, tag, site_id, full_oa, service_start or _local(created_at, zones[site_id]))
    parts = (
        Component.objects.filter(ahu_id__in=ahus_qs.values("pk"), retired_on__isnull=True)  # retired: no new work
        .order_by("ahu_id", "position", "id")
        .annotate(specs_text=Cast("specs", TextField()))
        .values_list("ahu_id", "pk", "kind", "specs_text")
    )
    for ahu_id, pk, kind, text in _plain_rows(parts):
        unit = units.get(ahu_id)
        if unit is None:
            continue
        part = _Part(pk, kind, text, len(unit.parts))
        unit.parts.append(part)
        unit.by_kind.setdefault(kind, []).append(part)
    return list(units.values()), sites


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
    ahus_qs = AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE).order_by("pk")
    if site is not None:
        ahus_qs = ahus_qs.filter(building__site=site)
    result = GenerationResult()
    if not tasks:
        return result
    units, sites = _units(ahus_qs)
    if not units:
        return result
    ahu_ids = ahus_qs.values("pk")
    disabled = set(UnitTaskSetting.objects.filter(ahu_id__in=ahu_ids, enabled=False).values_list("ahu_id", "task_code"))
    own_numbers = unit_rule_numbers(ahu_ids=ahu_ids)
    last_done = {
        (r["ahu_id"], r["task_code"], r["component_key"]): r["last"]
        for r in WorkOrderTask.objects.filter(ahu_id__in=ahu_ids, completed_at__isnull=False)
        .order_by()
        .values("ahu_id", "task_code", "component_key")
        .annotate(last=Max("completed_at"))
    }
    meters = _Meters(ahu_ids, now)
    zones = {pk: zoneinfo.ZoneInfo(s.time_zone) for pk, s in sites.items()}
    local_today = {pk: today or today_for(s, now=now) for pk, s in sites.items()}
    starts = season_starts_for_sites(sites=sites.values(), today_by_site=local_today)
    days: dict[int, _SiteDay] = {}
    for pk, s in sites.items():
        day = local_today[pk]
        freeze, cooling, _ = starts[pk]
        days[pk] = _SiteDay(
            tz=zones[pk],
            today=day,
            end=day + dt.timedelta(days=horizon_days),
            seasons={
                season: (start, season_key(season=season, start=start, latitude=s.latitude) if start else "")
                for season, start in ((TaskDefinition.Season.FREEZE, freeze), (TaskDefinition.Season.COOLING, cooling))
            },
        )

    rules = _Rules(tasks, result.skipped)
    wanted: list[_Occ] = []
    for unit in units:
        site_day = days[unit.site_id]
        where = f"{unit.tag} at {sites[unit.site_id].name}"
        problem = unit_problem(service_start=unit.anchor, today=site_day.today)
        if problem is not None:
            result.skipped.append(f"{where}: {problem}")
            continue
        wanted.extend(
            _occurrences(
                unit=unit,
                site=site_day,
                rules=rules,
                disabled=disabled,
                last_done=last_done,
                meters=meters,
                skipped=result.skipped,
                where=where,
                own_numbers=own_numbers,
            )
        )

    # Stored occurrences a run could want again: every open one; of the completed ones, calendar keys only
    # from the earliest site's today on (a calendar key is its due date, and none earlier is wanted), the
    # others (seasons, run-hours, floating) over the meter history.
    first_day = min(d.today for d in days.values())
    # Unordered: the model's ordering would join every task to its work order and sort them all.
    stored = (
        WorkOrderTask.objects.filter(ahu_id__in=ahu_ids)
        .filter(
            Q(completed_at__isnull=True)
            | Q(due_date__gte=first_day)
            | (Q(due_date__gte=first_day - dt.timedelta(days=METER_HISTORY_DAYS)) & ~Q(occurrence_key__startswith="c:"))
        )
        .order_by()
    )
    # Calendar and floating keys never move, so of those only the key itself is read (most of the rows, as
    # plain tuples); the projected ones (run-hours, seasons) also bring their row, date and visit.
    fixed_keys = Q(occurrence_key__startswith="c:") | Q(occurrence_key__startswith="after:")
    fixed = set(stored.filter(fixed_keys).values_list("ahu_id", "task_code", "component_key", "occurrence_key"))
    projected = {}
    # The open run-hour occurrence of each (unit, task, part) by the basis it was projected on (key's tag).
    open_runtime: dict[tuple, dict[str, tuple]] = defaultdict(dict)
    for pk, ahu_id, code, ck, key, due, wo_id, done_at in stored.exclude(fixed_keys).values_list(
        "id", "ahu_id", "task_code", "component_key", "occurrence_key", "due_date", "work_order_id", "completed_at"
    ):
        projected[(ahu_id, code, ck, key)] = (pk, due, wo_id)
        if done_at is None and key.startswith("h:"):
            open_runtime[(ahu_id, code, ck)][_basis_tag(key)] = (pk, due, wo_id)

    new: list[_Occ] = []
    candidates: list[tuple[int, dt.date, int, tuple]] = []
    for occ in wanted:
        if not occ.movable:
            if occ.ident in fixed:
                result.unchanged += 1
            else:
                new.append(occ)
            continue
        found = projected.get(occ.ident)
        if found is None and occ.key.startswith("h:"):
            # The run-hour basis changed (the trend-fed meter took over, or its trend stopped): the open occurrence
            # projected on the other basis moves to this one's key and date rather than being duplicated.
            other = {t: f for t, f in open_runtime.get(occ.ident[:3], {}).items() if t != _basis_tag(occ.key)}
            if other:
                pk, due, wo_id = min(other.values(), key=lambda f: f[1])
                candidates.append((pk, occ.due, wo_id, occ.ident))
                continue
        if found is None:
            new.append(occ)
        elif found[1] != occ.due and not (occ.clamped and found[1] <= occ.due):  # already due: later today no move
            candidates.append((found[0], occ.due, found[2], occ.ident))
        else:
            result.unchanged += 1
    # Only a visit nobody has started moves; its state is read for the few candidates alone.
    movable = set(
        WorkOrder.objects.filter(pk__in={c[2] for c in candidates}, state__in=MOVABLE_STATES).values_list(
            "pk", flat=True
        )
        if candidates
        else ()
    )
    moves = [c for c in candidates if c[2] in movable]
    result.unchanged += len(candidates) - len(moves)
    result.moved = len(moves)
    result.created = len(new)
    if dry_run:
        result.lines = [f"would create {o.task.code} on {o.unit.tag} due {o.due}" for o in new]
        return result
    if not new and not moves:
        return result

    with transaction.atomic():
        audit: list[AuditEvent] = []
        _write_new(
            organisation=organisation, new=new, ahu_ids=ahu_ids, bundle_days=bundle_days, result=result, audit=audit
        )
        if moves:
            _write_moves(moves, organisation=organisation, audit=audit)
        AuditEvent.objects.bulk_create(audit, batch_size=1000)
        organisation_changed(organisation_id=organisation.pk)
    return result


def _occurrence_ref(ident: tuple) -> list:
    """An occurrence as the audit trail names it: [task code, component id (0: the unit), occurrence key]."""
    return [ident[1], ident[2], ident[3]]


def _audit_row(*, organisation, wo_id: int, action: str, changes: dict) -> AuditEvent:
    # audit_record writes one row per call; the engine writes thousands at once, so the same row is built here
    # and inserted in bulk (actor None: the engine, not a person).
    return AuditEvent(
        actor=None,
        organisation=organisation,
        object_type=_WO_LABEL,
        object_id=str(wo_id),
        action=action,
        changes=changes,
    )


def _write_new(
    *, organisation, new: list[_Occ], ahu_ids, bundle_days: int, result: GenerationResult, audit: list
) -> None:
    """Bundle per unit: attach to an open visit within the window, else start a new visit; insert in bulk."""
    if not new:
        return
    open_visits: dict[int, list[list]] = defaultdict(list)  # ahu -> [[wo or wo_id, due, occurrences or None]]
    for wo_id, ahu_id, due in WorkOrder.objects.filter(
        ahu_id__in=ahu_ids, kind=WorkOrder.Kind.PREVENTIVE, state__in=MOVABLE_STATES
    ).values_list("id", "ahu_id", "due_date"):
        open_visits[ahu_id].append([wo_id, due, None])
    new.sort(key=lambda o: (o.unit.pk, o.due, o.task.code))
    fresh: list[tuple[WorkOrder, list[_Occ]]] = []
    attach: list[tuple[int, _Occ]] = []
    for occ in new:
        visits = open_visits[occ.unit.pk]
        home = next((v for v in visits if abs((v[1] - occ.due).days) <= bundle_days), None)
        if home is None:
            wo = WorkOrder(
                organisation=organisation,
                ahu_id=occ.unit.pk,
                kind=WorkOrder.Kind.PREVENTIVE,
                due_date=occ.due,
                title="",
                overdue_on=overdue_day(occ.due, occ.task.grace_days),
            )
            occs = [occ]
            fresh.append((wo, occs))
            visits.append([wo, occ.due, occs])
        elif home[2] is not None:
            home[2].append(occ)
        else:
            attach.append((home[0], occ))
    for wo, occs in fresh:
        wo.title = _title([o.task for o in occs])
        wo.due_date = min(o.due for o in occs)
        wo.overdue_on = min(overdue_day(o.due, o.task.grace_days) for o in occs)
    WorkOrder.objects.bulk_create([wo for wo, _ in fresh], batch_size=1000)

    def row(wo_id: int, o: _Occ) -> WorkOrderTask:
        return WorkOrderTask(
            work_order_id=wo_id,
            task_id=o.task.pk,
            task_code=o.task.code,
            ahu_id=o.unit.pk,
            component_id=o.ck or None,
            component_key=o.ck,
            due_date=o.due,
            occurrence_key=o.key,
        )

    rows = [row(wo.pk, o) for wo, occs in fresh for o in occs]
    rows += [row(wo_id, o) for wo_id, o in attach]
    WorkOrderTask.objects.bulk_create(rows, ignore_conflicts=True, batch_size=2000)
    fresh_ids = [wo.pk for wo, _ in fresh]
    empty: set[int] = set()
    if fresh_ids:
        # A concurrent run may have created some occurrences first; its rows won, so drop empty visits.
        empty = set(WorkOrder.objects.filter(pk__in=fresh_ids, tasks__isnull=True).values_list("pk", flat=True))
        if empty:
            lost = sum(len(occs) for wo, occs in fresh if wo.pk in empty)
            WorkOrder.objects.filter(pk__in=empty).delete()
            result.created -= lost
            result.unchanged += lost
        result.work_orders_created = len(fresh_ids) - len(empty)
    audit.extend(
        _audit_row(
            organisation=organisation,
            wo_id=wo.pk,
            action="generated",
            changes={"due_date": wo.due_date.isoformat(), "occurrences": [_occurrence_ref(o.ident) for o in occs]},
        )
        for wo, occs in fresh
        if wo.pk not in empty
    )
    if attach:
        _join_visits(attach, organisation=organisation, audit=audit)


def _join_visits(attach: list[tuple[int, _Occ]], *, organisation, audit: list) -> None:
    """Visits that new occurrences joined follow their tasks: earliest due date, earliest overdue day, title.

    Read back from the stored tasks, so a visit whose joined rows a concurrent run had already written
    ends up the same, and one that is already right is not touched (no version bump, no audit).
    """
    joined: dict[int, list[_Occ]] = defaultdict(list)
    for wo_id, occ in attach:
        joined[wo_id].append(occ)
    stored: dict[int, list[tuple[str, dt.date]]] = defaultdict(list)
    for wo_id, name, due in WorkOrderTask.objects.filter(work_order_id__in=joined).values_list(
        "work_order_id", "task__name", "due_date"
    ):
        stored[wo_id].append((name, due))
    now = timezone.now()
    changed = []
    for wo in WorkOrder.objects.filter(pk__in=joined).only("id", "due_date", "overdue_on", "title", "version"):
        occs = joined[wo.pk]
        tasks = stored.get(wo.pk) or []
        title = visit_title(name for name, _ in tasks)
        due = min((d for _, d in tasks), default=wo.due_date)
        joined_overdue = min(overdue_day(o.due, o.task.grace_days) for o in occs)
        overdue_on = min(wo.overdue_on, joined_overdue) if wo.overdue_on else joined_overdue
        before = {"due_date": wo.due_date, "overdue_on": wo.overdue_on, "title": wo.title}
        after = {"due_date": due, "overdue_on": overdue_on, "title": title}
        if before == after:
            continue
        wo.due_date, wo.overdue_on, wo.title = due, overdue_on, title
        wo.version += 1
        wo.updated_at = now
        changed.append(wo)
        audit.append(
            _audit_row(
                organisation=organisation,
                wo_id=wo.pk,
                action="generated",
                changes={
                    "joined": True,
                    "from": {k: str(v) if isinstance(v, dt.date) else v for k, v in before.items()},
                    "to": {k: str(v) if isinstance(v, dt.date) else v for k, v in after.items()},
                    "occurrences": [_occurrence_ref(o.ident) for o in occs],
                },
            )
        )
    WorkOrder.objects.bulk_update(changed, ["due_date", "overdue_on", "title", "version", "updated_at"])


def _basis_tag(key: str) -> str:
    """The run-hour basis an ``h:`` key was projected on: '' (the typed basis) or 'fan<id>' (a trend-fed meter)."""
    parts = key.split(":")
    return parts[3] if len(parts) > 3 else ""


def _write_moves(moves: list[tuple[int, dt.date, int, tuple]], *, organisation, audit: list) -> None:
    """Move projected occurrences to their new dates (and keys, when a run-hour basis changed); each touched
    visit follows its first task."""
    task_rows = [WorkOrderTask(pk=pk, due_date=due, occurrence_key=ident[3]) for pk, due, _, ident in moves]
    WorkOrderTask.objects.bulk_update(task_rows, ["due_date", "occurrence_key"], batch_size=1000)
    moved: dict[int, list] = defaultdict(list)
    for _, due, wo_id, ident in moves:
        moved[wo_id].append([*_occurrence_ref(ident), due.isoformat()])
    firsts = {}
    for wo_id, due in WorkOrderTask.objects.filter(work_order_id__in=moved).values_list("work_order_id", "due_date"):
        firsts[wo_id] = min(due, firsts.get(wo_id, due))
    orders = list(WorkOrder.objects.filter(pk__in=moved).only("id", "due_date", "overdue_on", "version"))
    now = timezone.now()
    for wo in orders:
        shift = firsts[wo.pk] - wo.due_date
        before = wo.due_date
        wo.due_date = firsts[wo.pk]
        wo.overdue_on = (wo.overdue_on or wo.due_date) + shift
        wo.version += 1
        wo.updated_at = now
        audit.append(
            _audit_row(
                organisation=organisation,
                wo_id=wo.pk,
                action="moved",
                changes={
                    "from": before.isoformat(),
                    "to": wo.due_date.isoformat(),
                    # [task code, component id, occurrence key, its new due date]
                    "occurrences": moved[wo.pk],
                },
            )
        )
    WorkOrder.objects.bulk_update(orders, ["due_date", "overdue_on", "version", "updated_at"], batch_size=1000)
