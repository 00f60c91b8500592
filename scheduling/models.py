"""Maintenance rules, meters, outdoor temperatures and work orders."""

import uuid

from django.conf import settings
from django.db import models

from accounts.models import Organisation
from inventory.models import AHU


class WorkOrder(models.Model):
    class Kind(models.TextChoices):
        PREVENTIVE = "preventive", "Preventive"
        CORRECTIVE = "corrective", "Corrective"

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

    public_id = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="work_orders")
    ahu = models.ForeignKey(AHU, on_delete=models.PROTECT, related_name="work_orders")
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.PREVENTIVE)
    state = models.CharField(max_length=20, choices=State.choices, default=State.PLANNED)
    priority = models.CharField(max_length=10, choices=Priority.choices, default=Priority.NORMAL)
    title = models.CharField(max_length=200)
    assignee = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="assigned_work_orders",
    )
    due_date = models.DateField()
    scheduled_for = models.DateField(null=True, blank=True)
    completed_at = models.DateTimeField(null=True, blank=True)
    version = models.PositiveIntegerField(default=1, help_text="Raised on every change; optimistic locking.")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["due_date", "id"]
        indexes = [models.Index(fields=["organisation", "state", "due_date"])]

    def __str__(self) -> str:
        return f"{self.title} — {self.ahu.tag} (due {self.due_date})"
