"""A work order's task rows, the one way they are built outside the engine's bulk run: one row per task and per part
it is done on, the parts as the engine picks them (``scheduling.targets.task_targets``), all due on one day."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterable

from inventory.models import AHU, Component

from .models import TaskDefinition, WorkOrder, WorkOrderTask
from .targets import task_targets

# A task and the part it is done on (None: the unit as a whole).
TaskOnPart = tuple[TaskDefinition, Component | None]


def tasks_on_parts(*, tasks: Iterable[TaskDefinition], ahu: AHU, components: Iterable[Component]) -> list[TaskOnPart]:
    """Each task on each of ``components`` (the unit's parts, as loaded) it is done on; a unit-level task once, on
    the unit; a task done on none of them not at all."""
    parts = list(components)
    return [(task, target) for task in tasks for target in task_targets(task=task, ahu=ahu, components=parts)]


def work_order_task_rows(
    *,
    work_order: WorkOrder,
    tasks_on: Iterable[TaskOnPart],
    due: dt.date,
    occurrence_key: str | Callable[[TaskDefinition], str],
) -> list[WorkOrderTask]:
    """The unsaved rows of ``work_order`` for each (task, part) of ``tasks_on``, due on ``due``, each with
    ``occurrence_key`` (a key, or a function of the task giving its key); the caller saves them in one insert."""
    ahu = work_order.ahu
    return [
        WorkOrderTask(
            work_order=work_order,
            task=task,
            task_code=task.code,
            ahu=ahu,
            component=target,
            component_key=target.pk if target else 0,
            due_date=due,
            occurrence_key=occurrence_key if isinstance(occurrence_key, str) else occurrence_key(task),
        )
        for task, target in tasks_on
    ]
