"""1. Work-order generation, first and idempotent second run, vs one bulk insert of the same rows; and
the technicians' day of open work the load scenarios read."""

from __future__ import annotations

from django.db import transaction

from ..generate import OrgSummary, Portfolio
from .common import NotRun, engine_caches_clear, max_id, median, timed


def work_order_generation(*, portfolio: Portfolio, runs: int) -> dict:
    from accounts.models import AuditEvent, Organisation
    from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask

    try:
        from scheduling.engine import work_orders_generate
    except ImportError as exc:
        raise NotRun(f"scheduling.engine.work_orders_generate is missing ({exc})") from exc

    org = Organisation.objects.get(pk=portfolio.main.organisation_id)
    task = TaskDefinition.objects.filter(organisation__isnull=True).order_by("pk").first()
    ahu_id = portfolio.main.ahu_ids[0]
    firsts, seconds, baselines, rows = [], [], [], {}
    second_created = []
    for run in range(runs):
        marks = (max_id(WorkOrder), max_id(WorkOrderTask), max_id(AuditEvent))
        engine_caches_clear()  # every repetition's first run starts cold, as a fresh worker process does
        t_first, _ = timed(lambda: work_orders_generate(organisation=org, today=portfolio.today))
        n_wo = WorkOrder.objects.filter(pk__gt=marks[0]).count()
        n_task = WorkOrderTask.objects.filter(pk__gt=marks[1]).count()
        before_second = (WorkOrder.objects.count(), WorkOrderTask.objects.count())
        t_second, _ = timed(lambda: work_orders_generate(organisation=org, today=portfolio.today))
        after_second = (WorkOrder.objects.count(), WorkOrderTask.objects.count())
        second_created.append(sum(after_second) - sum(before_second))
        rows = {"work_orders": n_wo, "work_order_tasks": n_task}
        if not n_wo:
            raise NotRun("the first generation run created no work orders, so there is nothing to compare")

        def baseline(n_wo=n_wo, n_task=n_task, run=run) -> None:
            with transaction.atomic():
                wos = WorkOrder.objects.bulk_create(
                    [
                        WorkOrder(organisation=org, ahu_id=ahu_id, title="baseline row", due_date=portfolio.today)
                        for _ in range(n_wo)
                    ],
                    batch_size=2000,
                )
                WorkOrderTask.objects.bulk_create(
                    [
                        WorkOrderTask(
                            work_order=wos[i % len(wos)],
                            task=task,
                            task_code=task.code,
                            ahu_id=ahu_id,
                            due_date=portfolio.today,
                            occurrence_key=f"base-{run}-{i}",
                        )
                        for i in range(n_task)
                    ],
                    batch_size=2000,
                )

        t_base, _ = timed(baseline)
        firsts.append(t_first)
        seconds.append(t_second)
        baselines.append(t_base)
        # Back to the state before this run (the last run's work orders stay, for the load scenarios).
        with transaction.atomic():
            base_qs = WorkOrder.objects.filter(pk__gt=marks[0], title="baseline row")
            WorkOrderTask.objects.filter(work_order__in=base_qs).delete()
            base_qs.delete()
            if run < runs - 1:
                WorkOrderTask.objects.filter(pk__gt=marks[1]).delete()
                WorkOrder.objects.filter(pk__gt=marks[0]).delete()
                AuditEvent.objects.filter(pk__gt=marks[2]).delete()
    first, second, base = median(firsts), median(seconds), median(baselines)
    return {
        "rows": rows,
        "first_s": first,
        "second_s": second,
        "baseline_s": base,
        "first_over_baseline": round(first / base, 2) if base else None,
        "second_over_first": round(second / first, 3) if first else None,
        "second_run_created": max(second_created) if second_created else None,
        "targets": {
            "first_over_baseline <= 3": bool(base and first / base <= 3),
            "second_over_first < 0.2": bool(first and second / first < 0.2),
            "second run creates nothing": max(second_created or [1]) == 0,
        },
    }


def today_work_assign(*, portfolio: Portfolio, per_technician: int = 8, org: OrgSummary | None = None) -> int:
    """Give each technician of ``org`` (default: the main organisation) ``per_technician`` open work orders
    scheduled for today (bench setup, not timed)."""
    from accounts.models import User
    from scheduling.models import WorkOrder

    org = org or portfolio.main
    techs = list(User.objects.filter(username__in=org.technicians).order_by("username"))
    planned = list(
        WorkOrder.objects.filter(
            organisation_id=org.organisation_id,
            kind=WorkOrder.Kind.PREVENTIVE,
            state=WorkOrder.State.PLANNED,
            assignee__isnull=True,
        )
        .order_by("due_date", "pk")
        .values_list("pk", flat=True)
    )
    # Every third planned visit from the earliest goes to a technician for today, so the board still shows
    # unassigned work due this week beside the assigned.
    open_ids = planned[::3][: per_technician * len(techs)]
    for i, tech in enumerate(techs):
        chunk = open_ids[i * per_technician : (i + 1) * per_technician]
        WorkOrder.objects.filter(pk__in=chunk).update(
            assignee=tech, state=WorkOrder.State.ASSIGNED, scheduled_for=portfolio.today
        )
    # A further tenth of the rest assigned but not for today, as a board would show.
    taken = set(open_ids)
    rest = [pk for pk in planned if pk not in taken][1::10]
    for i, tech in enumerate(techs):
        WorkOrder.objects.filter(pk__in=rest[i :: len(techs)]).update(assignee=tech, state=WorkOrder.State.ASSIGNED)
    return len(open_ids)
