"""A unit's component tree: each part's kind and its specs (``inventory.specs``)."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import models
from django.urls import reverse

from ..specs import SPECS, SpecErrors, validate_specs
from .codes import new_component_code
from .units import AHU, today_at


class ComponentKind(models.TextChoices):
    INTAKE_SCREEN = "intake_screen", "Outdoor-air intake screen"
    DAMPER = "damper", "Damper"
    FILTER_BANK = "filter_bank", "Filter bank"
    COIL = "coil", "Coil"
    FAN = "fan", "Fan"
    ELECTRIC_PREHEATER = "electric_preheater", "Electric preheater"
    SENSOR = "sensor", "Sensor"
    HEAT_RECOVERY = "heat_recovery", "Heat recovery"
    HUMIDIFIER = "humidifier", "Humidifier"
    DRAIN_PAN = "drain_pan", "Condensate drain pan"


assert set(ComponentKind.values) == set(SPECS), "every component kind needs a spec table"


class Component(models.Model):
    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="components")
    parent = models.ForeignKey("self", on_delete=models.CASCADE, null=True, blank=True, related_name="children")
    kind = models.CharField(max_length=30, choices=ComponentKind.choices)
    name = models.CharField(max_length=120)
    label_code = models.CharField(max_length=12, unique=True, default=new_component_code, editable=False)
    specs = models.JSONField(default=dict, blank=True)
    position = models.PositiveSmallIntegerField(default=0, help_text="Order along the airstream.")
    installed_on = models.DateField(null=True, blank=True)
    # A part taken out of the unit keeps its row and its records (readings, findings, work) as history;
    # from this day it gets no new work and is left out of checklists.
    retired_on = models.DateField(null=True, blank=True, editable=False)

    class Meta:
        ordering = ["ahu", "position", "id"]

    def __str__(self) -> str:
        return f"{self.ahu.tag} / {self.name}"

    def get_absolute_url(self) -> str:
        return reverse("inventory:label", kwargs={"code": self.label_code})

    def clean(self) -> None:
        from ..inputs import COMPONENT_TEXTS, component_date_problems, text_field_problems

        errors: dict = dict(component_date_problems(self, today=today_at(self, "ahu__building__site")))
        errors.update(text_field_problems(self, texts=COMPONENT_TEXTS))
        try:
            self.specs = validate_specs(kind=self.kind, specs=self.specs)
        except SpecErrors as exc:
            errors["specs"] = [f"{k}: {v}" if not v.startswith(k) else v for k, v in exc.errors.items()]
        if self.parent_id is not None:
            if self.parent_id == self.pk:
                errors["parent"] = "a component cannot contain itself"
            elif self.parent.ahu_id != self.ahu_id:
                errors["parent"] = "the parent component belongs to another unit"
            else:
                node = self.parent
                while node is not None:
                    if node.pk == self.pk and self.pk is not None:
                        errors["parent"] = "this parent would make a loop in the component tree"
                        break
                    node = node.parent
        if errors:
            raise ValidationError(errors)

    def spec(self, name: str, default=None):
        return self.specs.get(name, default)
