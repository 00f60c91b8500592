"""Stored PDF records: what was asked for, by whom, and the file that came out."""

import uuid

from django.conf import settings
from django.db import models
from django.urls import reverse
from django.utils import timezone

from accounts.models import Organisation


def report_upload_to(instance: "Report", filename: str) -> str:
    # Path from the requested time and the public id only: stable and never guessable from a title. The month is
    # UTC's on purpose: a storage folder, read by no one as a site's day.
    at = instance.created_at or timezone.now()
    return f"reports/{at:%Y/%m}/{instance.public_id}.pdf"


class Report(models.Model):
    class Kind(models.TextChoices):
        INSPECTION = "inspection", "Inspection report"
        COMPLIANCE = "compliance", "Site compliance report"
        UNIT_HISTORY = "unit_history", "Unit history"
        LABELS = "labels", "Label sheet"

    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        RUNNING = "running", "Running"
        DONE = "done", "Done"
        FAILED = "failed", "Failed"

    # Not a column: ``reports.services.report_request`` sets it on the waiting report it answers a repeated
    # request with (the page then says the report is already being made).
    repeated: bool = False

    public_id = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="reports")
    kind = models.CharField(max_length=20, choices=Kind.choices)
    parameters = models.JSONField(
        default=dict, blank=True, help_text="The inputs, normalised: the same parameters give the same text."
    )
    site_ids = models.JSONField(
        default=list, blank=True, editable=False, help_text="Every site the report covers; a reader must see them all."
    )
    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="reports"
    )
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    error = models.TextField(blank=True)
    pdfa = models.BooleanField(default=False, help_text="Written as archival PDF/A.")
    file = models.FileField(upload_to=report_upload_to, blank=True)
    sha256 = models.CharField(max_length=64, blank=True)
    size_bytes = models.PositiveIntegerField(default=0)
    page_count = models.PositiveIntegerField(default=0)
    created_at = models.DateTimeField(
        default=timezone.now, editable=False, help_text="When it was requested; printed as the generation time."
    )
    finished_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at", "-id"]
        indexes = [models.Index(fields=["organisation", "kind", "created_at"])]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} {self.public_id} ({self.status})"

    def get_absolute_url(self) -> str:
        return reverse("reports:download", kwargs={"public_id": self.public_id})

    @property
    def filename(self) -> str:
        # The day stamp is the request's UTC date on purpose: a report may span sites in several zones, and the
        # name only has to sort and stay the same wherever it is downloaded.
        return f"plenum-{self.kind.replace('_', '-')}-{self.created_at:%Y%m%d}-{str(self.public_id)[:8]}.pdf"
