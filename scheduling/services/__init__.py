"""Writes of the scheduling app. Import from here: ``from scheduling.services import work_order_assign``."""

from .assignment import AssignmentWarnings, work_order_assign_and_plan
from .calendar_feeds import calendar_feed_issue, calendar_feed_revoke, calendar_feeds_revoke_for_password
from .corrective import corrective_work_order_approve, corrective_work_order_propose, corrective_work_order_reject
from .escalation import overdue_escalation_send
from .library import task_definition_create, task_definition_override, task_library_install, unit_task_set
from .meter_words import meter_below_words, meter_plausible_words, meter_reading_words, meter_words
from .meters import (
    meter_neighbours,
    meter_reading_check,
    meter_reading_record,
    meter_readings_import_csv,
)
from .seasons import outdoor_temperatures_import_csv, outdoor_temperatures_store, site_seasons_refresh
from .work_orders import (
    WorkOrderConflict,
    WorkOrderTransitionError,
    work_order_assign,
    work_order_cancel,
    work_order_complete,
    work_order_complete_locked,
    work_order_plan_words,
    work_order_schedule,
    work_order_start,
    work_order_transition,
    work_order_unassign,
    work_order_verify,
)

__all__ = [
    "AssignmentWarnings",
    "WorkOrderConflict",
    "WorkOrderTransitionError",
    "calendar_feed_issue",
    "calendar_feed_revoke",
    "calendar_feeds_revoke_for_password",
    "corrective_work_order_approve",
    "corrective_work_order_propose",
    "corrective_work_order_reject",
    "meter_below_words",
    "meter_neighbours",
    "meter_plausible_words",
    "meter_reading_check",
    "meter_reading_record",
    "meter_reading_words",
    "meter_readings_import_csv",
    "meter_words",
    "outdoor_temperatures_import_csv",
    "outdoor_temperatures_store",
    "overdue_escalation_send",
    "site_seasons_refresh",
    "task_definition_create",
    "task_definition_override",
    "task_library_install",
    "unit_task_set",
    "work_order_assign",
    "work_order_assign_and_plan",
    "work_order_cancel",
    "work_order_complete",
    "work_order_complete_locked",
    "work_order_plan_words",
    "work_order_schedule",
    "work_order_start",
    "work_order_transition",
    "work_order_unassign",
    "work_order_verify",
]
