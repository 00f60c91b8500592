"""A unit's rules: the organisation's tasks with its own settings, each unit's own numbers for them."""

from __future__ import annotations

import copy

from django.db.models import Q

from ..models import TaskDefinition, UnitTaskSetting


def effective_tasks(*, organisation, include_disabled: bool = False) -> dict[str, TaskDefinition]:
    """The organisation's task set: library rows, overridden by its own rows of the same code, plus its own tasks."""
    # A task written for one work order only (a call-out's "reset the frost thermostat") is not part of the set.
    rows = TaskDefinition.objects.filter(Q(organisation__isnull=True) | Q(organisation=organisation)).exclude(
        code__startswith="once-"
    )
    out: dict[str, TaskDefinition] = {}
    for task in sorted(rows, key=lambda t: t.organisation_id is not None):
        out[task.code] = task
    if not include_disabled:
        out = {code: t for code, t in out.items() if t.enabled}
    return out


def unit_rule_numbers(*, ahu_ids) -> dict[tuple[int, str], dict]:
    """(unit id, task code) -> the numbers a unit has of its own for that rule (only the filled ones)."""
    fields = UnitTaskSetting.RULE_FIELDS
    has_any = Q(interval_value__isnull=False) | ~Q(interval_unit="") | Q(grace_days__isnull=False)
    has_any |= Q(lead_days__isnull=False) | Q(run_hours__isnull=False)
    out: dict[tuple[int, str], dict] = {}
    for row in (
        UnitTaskSetting.objects.filter(ahu_id__in=ahu_ids).filter(has_any).values("ahu_id", "task_code", *fields)
    ):
        numbers = {k: row[k] for k in fields if row[k] not in (None, "")}
        if numbers:
            out[(row["ahu_id"], row["task_code"])] = numbers
    return out


def task_for_unit(*, task: TaskDefinition, numbers: dict | None) -> TaskDefinition:
    """The rule as it holds on one unit: the organisation's ``task`` with the unit's own ``numbers`` over it.

    A copy (same id and code, so the work it makes points to the same rule); ``task`` itself is unchanged."""
    if not numbers:
        return task
    own = copy.copy(task)
    for name, value in numbers.items():
        setattr(own, name, value)
    return own
