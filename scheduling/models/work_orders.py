"""Work orders, their tasks and their life cycle; a visit's overdue day and its state in words."""

from __future__ import annotations

import datetime as dt
import uuid

from django.conf import settings
from django.db import models

from accounts.models import Organisation
from inventory.models import AHU, Component
from inventory.today import today_for

from ..lateness import overdue_words
from .tasks import TaskDefinition


def overdue_day(due: dt.date, grace_days: int) -> dt.date:
    """First day work due on ``due`` counts as overdue: the last of ``grace_days`` grace days is still on time.

    Due 1 March with 7 grace days: on time up to 8 March, overdue from 9 March.
    Compliance figures, the board and the escalation e-mails all read this one day.
    """
    return due + dt.timedelta(days=grace_days + 1)


class WorkOrder(models.Model):
    class Kind(models.TextChoices):
        PREVENTIVE = "preventive", "Preventive"
        CORRECTIVE = "corrective", "Corrective"
        CALL_OUT = "call_out", "Call-out"
        AD_HOC = "ad_hoc", "Ad hoc"

    class State(models.TextChoices):
        PLANNED = "planned", "Planned"
        ASSIGNED = "assigned", "Assigned"
        IN_PROGRESS = "in_progress", "In progress"
        COMPLETED = "completed", "Completed"
        VERIFIED = "verified", "Verified"
        CANCELLED = "cancelled", "Cancelled"

    class Priority(models.TextChoices):
        LOW = "low", "Low"
        NORMAL = "normal", "Normal"
        HIGH = "high", "High"
        URGENT = "urgent", "Urgent"

    class Approval(models.TextChoices):
        NOT_NEEDED = "not_needed", "Not needed"
        PENDING = "pending", "Awaiting approval"
        APPROVED = "approved", "Approved"
        REJECTED = "rejected", "Rejected"

    # The one table of allowed moves; services enforce it, screens read it.
    TRANSITIONS: dict[str, frozenset[str]] = {
        State.PLANNED: frozenset({State.ASSIGNED, State.CANCELLED}),
        State.ASSIGNED: frozenset({State.PLANNED, State.IN_PROGRESS, State.CANCELLED}),
        State.IN_PROGRESS: frozenset({State.COMPLETED, State.ASSIGNED, State.CANCELLED}),
        State.COMPLETED: frozenset({State.VERIFIED, State.IN_PROGRESS}),
        State.VERIFIED: frozenset(),
        State.CANCELLED: frozenset(),
    }
    OPEN_STATES = frozenset({State.PLANNED, State.ASSIGNED, State.IN_PROGRESS})

    public_id = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="work_orders")
    ahu = models.ForeignKey(AHU, on_delete=models.PROTECT, related_name="work_orders")
    component = models.ForeignKey(
        Component,
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="corrective_work_orders",
        help_text="For corrective work: the component at fault.",
    )
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.PREVENTIVE)
    state = models.CharField(max_length=20, choices=State.choices, default=State.PLANNED)
    priority = models.CharField(max_length=10, choices=Priority.choices, default=Priority.NORMAL)
    approval = models.CharField(max_length=12, choices=Approval.choices, default=Approval.NOT_NEEDED)
    title = models.CharField(max_length=200)
    reason = models.TextField(blank=True)
    condition_code = models.SlugField(max_length=60, blank=True)
    source_ref = models.CharField(max_length=200, blank=True, help_text="What raised it, e.g. an inspection id.")
    assignee = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="assigned_work_orders",
    )
    due_date = models.DateField()
    overdue_on = models.DateField(
        null=True,
        blank=True,
        help_text="First day it counts as overdue: the day after the grace window (due + grace + 1 day).",
    )
    due_by = models.DateTimeField(
        null=True,
        blank=True,
        help_text="A time it must be done by (a call-out 'by 14:00 today'), read on the site's clock; empty for a day.",
    )
    scheduled_for = models.DateField(null=True, blank=True)
    escalated_on = models.DateField(null=True, blank=True, help_text="Last overdue e-mail to the supervisors.")
    started_at = models.DateTimeField(null=True, blank=True)
    completed_at = models.DateTimeField(null=True, blank=True)
    verified_at = models.DateTimeField(null=True, blank=True)
    cancel_reason = models.CharField(max_length=300, blank=True)
    version = models.PositiveIntegerField(default=1, help_text="Raised on every change; optimistic locking.")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["due_date", "id"]
        indexes = [
            models.Index(fields=["organisation", "state", "due_date"]),
            models.Index(fields=["assignee", "state", "due_date"]),
        ]

    def __str__(self) -> str:
        return f"{self.title} — {self.ahu.tag} (due {self.due_date})"

    @property
    def state_words(self) -> str:
        """Where the work stands as people say it: corrective work not yet approved is "awaiting approval" (or
        "rejected"), any other its state ("planned", "assigned", ...). The pages, the PDFs and readiness agree."""
        words = work_order_state_words(self.state, self.approval)
        return f"{words}, overdue" if self.is_overdue else words

    def is_overdue_on(self, today: dt.date) -> bool:
        """Open work past its overdue day (``overdue_on``; without one, past its due date) on ``today``, the
        site's date; the board's overdue column reads the same rule (scheduling.selectors.board._overdue)."""
        if self.state not in self.OPEN_STATES or self.due_date is None or self.due_date >= today:
            return False
        return self.overdue_on is None or self.overdue_on <= today

    @property
    def overdue_from(self) -> dt.date | None:
        """First day this work counts as overdue (:meth:`is_overdue_on`): ``overdue_on``, the day after its grace
        window, and never before the day after its due date."""
        if self.due_date is None:
            return None
        after_due = self.due_date + dt.timedelta(days=1)
        return max(self.overdue_on, after_due) if self.overdue_on else after_due

    def due_words_on(self, today: dt.date) -> str:
        """The due date as every page says it, on ``today`` (the site's date): "due 4 Sep 2026"; past due but
        inside its grace window "due 19 Nov 2026, in grace until 3 Dec 2026"; past that, on 3 Dec, "due 4 Sep 2026,
        grace to 18 Sep 2026, 75 days overdue (since 19 Sep 2026)" (``scheduling.lateness.overdue_words``: 3 Dec −
        19 Sep = 75; the grace named so the count reads right beside the due date; none named for work without one).
        Empty for closed work or work with no due date."""
        if self.state not in self.OPEN_STATES or self.due_date is None or self.overdue_from is None:
            return ""
        words = f"due {self.due_date:%-d %b %Y}"
        if self.is_overdue_on(today):
            last = self.overdue_from - dt.timedelta(days=1)
            grace = f", grace to {last:%-d %b %Y}" if last > self.due_date else ""
            return f"{words}{grace}, {overdue_words(since=self.overdue_from, today=today)}"
        if self.due_date < today:
            last = self.overdue_from - dt.timedelta(days=1)
            return f"{words}, in grace until {last:%-d %b %Y}"
        return words

    @property
    def due_words(self) -> str:
        """:meth:`due_words_on` the site's today."""
        if self.state not in self.OPEN_STATES:
            return ""
        return self.due_words_on(today_for(self.ahu.building.site))

    @property
    def is_overdue(self) -> bool:
        """:meth:`is_overdue_on` the site's today (its own calendar): every page says "overdue" from here."""
        if self.state not in self.OPEN_STATES:
            return False
        return self.is_overdue_on(today_for(self.ahu.building.site))

    @property
    def is_open(self) -> bool:
        return self.state in self.OPEN_STATES

    def arrived_by(self, opened_at: dt.datetime) -> dt.datetime:
        """When the technician arrived, for a form whose page was opened at ``opened_at``: the moment the visit
        was started ("Start visit", ``started_at``) while it is in progress and that was earlier, else
        ``opened_at``. The form's page and the sync both place a visit's start by it, so the record's "Arrived"
        is the start the board showed, not a later reload of the page."""
        started = self.started_at
        if self.state == self.State.IN_PROGRESS and started is not None and started < opened_at:
            return started
        return opened_at

    def can_move_to(self, state: str) -> bool:
        return state in self.TRANSITIONS.get(self.state, frozenset())

    def estimated_minutes(self) -> int:
        """Sum of the tasks' estimates; uses prefetched tasks when present."""
        return sum(t.task.estimated_minutes for t in self.tasks.all())


class WorkOrderTask(models.Model):
    """One due occurrence of one task on one unit or component, inside a visit.

    ``(ahu, task_code, component_key, occurrence_key)`` is unique in the
    database, so concurrent generation runs cannot create an occurrence twice.
    ``component_key`` is the component id or 0 for the unit itself (a NULL would
    not take part in the uniqueness on every database).
    """

    work_order = models.ForeignKey(WorkOrder, on_delete=models.CASCADE, related_name="tasks")
    task = models.ForeignKey(TaskDefinition, on_delete=models.PROTECT, related_name="occurrences")
    task_code = models.SlugField(max_length=60)
    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="task_occurrences")
    component = models.ForeignKey(
        Component, on_delete=models.CASCADE, null=True, blank=True, related_name="task_occurrences"
    )
    component_key = models.BigIntegerField(default=0)
    due_date = models.DateField()
    occurrence_key = models.CharField(max_length=80)
    completed_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["work_order", "due_date", "id"]
        constraints = [
            models.UniqueConstraint(
                fields=["ahu", "task_code", "component_key", "occurrence_key"], name="wotask_unique_occurrence"
            )
        ]
        indexes = [models.Index(fields=["ahu", "task_code", "component_key", "completed_at"])]

    def __str__(self) -> str:
        return f"{self.task_code} on {self.component_id or 'unit'} due {self.due_date}"


def work_order_state_words(state: str, approval: str | None) -> str:
    """``WorkOrder.state_words`` from the stored values (for reads that fetch values, not rows)."""
    if approval == WorkOrder.Approval.PENDING:
        return "awaiting approval"
    if approval == WorkOrder.Approval.REJECTED:
        return "rejected"
    return WorkOrder.State(state).label.lower()
