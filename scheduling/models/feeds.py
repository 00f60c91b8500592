"""A person's calendar feed (its secret token)."""

from __future__ import annotations

import secrets

from django.conf import settings
from django.db import models


def new_feed_token() -> str:
    return secrets.token_urlsafe(32)


class CalendarFeed(models.Model):
    """A secret URL that serves one technician's assigned visits as iCalendar."""

    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="calendar_feeds")
    token = models.CharField(max_length=64, unique=True, default=new_feed_token, editable=False)
    created_at = models.DateTimeField(auto_now_add=True)
    revoked_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"Calendar of {self.user} ({'revoked' if self.revoked_at else 'active'})"
