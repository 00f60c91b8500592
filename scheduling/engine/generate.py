"""``work_orders_generate``: rules × units → work orders for a horizon, read in a fixed number of queries, written in
bulk.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict

from django.db import transaction
from django.db.models import Max, Q
from django.utils import timezone

from accounts.changes import organisation_changed
from accounts.models import AuditEvent
from inventory.models import AHU
from inventory.today import today_for

from ..inputs import unit_problem
from ..models import TaskDefinition, UnitTaskSetting, WorkOrder, WorkOrderTask
from ..selectors import effective_tasks, unit_rule_numbers
from ..services.seasons import season_key, season_starts_for_sites
from .meters import METER_HISTORY_DAYS, Meters
from .occurrences import Rules, SiteDay, unit_occurrences
from .rows import MOVABLE_STATES, GenerationResult, Occ, Trigger, unit_rows
from .writes import basis_tag, write_moves, write_new

BUNDLE_DAYS = 14


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
    units, sites = unit_rows(ahus_qs)
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
    meters = Meters(ahu_ids, now)
    zones = {pk: zoneinfo.ZoneInfo(s.time_zone) for pk, s in sites.items()}
    local_today = {pk: today or today_for(s, now=now) for pk, s in sites.items()}
    starts = season_starts_for_sites(sites=sites.values(), today_by_site=local_today)
    days: dict[int, SiteDay] = {}
    for pk, s in sites.items():
        day = local_today[pk]
        freeze, cooling, _ = starts[pk]
        days[pk] = SiteDay(
            tz=zones[pk],
            today=day,
            end=day + dt.timedelta(days=horizon_days),
            seasons={
                season: (start, season_key(season=season, start=start, latitude=s.latitude) if start else "")
                for season, start in ((TaskDefinition.Season.FREEZE, freeze), (TaskDefinition.Season.COOLING, cooling))
            },
        )

    rules = Rules(tasks, result.skipped)
    wanted: list[Occ] = []
    for unit in units:
        site_day = days[unit.site_id]
        where = f"{unit.tag} at {sites[unit.site_id].name}"
        problem = unit_problem(service_start=unit.anchor, today=site_day.today)
        if problem is not None:
            result.skipped.append(f"{where}: {problem}")
            continue
        wanted.extend(
            unit_occurrences(
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
            open_runtime[(ahu_id, code, ck)][basis_tag(key)] = (pk, due, wo_id)

    new: list[Occ] = []
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
            other = {t: f for t, f in open_runtime.get(occ.ident[:3], {}).items() if t != basis_tag(occ.key)}
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
        write_new(
            organisation=organisation, new=new, ahu_ids=ahu_ids, bundle_days=bundle_days, result=result, audit=audit
        )
        if moves:
            write_moves(moves, organisation=organisation, audit=audit)
        AuditEvent.objects.bulk_create(audit, batch_size=1000)
        organisation_changed(organisation_id=organisation.pk)
    return result
