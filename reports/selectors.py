"""Reads of stored reports. A person may open a report only if they may see every site it covers."""

from __future__ import annotations

import contextlib
import uuid
import zoneinfo
from collections.abc import Iterable

from django.core.exceptions import ValidationError
from django.http import Http404

from accounts.clock import local_date_of
from accounts.models import User
from engineering.units import SYSTEMS
from inventory.selectors import sites_visible_to

from .documents import period_text
from .models import Report
from .rendering import paper_for


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


# What a stored report covers, in words, from its stored parameters: the list page and the API say the same.
MAX_NAMED_SITES = 3


def _names(names: list[str], *, what: str) -> str:
    """ "A", "A and B", "A, B, C and 2 more sites"."""
    if len(names) > MAX_NAMED_SITES:
        rest = len(names) - MAX_NAMED_SITES
        return f"{', '.join(names[:MAX_NAMED_SITES])} and {rest} more {what}{'s' if rest > 1 else ''}"
    if len(names) > 1:
        return f"{', '.join(names[:-1])} and {names[-1]}"
    return names[0] if names else f"no {what}"


def _ids(value) -> list[int]:
    if isinstance(value, int) and not isinstance(value, bool):
        return [value]
    if isinstance(value, list):
        return [v for v in value if isinstance(v, int) and not isinstance(v, bool)]
    return []


def reports_covers(*, reports: Iterable[Report]) -> dict[int, str]:
    """{report id: what it covers in words} for many reports in at most three queries (sites, units, work orders),
    from what each stored: its sites by name, its unit by tag and building, its work order by title and day, and
    its period ("1 Dec 2025 – 30 Nov 2026"). A record removed since reads as such, never as an id."""
    from inventory.models import AHU, Site
    from scheduling.models import WorkOrder

    reports = list(reports)
    site_ids = {i for r in reports for i in r.site_ids}
    unit_ids = {
        i
        for r in reports
        for i in _ids(r.parameters.get("unit") if r.kind == Report.Kind.UNIT_HISTORY else r.parameters.get("units"))
    }
    order_ids = set()
    for r in reports:
        if r.kind == Report.Kind.INSPECTION:
            with contextlib.suppress(ValueError):  # a malformed stored id names no work order
                order_ids.add(uuid.UUID(str(r.parameters.get("work_order"))))
    sites = dict(Site.objects.filter(pk__in=site_ids).values_list("pk", "name")) if site_ids else {}
    units = {
        pk: (tag, building, site)
        for pk, tag, building, site in AHU.objects.filter(pk__in=unit_ids).values_list(
            "pk", "tag", "building__name", "building__site__name"
        )
    }
    orders = {
        str(public_id): (title, due, done_at, tag, building, site, zone)
        for public_id, title, due, done_at, tag, building, site, zone in WorkOrder.objects.filter(
            public_id__in=order_ids
        ).values_list(
            "public_id",
            "title",
            "due_date",
            "completed_at",
            "ahu__tag",
            "ahu__building__name",
            "ahu__building__site__name",
            "ahu__building__site__time_zone",
        )
    }

    def unit_words(pk: int) -> str:
        if pk not in units:
            return "a unit no longer in the registry"
        tag, building, site = units[pk]
        return f"{tag} in {building}, {site}"

    def site_names(ids) -> str:
        return _names([sites.get(i, "a site no longer in the registry") for i in ids], what="site")

    out = {}
    for r in reports:
        p = r.parameters
        if r.kind == Report.Kind.COMPLIANCE:
            parts = [site_names(_ids(p.get("sites")) or r.site_ids), period_text(p)]
        elif r.kind == Report.Kind.UNIT_HISTORY:
            parts = [unit_words(next(iter(_ids(p.get("unit"))), 0)), period_text(p)]
        elif r.kind == Report.Kind.INSPECTION:
            found = orders.get(str(p.get("work_order")))
            if found is None:
                parts = ["a work order no longer in the records"]
            else:
                title, due, done_at, tag, building, site, zone = found
                day = (
                    f"done {local_date_of(done_at.astimezone(zoneinfo.ZoneInfo(zone)))}"
                    if done_at
                    else f"due {local_date_of(due)}"
                )
                parts = [f"{title}, {day}", f"{tag} in {building}, {site}"]
        elif r.kind == Report.Kind.LABELS:
            n_units, n_parts = len(_ids(p.get("units"))), len(_ids(p.get("components")))
            counted = [f"{n} {what}{'s' if n != 1 else ''}" for n, what in ((n_units, "unit"), (n_parts, "part")) if n]
            parts = [f"Labels of {' and '.join(counted) or 'nothing'}", site_names(r.site_ids)]
        else:
            parts = [site_names(r.site_ids)]
        parts.append(report_format_text(report=r))
        out[r.pk] = " · ".join(part for part in parts if part)
    return out


PAPER_WORDS = {"A4": "A4", "letter": "Letter"}


def report_format_text(*, report: Report) -> str:
    """ "SI units, A4, archival PDF/A": how the report reads and prints, so two reports of the same work order
    in SI and US units tell apart. The paper is the one the document is laid out on (``paper_for`` the units;
    a label sheet's own layout); a report stored without units says only its paper."""
    p = report.parameters if isinstance(report.parameters, dict) else {}
    words = []
    system = p.get("unit_system")
    if report.kind == Report.Kind.LABELS:
        layout = str(p.get("layout") or "a4-3x8")
        words.append("Letter" if layout.startswith("letter") else "A4")
    elif system in SYSTEMS:
        words += [f"{system.upper()} units", PAPER_WORDS.get(paper_for(system), paper_for(system))]
    if report.pdfa:
        words.append("archival PDF/A")
    return ", ".join(words)


def report_covers(*, report: Report) -> str:
    """What one report covers in words (``reports_covers``)."""
    return reports_covers(reports=[report])[report.pk]


def report_file_text(*, report: Report) -> str:
    """ "3 pages, 84 kB" for a finished report ("" before); sizes in decimal units (1 kB = 1000 bytes)."""
    if report.status != Report.Status.DONE:
        return ""
    pages = f"{report.page_count} page{'s' if report.page_count != 1 else ''}"
    size = report.size_bytes
    if size < 1000:
        shown = f"{size} bytes"
    elif size < 999_500:
        shown = f"{round(size / 1000)} kB"
    else:
        shown = f"{size / 1_000_000:.1f} MB"
    return f"{pages}, {shown}"
