"""Air handling units: their ventilation design, service dates and the guards on their fields."""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

from django.core.exceptions import ObjectDoesNotExist, ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.urls import reverse

from engineering.ventilation import ZONE_AIR_DISTRIBUTION_EFFECTIVENESS

from .codes import new_unit_code
from .sites import Building, Site

# Ways supply and return air are placed in the space, with their zone air distribution
# effectiveness (ASHRAE 62.1, engineering.ventilation; from memory).
AIR_DISTRIBUTION_CHOICES = [
    (key, f"{label} (effectiveness {ez:.1f})") for key, (ez, label) in ZONE_AIR_DISTRIBUTION_EFFECTIVENESS.items()
]


class VentilationZones(models.TextChoices):
    SINGLE = "single_zone", "One zone"
    MULTI = "multi_zone", "Several zones with recirculated air"


def today_at(obj: models.Model, path: str) -> dt.date:
    """Today at the site ``obj`` belongs to (``path``: the relations to it), by ``inventory.today``: the day its
    dates are judged on. A record not filed under a site yet (a form or a file row naming none) has no other
    day to go by than the server's."""
    from ..today import today_for

    site: Any = obj
    for name in path.split("__"):
        try:
            site = getattr(site, name)
        except ObjectDoesNotExist:  # the relation is not set
            site = None
        if site is None:
            break
    return today_for(site)


def _refused_by_field(obj, name: str) -> bool:
    """True when the field's own validators refuse its value (they then say it; the policy does not repeat it).
    A database column's bounds (SQLite's bigint for a PositiveIntegerField) are not a physical range."""
    value = getattr(obj, name)
    # Only the validators declared on the field: IntegerField adds the database's own column range (2³¹ − 1 on
    # PostgreSQL, 2⁶³ − 1 on SQLite), which would otherwise speak instead of the policy's physical range.
    for validator in obj._meta.get_field(name)._validators:
        try:
            validator(value)
        except ValidationError:
            return True
    return False


class AHU(models.Model):
    class HeatRecovery(models.TextChoices):
        NONE = "none", "None"
        WHEEL = "wheel", "Rotary wheel"
        PLATE = "plate", "Plate exchanger"
        RUN_AROUND = "run_around", "Run-around coil"

    class Status(models.TextChoices):
        IN_SERVICE = "in_service", "In service"
        STANDBY = "standby", "Standby"
        OUT_OF_SERVICE = "out_of_service", "Out of service"
        RETIRED = "retired", "Retired"

    building = models.ForeignKey(Building, on_delete=models.CASCADE, related_name="ahus")
    tag = models.CharField(max_length=40, help_text="The unit's tag as painted on it, e.g. AHU-03.")
    label_code = models.CharField(max_length=12, unique=True, default=new_unit_code, editable=False)
    location = models.CharField(max_length=200, blank=True)
    area_served = models.CharField(max_length=200, blank=True)
    space_kind = models.CharField(
        max_length=40, blank=True, help_text="Kind of space served (for the ventilation requirement)."
    )
    floor_area_m2 = models.FloatField(null=True, blank=True, validators=[MinValueValidator(0)])
    design_occupants = models.PositiveIntegerField(null=True, blank=True)
    design_supply_airflow_m3s = models.FloatField(validators=[MinValueValidator(0.01), MaxValueValidator(100)])
    design_min_oa_fraction = models.FloatField(
        validators=[MinValueValidator(0), MaxValueValidator(1)], help_text="Design minimum outdoor-air fraction, 0–1."
    )
    full_outdoor_air = models.BooleanField(default=False, help_text="100 % outdoor air: no recirculation.")
    # Ventilation configuration for ASHRAE 62.1 (engineering.ventilation.outdoor_air_intake): with
    # full_outdoor_air it gives the system (single zone, 100 % outdoor air, multi-zone recirculating).
    ventilation_zones = models.CharField(
        "zones served",
        max_length=20,
        choices=VentilationZones.choices,
        default=VentilationZones.SINGLE,
        help_text="One zone, or several zones sharing recirculated air (sets how the outdoor air needed is found).",
        error_messages={"invalid_choice": "Zones served %(value)r is not allowed; choose one zone or several zones."},
    )
    air_distribution = models.CharField(
        "air distribution in the space",
        max_length=60,
        choices=AIR_DISTRIBUTION_CHOICES,
        default="ceiling_supply_cool",
        help_text="How supply and return air are placed; sets the zone air distribution effectiveness (ASHRAE 62.1).",
        error_messages={
            "invalid_choice": (
                "Air distribution %(value)r is not one of the listed ways supply and return air are placed."
            )
        },
    )
    occupant_diversity = models.FloatField(
        "occupant diversity",
        null=True,
        blank=True,
        help_text=(
            "Several zones only: people present at once ÷ the sum of each zone's peak, 0.05–1 "
            "(leave empty for 1, no diversity)."
        ),
    )
    system_ventilation_efficiency = models.FloatField(
        "system ventilation efficiency",
        null=True,
        blank=True,
        help_text=(
            "Several zones only: from the design calculation, 0.1–1 (leave empty to use the simplified procedure)."
        ),
    )
    heat_recovery = models.CharField(max_length=20, choices=HeatRecovery.choices, default=HeatRecovery.NONE)
    supply_air_setpoint_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(5), MaxValueValidator(45)]
    )
    duct_static_setpoint_pa = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(3000)]
    )
    service_start = models.DateField(null=True, blank=True)
    status = models.CharField(max_length=20, choices=Status.choices, default=Status.IN_SERVICE)
    notes = models.TextField(blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        verbose_name = "air handling unit"
        ordering = ["building__site__name", "tag"]
        constraints = [models.UniqueConstraint(fields=["building", "tag"], name="ahu_unique_tag_in_building")]

    def __str__(self) -> str:
        return f"{self.tag} ({self.building.site.name})"

    def get_absolute_url(self) -> str:
        return reverse("inventory:label", kwargs={"code": self.label_code})

    @property
    def display_name(self) -> str:
        """The unit as a person reads it beside other units: its tag and its building, "AHU-01 (Ropewalk Hall)".

        Tags are unique only within a building, so a site may have two AHU-01s; the building tells them apart.
        """
        return f"{self.tag} ({self.building.name})"

    def clean(self) -> None:
        self._clean_policy()
        self._clean_ventilation()
        if self.full_outdoor_air and self.design_min_oa_fraction is not None and self.design_min_oa_fraction < 1:
            raise ValidationError(
                {
                    "design_min_oa_fraction": (
                        f"a 100 % outdoor-air unit has design_min_oa_fraction=1; got {self.design_min_oa_fraction}"
                    )
                }
            )

    def _clean_policy(self) -> None:
        """The input policy (inventory.inputs): finite numbers in their physical range, a service start from 2000
        to ten years ahead. A finite value out of a range the field's own validators give is left to them, and
        the ventilation numbers to ``_clean_ventilation``, so each problem is said once."""
        from ..inputs import ahu_problems

        own = {"occupant_diversity", "system_ventilation_efficiency"}
        problems = {}
        for name, message in ahu_problems(self, today=today_at(self, "building__site")).items():
            value = getattr(self, name)
            if name in own or (
                isinstance(value, int | float) and math.isfinite(value) and _refused_by_field(self, name)
            ):
                continue
            problems[name] = message
        if problems:
            raise ValidationError(problems)

    def _clean_ventilation(self) -> None:
        """Occupant diversity and system ventilation efficiency: numbers in range, for several zones only."""
        from ..inputs import AHU_NUMBERS  # the ranges live in the input policy's table

        errors = {}
        for name in ("occupant_diversity", "system_ventilation_efficiency"):
            label, lo, hi = AHU_NUMBERS[name].label, AHU_NUMBERS[name].minimum, AHU_NUMBERS[name].maximum
            value = getattr(self, name)
            if value is None:
                continue
            if not isinstance(value, int | float) or isinstance(value, bool):
                continue  # not a number: the field's own check says so
            if not math.isfinite(value) or not lo <= value <= hi:
                errors[name] = f"{label} {value:g} is outside what is allowed: a number from {lo:g} to {hi:g}."
            elif self.full_outdoor_air or self.ventilation_zones != VentilationZones.MULTI:
                errors[name] = (
                    f"{label} {value:g} applies only to a unit serving several zones with recirculated air; "
                    "leave it empty for a unit serving one zone or taking 100 % outdoor air."
                )
        if errors:
            raise ValidationError(errors)

    @property
    def ventilation_system(self) -> str:
        """The ASHRAE 62.1 system kind: full_outdoor_air, single_zone or multi_zone."""
        return "full_outdoor_air" if self.full_outdoor_air else self.ventilation_zones

    @property
    def site(self) -> Site:
        return self.building.site
