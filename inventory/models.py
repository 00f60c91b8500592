"""Sites, buildings, air handling units and their component trees."""

import datetime as dt
import math
import secrets
import uuid
import zoneinfo
from typing import Any

from django.conf import settings
from django.core.exceptions import ObjectDoesNotExist, ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.urls import reverse
from django.utils import timezone

from accounts.models import Organisation
from engineering.formatting import count_text
from engineering.ventilation import ZONE_AIR_DISTRIBUTION_EFFECTIVENESS

from .specs import SPECS, SpecErrors, validate_specs

# Label codes avoid letters and digits that are easy to misread on a dusty label.
LABEL_ALPHABET = "23456789ABCDEFGHJKMNPQRSTUVWXYZ"


def new_label_code(prefix: str) -> str:
    return prefix + "".join(secrets.choice(LABEL_ALPHABET) for _ in range(6))


def new_unit_code() -> str:
    return new_label_code("U")


def new_component_code() -> str:
    return new_label_code("C")


def validate_time_zone(value: str) -> None:
    if value not in zoneinfo.available_timezones():
        raise ValidationError(f"time_zone={value!r} is not an IANA time zone name such as Europe/Berlin")


def validate_monthly_normals(value) -> None:
    if not isinstance(value, list) or len(value) != 12:
        raise ValidationError(f"expected 12 monthly values in °C (January to December), got {value!r}")
    for month, item in enumerate(value, start=1):
        if isinstance(item, bool) or not isinstance(item, (int, float)) or not math.isfinite(item):
            raise ValidationError(f"month {month}: {item!r} is not a number in °C")
        if not -60 <= item <= 50:
            raise ValidationError(f"month {month}: {item!r} °C is outside −60 to 50 °C")


def default_normals_min() -> list[float]:
    return [-2.0, -1.5, 1.0, 4.5, 8.5, 11.5, 13.5, 13.0, 10.0, 6.0, 2.5, -0.5]


def default_normals_max() -> list[float]:
    return [3.5, 5.0, 9.5, 14.5, 19.0, 22.0, 24.0, 23.5, 19.5, 14.0, 8.0, 4.5]


class Site(models.Model):
    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="sites")
    client = models.ForeignKey(
        Organisation,
        on_delete=models.PROTECT,
        related_name="client_sites",
        null=True,
        blank=True,
        help_text="The owner the site is maintained for, if not the organisation itself.",
    )
    code = models.SlugField(max_length=40, help_text="Short code, unique in the organisation.")
    name = models.CharField(max_length=200)
    address = models.TextField(blank=True)
    access_notes = models.TextField(
        blank=True,
        help_text="How a technician gets in and up to the plant: keys, reception, parking, roof access, escorts.",
    )
    latitude = models.FloatField(validators=[MinValueValidator(-90), MaxValueValidator(90)])
    longitude = models.FloatField(validators=[MinValueValidator(-180), MaxValueValidator(180)])
    altitude_m = models.FloatField(default=0, validators=[MinValueValidator(-500), MaxValueValidator(5000)])
    time_zone = models.CharField(max_length=64, default="UTC", validators=[validate_time_zone])
    normals_min_c = models.JSONField(
        default=default_normals_min,
        validators=[validate_monthly_normals],
        help_text="Mean daily minimum outdoor temperature per month, °C, January first.",
    )
    normals_max_c = models.JSONField(
        default=default_normals_max,
        validators=[validate_monthly_normals],
        help_text="Mean daily maximum outdoor temperature per month, °C, January first.",
    )
    preheat_threshold_c = models.FloatField(
        default=5.0,
        validators=[MinValueValidator(-20), MaxValueValidator(15)],
        help_text="Daily minimum at which the freeze season starts (about 5 °C is common practice).",
    )
    cooling_threshold_c = models.FloatField(
        default=24.0,
        validators=[MinValueValidator(10), MaxValueValidator(45)],
        help_text="Daily maximum at which the cooling season starts.",
    )
    freeze_season_start = models.DateField(null=True, blank=True, editable=False)
    cooling_season_start = models.DateField(null=True, blank=True, editable=False)
    season_source = models.CharField(max_length=40, blank=True, editable=False)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]
        constraints = [models.UniqueConstraint(fields=["organisation", "code"], name="site_unique_code_in_org")]

    def __str__(self) -> str:
        return self.name

    def clean(self) -> None:
        for name in ("normals_min_c", "normals_max_c"):
            try:
                validate_monthly_normals(getattr(self, name))
            except ValidationError as exc:
                raise ValidationError({name: exc.messages}) from None
        bad = [m + 1 for m, (lo, hi) in enumerate(zip(self.normals_min_c, self.normals_max_c, strict=True)) if lo > hi]
        if bad:
            raise ValidationError(
                {
                    "normals_max_c": f"monthly maximum is below the minimum in {count_text(len(bad), 'month')} (month "
                    + ", ".join(str(m) for m in bad)
                    + ")"
                }
            )


class Building(models.Model):
    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="buildings")
    code = models.SlugField(max_length=40)
    name = models.CharField(max_length=200)
    floors = models.PositiveSmallIntegerField(null=True, blank=True)

    class Meta:
        ordering = ["site__name", "name"]
        constraints = [models.UniqueConstraint(fields=["site", "code"], name="building_unique_code_in_site")]

    def __str__(self) -> str:
        return f"{self.site.name} / {self.name}"


# Ways supply and return air are placed in the space, with their zone air distribution
# effectiveness (ASHRAE 62.1, engineering.ventilation; from memory).
AIR_DISTRIBUTION_CHOICES = [
    (key, f"{label} (effectiveness {ez:.1f})") for key, (ez, label) in ZONE_AIR_DISTRIBUTION_EFFECTIVENESS.items()
]


class VentilationZones(models.TextChoices):
    SINGLE = "single_zone", "One zone"
    MULTI = "multi_zone", "Several zones with recirculated air"


def _today_at(obj: models.Model, path: str) -> dt.date:
    """Today at the site ``obj`` belongs to (``path``: the relations to it), by ``inventory.today``: the day its
    dates are judged on. A record not filed under a site yet (a form or a file row naming none) has no other
    day to go by than the server's."""
    from .today import today_for

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
        from .inputs import ahu_problems

        own = {"occupant_diversity", "system_ventilation_efficiency"}
        problems = {}
        for name, message in ahu_problems(self, today=_today_at(self, "building__site")).items():
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
        from .inputs import AHU_NUMBERS  # the ranges live in the input policy's table

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
        from .inputs import COMPONENT_TEXTS, component_date_problems, text_field_problems

        errors: dict = dict(component_date_problems(self, today=_today_at(self, "ahu__building__site")))
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
