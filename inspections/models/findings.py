"""Findings: a problem seen on a unit (by a visit or the trends), its life and its age."""

from __future__ import annotations

import zoneinfo

from django.conf import settings
from django.db import models
from django.db.models.functions import Coalesce
from django.utils import timezone

from accounts.models import Organisation
from inventory.models import AHU, Component
from scheduling.models import WorkOrder

from .visits import Evaluation, Inspection


def finding_age_days(*, opened_at, end, time_zone: str) -> int:
    """A finding's age in days: the site's local date at ``end`` less its local date when first seen (first seen
    2 Nov, today 2 Dec: 30 days, whatever the hours), never negative. Pages, API and PDFs count ages here."""
    zone = zoneinfo.ZoneInfo(time_zone)
    return max((end.astimezone(zone).date() - opened_at.astimezone(zone).date()).days, 0)


class Finding(models.Model):
    """A deficiency: one open finding per unit, part and problem, gathering every visit that saw it.

    ``opened_at`` is the first observation (ages and "findings by age" count from it), ``last_seen_at``
    the latest, ``times_seen`` the number of visits (inspections) that saw it; ``evaluation`` and
    ``inspection`` are the first judgement and form, ``latest_evaluation`` and ``latest_inspection`` the
    latest. A repeat failure while the finding is open updates it; after it is closed a new failure opens
    a new finding. A design-review finding (the requirement is above what the unit was designed for)
    proposes no corrective work.

    ``source`` says who saw it: a technician's visits (``inspection``, with its judgements and forms), or the
    building-automation trends (``bas_trend``: a published fault rule, ``rule`` such as FC6, found it; no form or
    judgement row, ``times_seen`` counts the days it was found, ``evidence`` holds the latest evidence window and
    share of the operating time). A trend finding follows its ``automation.Fault``, which points at it.
    """

    class Source(models.TextChoices):
        INSPECTION = "inspection", "Inspection visits"
        BAS_TREND = "bas_trend", "Building-automation trends"

    class Severity(models.TextChoices):
        LOW = "low", "Low"
        MEDIUM = "medium", "Medium"
        HIGH = "high", "High"
        CRITICAL = "critical", "Critical"

    class State(models.TextChoices):
        OPEN = "open", "Open"
        CLOSED = "closed", "Closed"

    class Kind(models.TextChoices):
        CORRECTIVE = "corrective", "Corrective work"
        DESIGN_REVIEW = "design_review", "Design review"

    class CloseCause(models.TextChoices):
        CORRECTED = "corrected", "Corrective work completed"
        AMENDED = "amended", "Cleared by an amendment"
        MERGED = "merged", "Merged into the earlier open finding of the same problem"
        OK_LATER = "ok_later", "Ok on a later visit"
        REPLACED = "replaced", "Filters replaced"
        ABSENT = "absent", "No longer found in the building-automation trends"

    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="findings")
    source = models.CharField(max_length=12, choices=Source.choices, default=Source.INSPECTION)
    rule = models.CharField(
        max_length=12, blank=True, help_text="The published rule that found it in the trends (FC1–FC15, FREEZE)."
    )
    evidence = models.JSONField(
        default=dict,
        blank=True,
        help_text="Trend findings: {section, start, end (latest evidence window), share (0–1), days}.",
    )
    inspection = models.ForeignKey(Inspection, on_delete=models.PROTECT, null=True, blank=True, related_name="findings")
    evaluation = models.OneToOneField(
        Evaluation, on_delete=models.PROTECT, null=True, blank=True, related_name="finding"
    )
    ahu = models.ForeignKey(AHU, on_delete=models.PROTECT, related_name="findings")
    component = models.ForeignKey(Component, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.CORRECTIVE)
    problem = models.CharField(
        max_length=120,
        blank=True,
        help_text="What failed (check or checklist step): one open finding per unit, part and problem.",
    )
    severity = models.CharField(max_length=10, choices=Severity.choices)
    title = models.CharField(max_length=200)
    reason = models.TextField()
    reason_parts = models.JSONField(
        default=list,
        blank=True,
        help_text="The text as text and SI quantities (inspections.reasons), from the latest observation.",
    )
    condition_code = models.CharField(max_length=40, blank=True)
    state = models.CharField(max_length=10, choices=State.choices, default=State.OPEN)
    opened_at = models.DateTimeField(help_text="First seen: the first observation.")
    last_seen_at = models.DateTimeField(null=True, blank=True, help_text="The latest observation.")
    times_seen = models.PositiveIntegerField(default=1, help_text="Visits (inspections) that saw it.")
    latest_evaluation = models.ForeignKey(Evaluation, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    latest_inspection = models.ForeignKey(Inspection, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    closed_at = models.DateTimeField(null=True, blank=True)
    corrective_work_order = models.ForeignKey(
        WorkOrder, on_delete=models.PROTECT, null=True, blank=True, related_name="source_findings"
    )
    amendment = models.ForeignKey(
        "Amendment",
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="findings",
        help_text="The amendment whose corrected readings newly failed (blank: found on the original form).",
    )
    close_cause = models.CharField(max_length=20, choices=CloseCause.choices, blank=True)
    close_note = models.CharField(
        max_length=200, blank=True, help_text="Why it closed, where the cause needs more words (days absent)."
    )
    closed_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    cleared_by_amendment = models.ForeignKey(
        "Amendment",
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="cleared_findings",
        help_text="The amendment whose corrected readings no longer fail this check.",
    )
    merged_into = models.ForeignKey(
        "self",
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="merged",
        help_text="The earlier open finding of the same problem this duplicate was merged into.",
    )

    class Meta:
        ordering = ["-opened_at", "-id"]
        indexes = [models.Index(fields=["organisation", "state", "severity"])]
        constraints = [
            models.UniqueConstraint(
                models.F("ahu"),
                Coalesce(models.F("component"), models.Value(0)),
                models.F("problem"),
                condition=models.Q(state="open") & ~models.Q(problem=""),
                name="finding_one_open_per_problem",
            ),
            # A visit's finding holds its form and judgement; a trend finding names its rule instead.
            models.CheckConstraint(
                condition=(
                    models.Q(source="inspection", inspection__isnull=False, evaluation__isnull=False)
                    | (models.Q(source="bas_trend") & ~models.Q(rule=""))
                ),
                name="finding_source_has_its_evidence",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_severity_display()}: {self.title}"

    @property
    def first_seen_at(self):
        return self.opened_at

    @property
    def from_trends(self) -> bool:
        return self.source == self.Source.BAS_TREND

    @property
    def source_words(self) -> str:
        """Who saw it, as every page and PDF names it: "building-automation trends, rule FC6" for a fault rule's
        finding in the trends; "" for a finding of technicians' visits (what lists show unless they say otherwise)."""
        if self.source == self.Source.INSPECTION:
            return ""
        words = self.get_source_display().lower()
        if self.rule == "FREEZE":
            return f"{words}, freeze-protection stages"
        if self.rule == "FILTER":
            return f"{words}, filter pressure drop"
        return f"{words}, rule {self.rule}" if self.rule else words

    @property
    def times_seen_words(self) -> str:
        """How often it was seen, as pages say it: "2 visits", or "3 days in the trends" for a trend finding."""
        n = self.times_seen
        if self.from_trends:
            return f"{n} day{'' if n == 1 else 's'} in the trends"
        return f"{n} visit{'' if n == 1 else 's'}"

    def age_days(self, *, now=None) -> int:
        """Days since the first observation (to the close, or ``now``), in the site's local dates."""
        end = self.closed_at or now or timezone.now()
        return finding_age_days(opened_at=self.opened_at, end=end, time_zone=self.ahu.building.site.time_zone)
