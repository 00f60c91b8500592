"""Maintenance rules: the task library's rows and a unit's own settings of them."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.core.validators import MinValueValidator
from django.db import models
from django.db.models import Q

from accounts.models import Organisation
from inventory.models import AHU


class TaskCategory(models.TextChoices):
    FILTERS = "filters", "Filters"
    BELTS_DRIVES = "belts_drives", "Belts and drives"
    FAN_BEARINGS = "fan_bearings", "Fans and bearings"
    COILS_DRAIN_PANS = "coils_drain_pans", "Coils and drain pans"
    DAMPERS_ACTUATORS = "dampers_actuators", "Dampers and actuators"
    PREHEAT_FREEZE = "preheat_freeze", "Preheater and freeze protection"
    SENSORS = "sensors", "Sensors and calibration"
    HEAT_RECOVERY = "heat_recovery", "Heat recovery"
    INTAKE_SCREEN = "intake_screen", "Outdoor-air intake screen"
    CONTROLS_VENTILATION = "controls_ventilation", "Controls and ventilation"
    HUMIDIFIER = "humidifier", "Humidifier"


class TaskDefinition(models.Model):
    """One maintenance task of the library (organisation empty) or of one organisation.

    An organisation's row with the same ``code`` as a library row overrides it for
    that organisation; an organisation's row with a new code is its own task.
    """

    class Trigger(models.TextChoices):
        INTERVAL = "interval", "Every N days/weeks/months"
        RUNTIME = "runtime", "Every N run-hours"
        SEASON = "season", "Lead time before a season"
        CONDITION = "condition", "Only when a reading calls for it"

    class IntervalUnit(models.TextChoices):
        DAYS = "days", "days"
        WEEKS = "weeks", "weeks"
        MONTHS = "months", "months"

    class Anchor(models.TextChoices):
        CALENDAR = "calendar", "Fixed to the calendar"
        FLOATING = "floating", "From the last completion"

    class Season(models.TextChoices):
        FREEZE = "freeze", "Freeze season"
        COOLING = "cooling", "Cooling season"

    class Skill(models.TextChoices):
        MECHANICAL = "mechanical", "Mechanical"
        ELECTRICAL = "electrical", "Electrical"
        CONTROLS = "controls", "Controls"
        REFRIGERANT = "refrigerant", "Refrigerant handling (certified)"

    organisation = models.ForeignKey(
        Organisation,
        on_delete=models.CASCADE,
        null=True,
        blank=True,
        related_name="task_definitions",
        help_text="Empty for the shipped library.",
    )
    code = models.SlugField(max_length=60)
    name = models.CharField(max_length=200)
    description = models.TextField(blank=True)
    category = models.CharField(max_length=30, choices=TaskCategory.choices)
    component_kind = models.CharField(
        max_length=30, blank=True, help_text="Component kind the task is done on; empty for the whole unit."
    )
    spec_filter = models.JSONField(
        default=dict,
        blank=True,
        help_text='Only components whose specs match, e.g. {"drive": ["belt"]}.',
    )
    extra_targets = models.JSONField(
        default=list,
        blank=True,
        help_text='Further component kinds it applies to, e.g. [{"kind": "coil", "specs": {"duty": ["preheat"]}}].',
    )
    trigger = models.CharField(max_length=20, choices=Trigger.choices)
    interval_value = models.PositiveIntegerField(null=True, blank=True, validators=[MinValueValidator(1)])
    interval_unit = models.CharField(max_length=10, choices=IntervalUnit.choices, blank=True)
    anchor = models.CharField(max_length=10, choices=Anchor.choices, default=Anchor.CALENDAR)
    grace_days = models.PositiveIntegerField(default=7, help_text="Days after the due date before it is overdue.")
    run_hours = models.PositiveIntegerField(null=True, blank=True, validators=[MinValueValidator(1)])
    season = models.CharField(max_length=10, choices=Season.choices, blank=True)
    lead_days = models.PositiveIntegerField(null=True, blank=True)
    condition_code = models.SlugField(max_length=60, blank=True)
    checklist_code = models.SlugField(max_length=60, help_text="The checklist template used for this task.")
    estimated_minutes = models.PositiveIntegerField(default=30)
    skill = models.CharField(max_length=20, choices=Skill.choices, default=Skill.MECHANICAL)
    safety_notes = models.TextField(blank=True)
    source = models.TextField(help_text="Where the default frequency comes from.")
    enabled = models.BooleanField(default=True)
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["category", "code"]
        constraints = [
            models.UniqueConstraint(
                fields=["organisation", "code"],
                name="taskdef_unique_code_in_org",
            ),
            models.UniqueConstraint(
                fields=["code"],
                condition=Q(organisation__isnull=True),
                name="taskdef_unique_library_code",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.name} ({self.code})"

    def clean(self) -> None:
        # The input policy's bounds (scheduling.inputs): the admin form checks what the services check.
        from ..inputs import task_problems

        problems = task_problems(self)
        if problems:
            raise ValidationError(problems)

    @property
    def is_library(self) -> bool:
        return self.organisation_id is None

    def targets(self) -> list[dict]:
        """Every (kind, spec filter) the task applies to; empty list for a unit-level task."""
        if not self.component_kind:
            return []
        return [{"kind": self.component_kind, "specs": self.spec_filter or {}}, *(self.extra_targets or [])]


class UnitTaskSetting(models.Model):
    """A supervisor's choice for one unit: switch a task off for it, or give it its own numbers.

    An empty number follows the organisation's rule (``effective_tasks``); a filled one is this unit's
    own (an older unit's filters every month, say). The due-date engine reads both.
    """

    # The numbers of a rule a unit may have of its own; every other field of the rule stays the organisation's.
    RULE_FIELDS = ("interval_value", "interval_unit", "grace_days", "lead_days", "run_hours")

    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="task_settings")
    task_code = models.SlugField(max_length=60)
    enabled = models.BooleanField(default=False)
    reason = models.CharField(max_length=200, blank=True)
    interval_value = models.PositiveIntegerField(null=True, blank=True, help_text="Empty: the organisation's.")
    interval_unit = models.CharField(
        max_length=10, choices=TaskDefinition.IntervalUnit.choices, blank=True, help_text="Empty: the organisation's."
    )
    grace_days = models.PositiveIntegerField(null=True, blank=True, help_text="Empty: the organisation's.")
    lead_days = models.PositiveIntegerField(null=True, blank=True, help_text="Empty: the organisation's.")
    run_hours = models.PositiveIntegerField(null=True, blank=True, help_text="Empty: the organisation's.")
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["ahu", "task_code"], name="unittasksetting_unique")]

    def __str__(self) -> str:
        return f"{self.ahu.tag}: {self.task_code} {'on' if self.enabled else 'off'}"
