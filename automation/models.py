"""Building-automation points of a unit and their trends.

A point is one value the building automation system (BAS) keeps for a unit: a sensor, a command, a status or a
set point, named by its Brick Schema class (``automation.vocabulary``). It belongs to the unit and, where the
value is a part's (a fan's speed, a damper's position, a filter bank's pressure drop), to that component. It
is organisation-scoped through the unit's site.

Trend values are stored in day buckets: one row per point and UTC day holding that day's samples as packed
arrays (seconds since midnight UTC as unsigned 32-bit integers, values as 64-bit floats). At 5,000 units × 20
points × 96 samples a day that is 100,000 rows of about 1.2 kB a day instead of 9.6 million rows, on PostgreSQL
and on SQLite alike; ``PLENUM_TREND_RETENTION_DAYS`` says how long buckets are kept (``trend_purge``).
"""

from __future__ import annotations

import datetime as dt
import uuid
from array import array

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q
from django.utils import timezone

from accounts.models import Organisation
from engineering.units import UnitSystem
from inventory.models import AHU, Component, Site

from .vocabulary import BRICK_CLASS_CHOICES, PointUnit

# BACnet object and device instances are 22-bit numbers; 4194303 is reserved as "no instance" for devices
# (ASHRAE 135, from memory).
BACNET_DEVICE_MAX = 4_194_302
BACNET_INSTANCE_MAX = 4_194_303


class BacnetObjectType(models.TextChoices):
    ANALOG_INPUT = "analog-input", "Analog input"
    ANALOG_OUTPUT = "analog-output", "Analog output"
    ANALOG_VALUE = "analog-value", "Analog value"
    BINARY_INPUT = "binary-input", "Binary input"
    BINARY_OUTPUT = "binary-output", "Binary output"
    BINARY_VALUE = "binary-value", "Binary value"
    MULTI_STATE_INPUT = "multi-state-input", "Multi-state input"
    MULTI_STATE_OUTPUT = "multi-state-output", "Multi-state output"
    MULTI_STATE_VALUE = "multi-state-value", "Multi-state value"


class Point(models.Model):
    ahu = models.ForeignKey(AHU, on_delete=models.CASCADE, related_name="points", verbose_name="unit")
    # A part that a point names stays while the point does (component_delete then says what names it).
    component = models.ForeignKey(Component, on_delete=models.PROTECT, null=True, blank=True, related_name="points")
    name = models.CharField(max_length=200, help_text="The point's name in the building automation system.")
    brick_class = models.CharField("Brick class", max_length=60, choices=BRICK_CLASS_CHOICES)
    unit = models.CharField("SI unit", max_length=20, choices=PointUnit.choices)
    bacnet_device_instance = models.PositiveIntegerField(
        "BACnet device instance", null=True, blank=True, validators=[MaxValueValidator(BACNET_DEVICE_MAX)]
    )
    bacnet_object_type = models.CharField(
        "BACnet object type", max_length=30, blank=True, choices=BacnetObjectType.choices
    )
    bacnet_object_instance = models.PositiveIntegerField(
        "BACnet object instance", null=True, blank=True, validators=[MaxValueValidator(BACNET_INSTANCE_MAX)]
    )
    last_value = models.FloatField(null=True, blank=True, editable=False)
    last_value_at = models.DateTimeField(null=True, blank=True, editable=False)
    stale = models.BooleanField(
        default=False, editable=False, help_text="The last poll or import brought no value for this point."
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["ahu", "name"]
        constraints = [
            models.UniqueConstraint(fields=["ahu", "name"], name="point_unique_name_in_unit"),
            models.CheckConstraint(
                condition=(
                    Q(bacnet_device_instance__isnull=True, bacnet_object_type="", bacnet_object_instance__isnull=True)
                    | (
                        Q(bacnet_device_instance__isnull=False, bacnet_object_instance__isnull=False)
                        & ~Q(bacnet_object_type="")
                    )
                ),
                name="point_bacnet_address_whole_or_empty",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.ahu.tag} / {self.name}"

    @property
    def site(self) -> Site:
        return self.ahu.building.site

    @property
    def has_bacnet_address(self) -> bool:
        return self.bacnet_device_instance is not None


class TrendDay(models.Model):
    """One point's samples of one UTC day, as two packed arrays of equal length in time order."""

    point = models.ForeignKey(Point, on_delete=models.CASCADE, related_name="trend_days")
    day = models.DateField(help_text="The UTC day the samples fall in.")
    count = models.PositiveIntegerField(default=0)
    seconds = models.BinaryField(default=bytes, help_text="Seconds after 00:00 UTC, unsigned 32-bit integers.")
    values = models.BinaryField(default=bytes, help_text="Values in the point's SI unit, 64-bit floats.")

    class Meta:
        ordering = ["point", "day"]
        constraints = [models.UniqueConstraint(fields=["point", "day"], name="trend_day_unique_point_day")]
        indexes = [models.Index(fields=["day"], name="trend_day_day")]

    def __str__(self) -> str:
        return f"{self.point} {self.day} ({self.count} samples)"

    def samples(self) -> list[tuple[dt.datetime, float]]:
        """The day's samples as (aware UTC time, value), in time order."""
        secs, vals = array("I"), array("d")
        secs.frombytes(bytes(self.seconds))
        vals.frombytes(bytes(self.values))
        start = dt.datetime.combine(self.day, dt.time(), tzinfo=dt.UTC)
        return [(start + dt.timedelta(seconds=s), v) for s, v in zip(secs, vals, strict=True)]

    def set_samples(self, samples: dict[int, float]) -> None:
        """Store ``{seconds after midnight UTC: value}`` in time order."""
        keys = sorted(samples)
        self.seconds = array("I", keys).tobytes()
        self.values = array("d", (samples[k] for k in keys)).tobytes()
        self.count = len(keys)


def trend_retention() -> dt.timedelta:
    return dt.timedelta(days=settings.PLENUM_TREND_RETENTION_DAYS)


class TrendImportJob(models.Model):
    """A trend CSV import run in the background (big files); all or nothing like the import in the request:
    ``errors`` lists every bad row or cell (line, column, value, reason) and then nothing was stored."""

    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        CHECKING = "checking", "Checking rows"
        DONE = "done", "Imported"
        REFUSED = "refused", "Refused: nothing imported"
        FAILED = "failed", "Failed: nothing imported"

    public_id = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    organisation = models.ForeignKey(Organisation, on_delete=models.CASCADE, related_name="trend_import_jobs")
    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="trend_import_jobs")
    layout = models.CharField(max_length=10, help_text="wide or long")
    units = models.CharField(
        max_length=2,
        choices=[(s.value, s.value.upper()) for s in UnitSystem],
        default=UnitSystem.SI.value,
        help_text="The units the file's values are in: si (°C, Pa, m³/s) or us (°F, in. w.c., cfm).",
    )
    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="trend_import_jobs"
    )
    file_name = models.CharField(max_length=200, blank=True)
    source = models.TextField(blank=True, help_text="The uploaded file's text; emptied once the job has finished.")
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    rows_total = models.PositiveIntegerField(default=0)
    values_stored = models.PositiveIntegerField(default=0)
    errors = models.JSONField(default=list, blank=True, help_text="Every bad row or cell: line, column, value, reason.")
    detail = models.TextField(blank=True)
    created_at = models.DateTimeField(default=timezone.now, editable=False)
    finished_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at", "-id"]

    def __str__(self) -> str:
        return f"trend import {self.public_id} ({self.status})"


class BacnetDevice(models.Model):
    """A BACnet/IP device of a site that holds mapped points: where the poller reaches it, how often, and how it
    answered last (``automation.polling``). Points name their device by its instance (``Point``)."""

    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="bacnet_devices")
    device_instance = models.PositiveIntegerField(
        "BACnet device instance", validators=[MaxValueValidator(BACNET_DEVICE_MAX)]
    )
    address = models.CharField(
        "BACnet/IP address", max_length=60, help_text="host:port as the poller reaches it (port 47808 if left out)."
    )
    poll_seconds = models.PositiveIntegerField(
        "Poll every (s)", default=900, validators=[MinValueValidator(10), MaxValueValidator(86_400)]
    )
    read_multiple = models.BooleanField(
        null=True, editable=False, help_text="Whether the device answers ReadPropertyMultiple (empty: not yet known)."
    )
    polled_at = models.DateTimeField(null=True, blank=True, editable=False)
    answered_at = models.DateTimeField(null=True, blank=True, editable=False)
    error = models.CharField(max_length=300, blank=True, editable=False, help_text="Why the last poll got no answer.")

    class Meta:
        ordering = ["site", "device_instance"]
        constraints = [
            models.UniqueConstraint(fields=["site", "device_instance"], name="bacnet_device_unique_in_site"),
        ]

    def __str__(self) -> str:
        return f"{self.site} / BACnet device {self.device_instance}"


class PointPoll(models.Model):
    """The last poll of one point: when, and why it brought no value (empty when it did)."""

    point = models.OneToOneField(Point, on_delete=models.CASCADE, primary_key=True, related_name="poll")
    polled_at = models.DateTimeField()
    reason = models.CharField(max_length=300, blank=True)

    def __str__(self) -> str:
        return f"{self.point}: {self.reason or 'read'}"


# Faults and filter days found in the trends (automation.judging, automation.feeds): their own module.
from .fault_models import Fault, FilterDay  # noqa: E402,F401
