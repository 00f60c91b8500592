"""Every compliance figure of some sites in one pass: ``compliance_figures``, and the figures' today.

Overdue now: open work orders (planned, assigned, in progress), of any kind, overdue on their site's date at
``as_of`` (``WorkOrder.is_overdue_on``), since their first overdue day (``WorkOrder.overdue_from``) and for the days
``scheduling.lateness.days_overdue`` counts from it. The board, the escalation e-mails, the work order pages and these
figures therefore call the same day overdue and count the same days.
"""

from __future__ import annotations

import zoneinfo
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date, datetime

from django.db.models import Q

from inspections.freeze import seasons_words
from inspections.models import Finding, finding_age_days
from inventory.models import AHU, Site
from inventory.today import today_for
from scheduling.lateness import days_overdue
from scheduling.models import WorkOrder, WorkOrderTask

from .filter_status import filter_rows
from .findings import AGE_BUCKETS, SEVERITIES, WHOLE_UNIT, age_bucket, corrective_work_words, finding_problem
from .freeze_readiness import freeze_rows
from .preventive import CategoryFigures, Occurrence, occurrence_outcome, preventive_figures


@dataclass
class ComplianceFigures:
    start: date
    end: date
    as_of: datetime
    sites: list[Site]
    units: list[AHU]
    categories: list[CategoryFigures]
    total: CategoryFigures
    overdue: list[dict]
    findings_matrix: dict[str, dict[str, int]]
    findings_total: int
    # Every finding the matrix counts, most severe first and within a severity the oldest first: site, unit,
    # part, problem, severity, first seen (the site's date), age in days and the corrective work in words.
    open_findings: list[dict]
    filters: list[dict]
    freeze: list[dict]
    freeze_counts: dict[str, int]
    # Per site id: "total" (CategoryFigures of all categories) and "findings_total",
    # filled in the same passes, so a dashboard row per site costs no extra query.
    by_site: dict[int, dict] = field(default_factory=dict)

    @property
    def freeze_ready_now(self) -> int:
        """Units proven ready now, on time or late (``inspections.freeze.FreezeReadiness.ready``)."""
        return sum(1 for r in self.freeze if r["ready"])

    @property
    def critical_open(self) -> int:
        """Critical findings open at ``as_of`` (the findings matrix's own count)."""
        return sum(self.findings_matrix.get(Finding.Severity.CRITICAL, {}).values())

    @property
    def corrective_overdue(self) -> int:
        """Corrective work orders overdue now, of ``overdue`` (``WorkOrder.is_overdue_on``, the one overdue rule)."""
        return sum(1 for o in self.overdue if o["work_order"].kind == WorkOrder.Kind.CORRECTIVE)

    @property
    def freeze_season_words(self) -> str:
        """The season(s) the freeze readiness is judged for, in words (``inspections.freeze.seasons_words``): "the
        freeze season that began 19 Oct 2026" while it runs, not "the coming season"."""
        return seasons_words({(r["season_start"], r["season_running"]) for r in self.freeze})

    @property
    def age_labels(self) -> list[str]:
        return [label for _, _, label in AGE_BUCKETS]


def report_today(zones: Iterable[str], *, as_of: datetime) -> date:
    """The figures' today for sites of these time zones at ``as_of``: the latest of their todays (a site
    already on the next day has begun it); the server's date without any site. The default period of the
    compliance report and of the manager's pages ends on it."""
    return max((today_for(zone, now=as_of) for zone in zones), default=today_for(None, now=as_of))


def _local_date(at: datetime | None, tz: zoneinfo.ZoneInfo) -> date | None:
    return at.astimezone(tz).date() if at else None


def compliance_figures(*, site_ids: list[int], start: date, end: date, as_of: datetime) -> ComplianceFigures:
    """Every compliance figure for the given sites. Tenancy is the caller's: pass only visible sites.

    A fixed number of queries whatever the number of units (about ten).
    """
    sites = list(Site.objects.filter(pk__in=site_ids).order_by("name", "pk"))
    tz_of = {s.pk: zoneinfo.ZoneInfo(s.time_zone) for s in sites}
    units = list(
        AHU.objects.filter(building__site_id__in=site_ids)
        .select_related("building__site")
        .order_by("building__site__name", "building__name", "tag", "pk")
    )
    today_of = {s.pk: today_for(s, now=as_of) for s in sites}
    report_day = report_today([s.time_zone for s in sites], as_of=as_of)

    rows = (
        WorkOrderTask.objects.filter(
            work_order__kind=WorkOrder.Kind.PREVENTIVE,
            ahu__building__site_id__in=site_ids,
            due_date__gte=start,
            due_date__lte=end,
        )
        .values_list(
            "task__category",
            "due_date",
            "task__grace_days",
            "completed_at",
            "work_order__state",
            "work_order__completed_at",
            "ahu__building__site_id",
        )
        .order_by("due_date", "pk")
    )
    done_states = {WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED}
    occurrences = []
    for category, due, grace, done_at, wo_state, wo_done_at, site_id in rows:
        if done_at is None and wo_state in done_states:
            done_at = wo_done_at
        if done_at is not None and done_at > as_of:
            done_at = None
        occurrences.append(
            Occurrence(
                category,
                due,
                grace,
                _local_date(done_at, tz_of[site_id]),
                cancelled=wo_state == WorkOrder.State.CANCELLED,
                site_id=site_id,
            )
        )
    categories, total = preventive_figures(occurrences, start=start, end=end, as_of=report_day)
    by_site = {s.pk: {"total": CategoryFigures("all", "All categories"), "findings_total": 0} for s in sites}
    for occ in occurrences:
        by_site[occ.site_id]["total"].counts[occurrence_outcome(occ, evaluated_on=report_day)] += 1

    overdue = []
    open_orders = (
        WorkOrder.objects.filter(
            ahu__building__site_id__in=site_ids, state__in=WorkOrder.OPEN_STATES, due_date__lte=report_day
        )
        .select_related("ahu__building__site", "assignee")
        .order_by("due_date", "ahu__building__site__name", "ahu__tag", "pk")
    )
    for wo in open_orders:
        today = today_of[wo.ahu.building.site_id]
        since = wo.overdue_from
        if since is not None and wo.is_overdue_on(today):
            # Counted from the first day past the grace, as every page says it (scheduling.lateness).
            overdue.append({"work_order": wo, "since": since, "days_overdue": days_overdue(since=since, today=today)})

    matrix = {sev: {label: 0 for _, _, label in AGE_BUCKETS} for sev in SEVERITIES}
    findings_total = 0
    open_findings = []
    # One query: the counts and the listing are the same rows, so they always agree.
    for finding in (
        Finding.objects.filter(ahu__building__site_id__in=site_ids, opened_at__lte=as_of)
        .filter(Q(state=Finding.State.OPEN) | Q(closed_at__gt=as_of))
        .select_related("ahu__building__site", "component", "corrective_work_order")
    ):
        site_id = finding.ahu.building.site_id
        tz = tz_of[site_id]
        matrix.setdefault(finding.severity, {label: 0 for _, _, label in AGE_BUCKETS})
        age = finding_age_days(opened_at=finding.opened_at, end=as_of, time_zone=tz.key)
        matrix[finding.severity][age_bucket(age)] += 1
        findings_total += 1
        by_site[site_id]["findings_total"] += 1
        open_findings.append(
            {
                "finding": finding,
                "site": finding.ahu.building.site,
                "unit": finding.ahu,
                "part": finding.component.name if finding.component is not None else WHOLE_UNIT,
                "problem": finding_problem(finding),
                "source": finding.source_words,  # "" for a visit's finding
                "severity": finding.severity,
                "severity_label": finding.get_severity_display(),
                "first_seen": finding.opened_at.astimezone(tz).date(),
                "age_days": age,
                "corrective": corrective_work_words(finding=finding, as_of=as_of, tz=tz),
            }
        )
    rank = {sev: i for i, sev in enumerate(SEVERITIES)}
    open_findings.sort(
        key=lambda r: (
            rank.get(r["severity"], len(rank)),
            r["finding"].opened_at,
            r["site"].name,
            r["unit"].tag,
            r["finding"].pk,
        )
    )

    filters = filter_rows(units=units, as_of=as_of, today_of=today_of)
    freeze, freeze_counts = freeze_rows(units=units, as_of=as_of, today_of=today_of)
    return ComplianceFigures(
        start=start,
        end=end,
        as_of=as_of,
        sites=sites,
        units=units,
        categories=categories,
        total=total,
        overdue=overdue,
        findings_matrix=matrix,
        findings_total=findings_total,
        open_findings=open_findings,
        filters=filters,
        freeze=freeze,
        freeze_counts=freeze_counts,
        by_site=by_site,
    )
