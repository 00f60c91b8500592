"""What the schedule reads from the field: run-hour meter readings and daily outdoor temperatures."""

from __future__ import annotations

from django.conf import settings
from django.core.validators import MinValueValidator
from django.db import models

from inventory.models import AHU, Component, Site


class MeterReading(models.Model):
    class Source(models.TextChoices):
        CHECKLIST = "checklist", "Checklist"
        BAS_CSV = "bas_csv", "Building-automation CSV"
        API = "api", "API"
        MANUAL = "manual", "Typed in"
        # Integrated from a fan's status or speed trend (automation.feeds): the fan's own meter.
        BAS_TREND = "bas_trend", "Building-automation trend"

    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="meter_readings")
    component = models.ForeignKey(
        Component,
        on_delete=models.CASCADE,
        null=True,
        blank=True,
        related_name="meter_readings",
        help_text="The fan whose meter this is; empty for the unit's own meter.",
    )
    hours = models.FloatField(validators=[MinValueValidator(0)])
    taken_at = models.DateTimeField()
    source = models.CharField(max_length=20, choices=Source.choices, default=Source.MANUAL)
    is_reset = models.BooleanField(default=False, help_text="The meter was replaced or reset at this reading.")
    recorded_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["ahu", "taken_at", "id"]
        indexes = [models.Index(fields=["ahu", "component", "taken_at"])]

    def __str__(self) -> str:
        return f"{self.ahu.tag}: {self.hours:g} h at {self.taken_at:%Y-%m-%d %H:%M}"


class OutdoorTemperature(models.Model):
    class Source(models.TextChoices):
        FORECAST = "forecast", "Forecast"
        CSV = "csv", "Imported CSV"
        NORMALS = "normals", "Climate normals"

    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="outdoor_temperatures")
    date = models.DateField()
    min_c = models.FloatField()
    max_c = models.FloatField()
    mean_c = models.FloatField(null=True, blank=True)
    source = models.CharField(max_length=10, choices=Source.choices)
    fetched_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["site", "date"]
        constraints = [models.UniqueConstraint(fields=["site", "date"], name="outdoortemp_unique_site_date")]

    def __str__(self) -> str:
        return f"{self.site.code} {self.date}: {self.min_c:.1f}…{self.max_c:.1f} °C ({self.source})"
