"""Checklist templates and their items: never edited in place, a change is a new version."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import models

from inspections.checklist_items import BAND_FIELDS, band_order_problem


class ChecklistTemplate(models.Model):
    code = models.SlugField(max_length=40, help_text="Task code of the library, e.g. filter_check.")
    version = models.PositiveIntegerField()
    title = models.CharField(max_length=200)
    cautions = models.JSONField(default=list, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["code", "-version"]
        constraints = [
            models.UniqueConstraint(fields=["code", "version"], name="checklisttemplate_unique_code_version")
        ]

    def __str__(self) -> str:
        return f"{self.code} v{self.version}"


class ChecklistItem(models.Model):
    class Kind(models.TextChoices):
        CHECK = "check", "Check (ok / not ok / n.a.)"
        NUMBER = "number", "Numeric reading"
        CHOICE = "choice", "Choice"
        TEXT = "text", "Text"
        PHOTO = "photo", "Photo"

    template = models.ForeignKey(ChecklistTemplate, on_delete=models.CASCADE, related_name="items")
    key = models.SlugField(max_length=60, help_text="Unique in the template; the API key is '<code>.<key>'.")
    position = models.PositiveSmallIntegerField(default=0)
    kind = models.CharField(max_length=10, choices=Kind.choices)
    label = models.CharField(max_length=200)
    help = models.TextField(blank=True)
    quantity = models.CharField(max_length=40, blank=True)
    decimals = models.PositiveSmallIntegerField(default=1)
    component_kind = models.CharField(
        max_length=30, blank=True, help_text="Repeat the item for each component of this kind (blank: once per unit)."
    )
    component_filter = models.JSONField(default=dict, blank=True, help_text="Spec values a component must have.")
    unit_filter = models.JSONField(
        default=dict,
        blank=True,
        help_text="What the unit must be for the item to be asked: {unit field: value or [values]} (blank: any unit).",
    )
    choices = models.JSONField(default=list, blank=True, help_text="[{value, label, ok}]")
    physical_min = models.FloatField(null=True, blank=True)
    physical_max = models.FloatField(null=True, blank=True)
    plausible_min = models.FloatField(null=True, blank=True)
    plausible_max = models.FloatField(null=True, blank=True)
    ok_min = models.FloatField(null=True, blank=True)
    ok_max = models.FloatField(null=True, blank=True)
    watch_min = models.FloatField(null=True, blank=True)
    watch_max = models.FloatField(null=True, blank=True)
    limits_from = models.CharField(
        max_length=40, blank=True, help_text="Name of a rule that sets the bands from the unit or component."
    )
    limits_source = models.TextField(blank=True)  # a source named beside the check value, as long as it needs
    judged_on_server = models.BooleanField(default=False)
    required = models.BooleanField(default=False)
    photo_required_when_not_ok = models.BooleanField(default=False)

    class Meta:
        ordering = ["template", "position", "id"]
        constraints = [models.UniqueConstraint(fields=["template", "key"], name="checklistitem_unique_key")]

    def __str__(self) -> str:
        return self.api_key

    def clean(self) -> None:
        """A band whose limits are out of order is refused, naming the item, its limits and what is allowed."""
        super().clean()
        problem = band_order_problem({k: getattr(self, k) for k in BAND_FIELDS})
        if problem:
            name = self.api_key if self.template_id else self.key
            raise ValidationError({"ok_min": [f"{name}: {problem}"]})

    @property
    def api_key(self) -> str:
        return f"{self.template.code}.{self.key}"
