"""Reads of the scheduling app, one module per kind of read; this package answers with their public names.
Tenancy always goes through inventory.selectors.

``rules`` (a unit's tasks and numbers), ``work_orders`` (which work a person sees, one by id), ``board`` (the board's
rows and suggestions, work to verify), ``load`` (technicians' day loads), ``assignment`` (an assignment's effect on a
day), ``today`` (a technician's day in route order), ``meters`` (the latest run-hour reading).
``day_load``, ``least_loaded`` and ``least_loaded_for`` are answered too: ``scheduling.services.assignment`` plans
with them.
"""

from __future__ import annotations

from .assignment import WARNING_CODES, AssignmentCheck, assignment_check, offered_day, weekend_plan_words
from .board import (
    BOARD_LIMIT_MAX,
    BOARD_SECTIONS,
    TO_VERIFY_FIELDS,
    board_page_for,
    board_suggestions,
    overdue_awaiting_approval,
    overdue_awaiting_rows,
    to_verify_rows,
    work_orders_to_verify,
)
from .load import (
    LOADED_STATES,
    WEEKEND,
    DayLoad,
    Visit_,
    WorkNeed,
    board_load_rows,
    capacity_on,
    day_load,
    least_loaded,
    least_loaded_for,
    skills_needed,
    suggested_technicians,
    technician_day_loads,
    technician_load,
    weekday_on_or_near,
)
from .meters import latest_meter_reading
from .rules import effective_tasks, task_for_unit, unit_rule_numbers
from .today import next_visit_day, today_visits_for
from .work_orders import work_order_for, work_orders_managed_by, work_orders_visible_to

__all__ = [
    "BOARD_LIMIT_MAX",
    "BOARD_SECTIONS",
    "LOADED_STATES",
    "TO_VERIFY_FIELDS",
    "WARNING_CODES",
    "WEEKEND",
    "AssignmentCheck",
    "DayLoad",
    "Visit_",
    "WorkNeed",
    "assignment_check",
    "board_load_rows",
    "board_page_for",
    "board_suggestions",
    "capacity_on",
    "day_load",
    "effective_tasks",
    "latest_meter_reading",
    "least_loaded",
    "least_loaded_for",
    "next_visit_day",
    "offered_day",
    "overdue_awaiting_approval",
    "overdue_awaiting_rows",
    "skills_needed",
    "suggested_technicians",
    "task_for_unit",
    "technician_day_loads",
    "technician_load",
    "to_verify_rows",
    "today_visits_for",
    "unit_rule_numbers",
    "weekday_on_or_near",
    "weekend_plan_words",
    "work_order_for",
    "work_orders_managed_by",
    "work_orders_to_verify",
    "work_orders_visible_to",
]
