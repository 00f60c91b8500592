"""Reads for the property manager's dashboard. Every site comes through inventory.selectors.sites_visible_to."""

from __future__ import annotations

import datetime as dt

from django.db.models import Q
from django.utils import timezone

from inspections.models import Evaluation, Finding, Reading
from inventory.models import ComponentKind, Site
from inventory.selectors import sites_visible_to
from scheduling.models import OutdoorTemperature, TaskCategory, WorkOrder, WorkOrderTask

SEVERITIES = ("critical", "high", "medium", "low")


def site_summaries(*, user, today: dt.date | None = None, days: int = 365) -> list[dict]:
    """Per visible site: preventive work done on time, overdue, open findings, freeze readiness.

    A constant number of queries however many sites there are.
    """
    today = today or timezone.localdate()
    sites = list(sites_visible_to(user=user).order_by("name"))
    ids = [s.pk for s in sites]
    since = today - dt.timedelta(days=days)
    out = {
        s.pk: {
            "site": s,
            "done": 0,
            "on_time": 0,
            "overdue": 0,
            "findings": dict.fromkeys(SEVERITIES, 0),
            "oldest_finding_days": None,
            "freeze_ready": [],
            "freeze_open": 0,
        }
        for s in sites
    }
    done = WorkOrder.objects.filter(
        ahu__building__site_id__in=ids,
        kind=WorkOrder.Kind.PREVENTIVE,
        state__in=[WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED],
        completed_at__date__gte=since,
    ).values_list("ahu__building__site_id", "completed_at", "due_date", "overdue_on")
    for site_id, completed_at, due, overdue_on in done:
        row = out[site_id]
        row["done"] += 1
        if completed_at.date() < (overdue_on or due + dt.timedelta(days=1)):
            row["on_time"] += 1
    overdue = (
        WorkOrder.objects.filter(ahu__building__site_id__in=ids, state__in=WorkOrder.OPEN_STATES)
        .filter(Q(overdue_on__lte=today) | Q(overdue_on__isnull=True, due_date__lt=today))
        .values_list("ahu__building__site_id", flat=True)
    )
    for site_id in overdue:
        out[site_id]["overdue"] += 1
    now = timezone.now()
    for site_id, severity, opened in Finding.objects.filter(
        ahu__building__site_id__in=ids, state=Finding.State.OPEN
    ).values_list("ahu__building__site_id", "severity", "opened_at"):
        row = out[site_id]
        row["findings"][severity] = row["findings"].get(severity, 0) + 1
        age = (now - opened).days
        row["oldest_finding_days"] = max(row["oldest_finding_days"] or 0, age)
    freeze = WorkOrderTask.objects.filter(ahu__building__site_id__in=ids, task__category=TaskCategory.PREHEAT_FREEZE)
    for site_id, completed_at, state in freeze.values_list(
        "ahu__building__site_id", "completed_at", "work_order__state"
    ):
        row = out[site_id]
        if completed_at:
            row["freeze_ready"].append(completed_at.date())
        elif state in WorkOrder.OPEN_STATES:
            row["freeze_open"] += 1
    result = []
    for row in out.values():
        row["on_time_pct"] = round(100 * row["on_time"] / row["done"]) if row["done"] else None
        row["open_findings"] = sum(row["findings"].values())
        row["last_freeze_check"] = max(row["freeze_ready"]) if row["freeze_ready"] else None
        season = row["site"].freeze_season_start
        row["freeze_status"] = _freeze_status(row["last_freeze_check"], row["freeze_open"], season, today)
        result.append(row)
    return result


def _freeze_status(last: dt.date | None, open_count: int, season: dt.date | None, today: dt.date) -> str:
    # Proven within the 60 days before the season counts as ready (common practice: test shortly before it starts).
    if season and last and season - dt.timedelta(days=60) <= last <= season + dt.timedelta(days=120):
        return "proven for this season"
    if last and season is None and (today - last).days <= 180:
        return "proven recently"
    if open_count:
        return "test scheduled"
    return "not proven yet"


def site_for(*, user, pk: int) -> Site | None:
    return sites_visible_to(user=user).filter(pk=pk).first()


def filter_trends(*, site: Site, limit: int = 6) -> list[dict]:
    """Per filter bank of the site: pressure-drop readings over time and the latest loading evaluation."""
    readings = (
        Reading.objects.filter(
            inspection__ahu__building__site=site,
            component__kind=ComponentKind.FILTER_BANK,
            value_si__isnull=False,
            item__quantity="pressure",
        )
        .select_related("component__ahu", "inspection")
        .order_by("component_id", "inspection__finished_at")
    )
    by_comp: dict[int, dict] = {}
    for r in readings:
        row = by_comp.setdefault(r.component_id, {"component": r.component, "points": [], "evaluation": None})
        row["points"].append((r.inspection.finished_at.date(), r.value_si))
    evaluations = Evaluation.objects.filter(component_id__in=list(by_comp), check_name__icontains="filter").order_by(
        "component_id", "inspection__finished_at", "id"
    )
    for e in evaluations:
        by_comp[e.component_id]["evaluation"] = e
    return list(by_comp.values())[:limit]


def outdoor_temperatures(*, site: Site, today: dt.date | None = None, days_back: int = 30, days_ahead: int = 60):
    today = today or timezone.localdate()
    return list(
        OutdoorTemperature.objects.filter(
            site=site, date__gte=today - dt.timedelta(days=days_back), date__lte=today + dt.timedelta(days=days_ahead)
        )
        .order_by("date")
        .values_list("date", "min_c")
    )
