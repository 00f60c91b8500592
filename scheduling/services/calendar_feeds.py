"""Secret calendar addresses of a person's assigned visits: issued, revoked, ended by a new password."""

from __future__ import annotations

from django.db import transaction
from django.utils import timezone

from accounts.models import User
from accounts.services import audit_record

from ..models import CalendarFeed


@transaction.atomic
def calendar_feed_issue(*, user: User) -> CalendarFeed:
    """A new secret feed URL for the user; older ones are revoked."""
    CalendarFeed.objects.filter(user=user, revoked_at__isnull=True).update(revoked_at=timezone.now())
    feed = CalendarFeed.objects.create(user=user)
    audit_record(actor=user, obj=feed, action="calendar_feed_issued")  # never the token: it is the key
    return feed


def calendar_feeds_revoke_for_password(sender: object = None, *, user: User, **kwargs: object) -> None:
    """accounts.signals.password_changed: a new password ends the person's secret calendar URLs."""
    CalendarFeed.objects.filter(user=user, revoked_at__isnull=True).update(revoked_at=timezone.now())


@transaction.atomic
def calendar_feed_revoke(*, feed: CalendarFeed, by: User | None = None) -> None:
    if feed.revoked_at is None:
        feed.revoked_at = timezone.now()
        feed.save(update_fields=["revoked_at"])
        audit_record(actor=by, obj=feed, action="calendar_feed_revoked")
