"""Demo schedule: the library and generated work for the demo organisation, and the demo's round of the day."""

from __future__ import annotations

import datetime as dt

from django.db import transaction

from inventory.today import today_for

from .engine import GenerationResult, work_orders_generate
from .models import WorkOrder, WorkOrderTask, overdue_day
from .selectors import effective_tasks
from .services import site_seasons_refresh, task_library_install
from .task_rows import tasks_on_parts, work_order_task_rows
from .titles import visit_title

# What marks the demo's round visit (source_ref), so a rerun finds it instead of making another.
ROUND_REF = "demo:round"


def demo_schedule_load(*, organisation, today: dt.date | None = None) -> GenerationResult:
    """Install the shipped library, refresh every site's seasons from its normals, and generate (idempotent).
    ``today`` by default the organisation's (``inventory.today``)."""
    today = today or today_for(organisation)
    task_library_install()
    for site in organisation.sites.all():
        site_seasons_refresh(site=site, today=today, fetch=False)
    return work_orders_generate(organisation=organisation, today=today)


@transaction.atomic
def demo_round_visit(*, ahu, codes: list[str], due: dt.date) -> tuple[WorkOrder, bool]:
    """The unit's open demo round visit carrying the library tasks ``codes``, or a new planned one due ``due``.

    The tasks are the organisation's own (library rows overridden by its rows), on the parts the engine
    would pick (``task_targets``), so the checklist is the one a generated visit would have. Returns
    (work order, created?). Assigning and scheduling it is left to the work-order services.
    """
    existing = (
        WorkOrder.objects.filter(ahu=ahu, source_ref=ROUND_REF, state__in=WorkOrder.OPEN_STATES).order_by("-id").first()
    )
    organisation = ahu.building.site.organisation
    tasks = effective_tasks(organisation=organisation)
    if existing is not None:
        # A visit made before the round asked more (an older demo) gets the missing tasks while not started.
        held = set(existing.tasks.values_list("task_code", flat=True))
        missing = [tasks[c] for c in codes if c in tasks and c not in held]
        if missing and existing.state in (WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED):
            _round_tasks_add(work_order=existing, chosen=missing, due=existing.due_date)
            existing.version += 1  # its checklist changed: a phone holding the old one hears of it
            existing.save(update_fields=["version", "updated_at"])
        return existing, False
    chosen = [tasks[c] for c in codes if c in tasks]
    wo = WorkOrder(
        organisation=organisation,
        ahu=ahu,
        kind=WorkOrder.Kind.PREVENTIVE,
        title=visit_title(t.name for t in chosen),  # as the engine titles a preventive visit
        due_date=due,
        overdue_on=overdue_day(due, min((t.grace_days for t in chosen), default=0)),
        source_ref=ROUND_REF,
    )
    wo.full_clean()
    wo.save()
    _round_tasks_add(work_order=wo, chosen=chosen, due=due)
    return wo, True


def _round_tasks_add(*, work_order: WorkOrder, chosen: list, due: dt.date) -> None:
    """The tasks ``chosen`` on the round visit, on the parts the engine would pick."""
    ahu = work_order.ahu
    rows = work_order_task_rows(
        work_order=work_order,
        tasks_on=tasks_on_parts(tasks=chosen, ahu=ahu, components=ahu.components.all()),
        due=due,
        occurrence_key=f"round:{work_order.public_id.hex[:12]}",  # not "demo:", the history's own prefix
    )
    WorkOrderTask.objects.bulk_create(rows)


@transaction.atomic
def demo_round_visit_due(*, work_order: WorkOrder, due: dt.date) -> WorkOrder:
    """The demo round visit due on ``due`` (it and its tasks), its overdue day moved with it by the same grace."""
    grace = (work_order.overdue_on - work_order.due_date).days if work_order.overdue_on else 0
    work_order.tasks.update(due_date=due)
    WorkOrder.objects.filter(pk=work_order.pk).update(
        due_date=due, overdue_on=due + dt.timedelta(days=grace), version=work_order.version + 1
    )
    work_order.refresh_from_db()
    return work_order
