"""Reads of stored reports. A person may open a report only if they may see every site it covers."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.http import Http404

from accounts.models import User
from inventory.selectors import sites_visible_to

from .models import Report


def report_visible(*, user: User, report: Report) -> bool:
    if not getattr(user, "is_authenticated", False):
        return False
    covered = set(report.site_ids)
    if not covered:
        return False
    visible = set(sites_visible_to(user=user).filter(pk__in=covered).values_list("pk", flat=True))
    return covered <= visible


def report_for(*, user: User, public_id) -> Report:
    """THE access function of a report: ``Http404`` unless the person may see every site it covers (an
    unknown or malformed id gets the same answer)."""
    try:
        report = Report.objects.filter(public_id=public_id).select_related("requested_by").first()
    except (ValueError, ValidationError):
        report = None
    if report is None or not report_visible(user=user, report=report):
        raise Http404("No such report among those you may see.")
    return report


def reports_visible_to(*, user: User, limit: int = 100) -> list[Report]:
    """The person's recent reports that they may still open, newest first."""
    visible = set(sites_visible_to(user=user).values_list("pk", flat=True))
    orgs = user.memberships.values("organisation_id")
    candidates = (
        Report.objects.filter(organisation_id__in=orgs)
        .select_related("requested_by")
        .order_by("-created_at", "-id")[: limit * 3]
    )
    return [r for r in candidates if r.site_ids and set(r.site_ids) <= visible][:limit]
