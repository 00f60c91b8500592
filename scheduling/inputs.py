"""The input policy (accounts.inputs) applied to scheduling: task bounds, and what stored rows break it.

``task_problems`` is the check every way of changing a task passes (library install, override, an
organisation's own task, the admin); the engine reads the same function to skip a rule already stored
out of bounds. ``unit_problem`` and ``stored_problems`` name the units, rules and visits a job skips,
so generation, the calendar feed and the board say the same thing about the same row.
"""

from __future__ import annotations

import datetime as dt

from django.db.models import Q

from accounts.inputs import date_problem, date_window, equipment_date_problem, equipment_date_window

from .models import TaskDefinition, WorkOrder

# A repeating task comes round at least every ten years (common practice: no maintenance interval in the
# shipped library or in the manufacturers' manuals we know is longer; ``1,000,000 months`` is a typo).
INTERVAL_MAX = {
    TaskDefinition.IntervalUnit.DAYS: 3653,
    TaskDefinition.IntervalUnit.WEEKS: 521,
    TaskDefinition.IntervalUnit.MONTHS: 120,
}
GRACE_DAYS_MAX = 365
LEAD_DAYS_MAX = 180
# Ten years of a fan running day and night: 87,660 h (common practice: no run-hour task is rarer).
RUN_HOURS_MAX = 87_660
ESTIMATED_MINUTES_MAX = 24 * 60

_BOUNDS = (
    ("grace_days", "Grace days", 0, GRACE_DAYS_MAX, "days"),
    ("lead_days", "Lead time before the season", 0, LEAD_DAYS_MAX, "days"),
    ("run_hours", "Run hours between tasks", 1, RUN_HOURS_MAX, "h"),
    ("estimated_minutes", "Estimated time", 1, ESTIMATED_MINUTES_MAX, "minutes"),
)


def _whole(value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def task_problems(task: TaskDefinition) -> dict[str, str]:
    """Field → message for every number of the task outside what is allowed (empty when all are in bounds)."""
    out: dict[str, str] = {}
    value, unit = task.interval_value, task.interval_unit
    if value is not None:
        most = INTERVAL_MAX.get(unit)
        if not _whole(value) or value < 1 or (most is not None and value > most):
            limit = f"1 to {most} {unit} (ten years)" if most else "a whole number ≥ 1"
            out["interval_value"] = f"Interval: {value} {unit} is out of range; allowed: {limit}"
    for name, label, lo, hi, unit_text in _BOUNDS:
        value = getattr(task, name)
        if value is None:
            continue
        if not _whole(value) or not lo <= value <= hi:
            out[name] = f"{label}: {value} {unit_text} is out of range; allowed: a whole number from {lo} to {hi}"
    return out


def task_problem(task: TaskDefinition) -> str | None:
    """One line naming the rule and what is wrong with it, or None (what a job says when it skips the rule)."""
    problems = task_problems(task)
    return f"{task.name}: {'; '.join(problems.values())}" if problems else None


def unit_problem(*, service_start: dt.date | None, today: dt.date) -> str | None:
    return equipment_date_problem(service_start, label="service start", today=today, planned=True)


def visit_problem(wo: WorkOrder, *, today: dt.date) -> str | None:
    """A visit whose planned day or due date is outside the plan window (old rows; new ones are refused)."""
    return date_problem(wo.scheduled_for, label="planned for", today=today) or date_problem(
        wo.due_date, label="due", today=today
    )


def visits_outside_window(*, today: dt.date) -> Q:
    """Work orders planned or due outside the plan window: the rows ``visit_problem`` names (a filter)."""
    earliest, latest = date_window(today=today)
    return (
        Q(scheduled_for__lt=earliest) | Q(scheduled_for__gt=latest) | Q(due_date__lt=earliest) | Q(due_date__gt=latest)
    )


def stored_problems(*, organisation, today: dt.date) -> list[str]:
    """What the jobs skip for this organisation, one line each: 'AHU-03 at Site X: service start 9999-12-31
    is out of range; allowed: 2000-01-01 to …'. Read by the board page; the same checks as the engine and the
    calendar feed."""
    from inventory.models import AHU

    from .selectors import effective_tasks

    earliest, latest = equipment_date_window(today=today, planned=True)
    lines: list[str] = []
    units = (
        AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE)
        .exclude(service_start__isnull=True)
        .exclude(service_start__gte=earliest, service_start__lte=latest)
        .select_related("building__site")
        .order_by("building__site__name", "tag")
    )
    for ahu in units:
        problem = unit_problem(service_start=ahu.service_start, today=today)
        lines.append(f"{ahu.tag} at {ahu.building.site.name}: {problem}")
    for task in effective_tasks(organisation=organisation).values():
        problem = task_problem(task)
        if problem:
            lines.append(f"maintenance rule {problem}")
    visits = (
        WorkOrder.objects.filter(organisation=organisation, state__in=WorkOrder.OPEN_STATES)
        .filter(visits_outside_window(today=today))
        .select_related("ahu__building__site")
        .order_by("due_date", "id")
    )
    for wo in visits:
        lines.append(f"{wo.ahu.tag} at {wo.ahu.building.site.name}, {wo.title}: {visit_problem(wo, today=today)}")
    return lines
