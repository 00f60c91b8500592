"""What the trends said about a unit: faults found by published rules, and each filter bank's day.

Kept apart from ``automation.models`` (points and trend storage) and imported at its end, so Django sees one
app's models. Writes go through ``automation.judging`` and ``automation.feeds``.
"""

from __future__ import annotations

from django.db import models
from django.db.models import Q

from inspections.models import Finding
from inventory.models import AHU, Component
from scheduling.models import WorkOrder


class Fault(models.Model):
    """One fault of one unit found in its trends: one open fault per unit and rule (``code``).

    A fault opens the first day a rule finds it (an evidence window that lasted the rule's alarm delay) and is
    updated each further day it is found (``last_seen_at``, ``days_seen``, the windows of each day, the latest
    share and consequence). It closes once it has been absent for ``PLENUM_FAULT_CLOSE_AFTER_DAYS`` days of
    judged trends (cause ``absent``), or when its corrective work is completed (cause ``corrected``); found
    again after that, it opens a new fault. Each fault is one finding of its unit (``finding``, source
    building-automation trends, ``automation.fault_findings``), opened, updated and closed with it. A freeze
    event (code ``FREEZE``) keeps the unit "not ready" for freeze protection until a freeze-protection test
    passes after it (``inspections.freeze``), whatever the state of the row.
    """

    class State(models.TextChoices):
        OPEN = "open", "Open"
        CLOSED = "closed", "Closed"

    class CloseCause(models.TextChoices):
        ABSENT = "absent", "Not found for the set time"
        CORRECTED = "corrected", "Corrective work completed"

    FREEZE = "FREEZE"

    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="faults", verbose_name="unit")
    component = models.ForeignKey(Component, on_delete=models.SET_NULL, null=True, blank=True, related_name="+")
    code = models.CharField(max_length=12, help_text="The rule: FC1–FC15 of the guideline, or FREEZE.")
    title = models.CharField(max_length=200)
    section = models.CharField(max_length=200, help_text="Where the rule is published.")
    formula = models.CharField(max_length=300, blank=True)
    severity = models.CharField(max_length=10, default="medium")
    condition_code = models.CharField(
        max_length=40, blank=True, help_text="The scheduling condition its corrective work answers."
    )
    state = models.CharField(max_length=10, choices=State.choices, default=State.OPEN)
    first_seen_at = models.DateTimeField(help_text="Start of the first evidence window.")
    last_seen_at = models.DateTimeField(help_text="End of the latest evidence window.")
    days_seen = models.JSONField(default=list, help_text="The site's local days it was found on (ISO dates).")
    windows = models.JSONField(
        default=list,
        blank=True,
        help_text="Evidence windows [{day, start, end, alarm_at, duration_s, lowest_c?}], the latest ones kept.",
    )
    fault_s = models.FloatField(default=0.0, help_text="Time inside evidence windows, all days, s.")
    share = models.FloatField(null=True, blank=True, help_text="Share of the applicable time, latest day, 0–1.")
    consequence = models.JSONField(default=dict, blank=True, help_text="{kind, summary, values} (SI), latest day.")
    reason = models.TextField(blank=True, help_text="The latest day's finding in plain words (SI).")
    corrective_work_order = models.ForeignKey(
        WorkOrder, on_delete=models.SET_NULL, null=True, blank=True, related_name="trend_faults"
    )
    finding = models.ForeignKey(
        Finding,
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="trend_faults",
        help_text="The unit's finding that stands for this fault (source: building-automation trends).",
    )
    closed_at = models.DateTimeField(null=True, blank=True)
    close_cause = models.CharField(max_length=20, choices=CloseCause.choices, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-last_seen_at", "-id"]
        constraints = [
            models.UniqueConstraint(
                fields=["ahu", "code"], condition=Q(state="open"), name="fault_one_open_per_unit_and_rule"
            ),
        ]
        indexes = [models.Index(fields=["ahu", "code", "last_seen_at"], name="fault_unit_code_seen")]

    def __str__(self) -> str:
        return f"{self.ahu.tag} {self.code}: {self.title} ({self.state})"


class FilterDay(models.Model):
    """A filter bank's representative pressure drop on one site-local day, from its differential-pressure point.

    The median over the samples taken while the supply fan ran, each corrected to the bank's design airflow by
    ``engineering.filters.corrected_pressure_drop``; with the run-hour meter at the day's end it is a point of the
    bank's change forecast, beside the technicians' readings (``automation.feeds``)."""

    component = models.ForeignKey(Component, on_delete=models.CASCADE, related_name="filter_days")
    day = models.DateField(help_text="The site's local day.")
    corrected_dp_pa = models.FloatField(help_text="Median pressure drop at design airflow, Pa.")
    design_airflow_m3s = models.FloatField()
    airflow_source = models.CharField(max_length=120)
    samples = models.PositiveIntegerField()
    run_hours = models.FloatField(null=True, blank=True, help_text="The unit's run-hour meter at the day's end.")
    loading_pct = models.FloatField(null=True, blank=True)
    verdict = models.CharField(max_length=5, blank=True)
    reason = models.TextField(blank=True)

    class Meta:
        ordering = ["component", "day"]
        constraints = [models.UniqueConstraint(fields=["component", "day"], name="filter_day_unique_bank_day")]

    def __str__(self) -> str:
        return f"{self.component} {self.day}: {self.corrected_dp_pa:.0f} Pa at design airflow"
