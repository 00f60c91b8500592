"""Sites (their zone, climate normals and label prefix) and their buildings."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models

from accounts.models import Organisation
from engineering.formatting import count_text

from .codes import default_normals_max, default_normals_min, validate_monthly_normals, validate_time_zone


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
