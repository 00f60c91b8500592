"""Maintenance rules, meters, outdoor temperatures and work orders.

One module per group: ``tasks`` (the rules), ``readings`` (meters, outdoor temperatures), ``work_orders``, ``feeds``
(calendar feeds); the package answers with their names.
"""

from __future__ import annotations

from .feeds import CalendarFeed, new_feed_token
from .readings import MeterReading, OutdoorTemperature
from .tasks import TaskCategory, TaskDefinition, UnitTaskSetting
from .work_orders import WorkOrder, WorkOrderTask, overdue_day, work_order_state_words

__all__ = [
    "CalendarFeed",
    "MeterReading",
    "OutdoorTemperature",
    "TaskCategory",
    "TaskDefinition",
    "UnitTaskSetting",
    "WorkOrder",
    "WorkOrderTask",
    "new_feed_token",
    "overdue_day",
    "work_order_state_words",
]
