"""Trend samples: storing, reading and purging day buckets (``automation.models.TrendDay``)."""

from __future__ import annotations

from django.db import transaction
from django.utils import timezone

from .models import TrendDay, trend_retention


@transaction.atomic
def trend_purge() -> int:
    """Delete day buckets older than ``PLENUM_TREND_RETENTION_DAYS``; returns how many were deleted."""
    cutoff = (timezone.now() - trend_retention()).date()
    deleted, _ = TrendDay.objects.filter(day__lt=cutoff).delete()
    return deleted
