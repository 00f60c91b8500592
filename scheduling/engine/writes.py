"""The due-date engine's writes: new occurrences bundled into visits, visits joined, moved occurrences, each in bulk
with its audit rows.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict

from django.utils import timezone

from accounts.models import AuditEvent

from ..models import TaskDefinition, WorkOrder, WorkOrderTask, overdue_day
from ..titles import visit_title
from .rows import MOVABLE_STATES, GenerationResult, Occ

_WO_LABEL = WorkOrder._meta.label_lower


def _title(tasks: list[TaskDefinition]) -> str:
    return visit_title(t.name for t in tasks)


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


def write_new(
    *, organisation, new: list[Occ], ahu_ids, bundle_days: int, result: GenerationResult, audit: list
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
    fresh: list[tuple[WorkOrder, list[Occ]]] = []
    attach: list[tuple[int, Occ]] = []
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

    def row(wo_id: int, o: Occ) -> WorkOrderTask:
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


def _join_visits(attach: list[tuple[int, Occ]], *, organisation, audit: list) -> None:
    """Visits that new occurrences joined follow their tasks: earliest due date, earliest overdue day, title.

    Read back from the stored tasks, so a visit whose joined rows a concurrent run had already written
    ends up the same, and one that is already right is not touched (no version bump, no audit).
    """
    joined: dict[int, list[Occ]] = defaultdict(list)
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


def basis_tag(key: str) -> str:
    """The run-hour basis an ``h:`` key was projected on: '' (the typed basis) or 'fan<id>' (a trend-fed meter)."""
    parts = key.split(":")
    return parts[3] if len(parts) > 3 else ""


def write_moves(moves: list[tuple[int, dt.date, int, tuple]], *, organisation, audit: list) -> None:
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
