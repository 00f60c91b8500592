"""A registry CSV import run in the background."""

from __future__ import annotations

import uuid

from django.conf import settings
from django.db import models
from django.utils import timezone

from accounts.models import Organisation


class ImportJob(models.Model):
    """A registry CSV import run in the background: its file, its progress and its outcome.

    The import is all or nothing like the one in the request: ``errors`` lists every bad
    row (line, column, value, reason) and then nothing was imported.
    """

    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        CHECKING = "checking", "Checking rows"
        DONE = "done", "Imported"
        REFUSED = "refused", "Refused: nothing imported"
        FAILED = "failed", "Failed: nothing imported"

    public_id = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    organisation = models.ForeignKey(Organisation, on_delete=models.CASCADE, related_name="import_jobs")
    kind = models.CharField(max_length=20, help_text="sites, ahus or components")
    dry_run = models.BooleanField(default=False)
    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="import_jobs"
    )
    file_name = models.CharField(max_length=200, blank=True)
    source = models.TextField(blank=True, help_text="The uploaded file's text; emptied once the job has finished.")
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    rows_total = models.PositiveIntegerField(default=0)
    rows_done = models.PositiveIntegerField(default=0)
    created = models.PositiveIntegerField(default=0)
    updated = models.PositiveIntegerField(default=0)
    errors = models.JSONField(default=list, blank=True, help_text="Every bad row: line, column, value, reason.")
    detail = models.TextField(blank=True)
    created_at = models.DateTimeField(default=timezone.now, editable=False)
    finished_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at", "-id"]

    def __str__(self) -> str:
        return f"{self.kind} import {self.public_id} ({self.status})"
