"""The property manager's findings, read-only: the list for her sites, one finding with its photos and history, and
a unit's page with its unit history request.

Every list starts from inventory.selectors.sites_visible_to (through findings_visible_to and ahus_visible_to); one
finding comes through inspections.selectors.finding_for and its photos are served by the photo route, which calls
photo_for. Nothing here writes: every view answers GET only (405 for anything else); the report forms post to
records.record_request, which property managers may use.
"""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import render
from django.utils import timezone
from django.views.decorators.http import require_GET

from accounts.clock import local_date_of
from inspections import reasons
from inspections.freeze import freeze_readiness
from inspections.models import Evaluation, Finding, Reading
from inspections.reasons import text_without_subject
from inspections.selectors import (
    finding_for,
    finding_observations,
    finding_photos,
    findings_visible_to,
    inspections_visible_to,
    reason_for,
)
from inventory.display import site_date_text
from inventory.selectors import ahus_visible_to, component_tree, sites_visible_to
from reports.compliance import finding_problem
from reports.documents.common import shown
from reports.documents.history_cells import judged_cells
from scheduling.models import WorkOrder

from .automation_faults import site_choice
from .technician import photo_urls, unit_records_context

SEVERITY_ORDER = {"critical": 0, "high": 1, "medium": 2, "low": 3}
STATES = (("open", "Open"), ("closed", "Closed"), ("all", "Open and closed"))
LIST_LIMIT = 200  # rows on one page; the filters narrow the rest


def progress_words(wo: WorkOrder | None, *, finding: Finding) -> str:
    """Where the corrective work stands, in WorkOrder.state_words, with the planned day of open work
    ("planned for 9 Dec 2026"); a design review proposes none. Lower case first: a page capitalises it where a
    sentence begins."""
    if wo is None:
        return "design review: no corrective work proposed" if finding.kind == Finding.Kind.DESIGN_REVIEW else "—"
    # "overdue" comes from WorkOrder.state_words (the site's calendar, as the board counts it), said last.
    overdue = ", overdue" if wo.is_overdue else ""
    words = wo.state_words.removesuffix(overdue)
    decided = wo.approval not in (WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED)
    if wo.is_open and decided and wo.scheduled_for is not None:
        words += f" for {local_date_of(wo.scheduled_for)}"
    if wo.is_open and wo.approval != WorkOrder.Approval.REJECTED and wo.due_words:
        # The due date and how late, as the board, the site page and the PDF say it (WorkOrder.due_words_on).
        return f"{words}, {wo.due_words}"
    return words + overdue


def _readings_of(evaluations: list[Evaluation]) -> dict[tuple[int, str, int | None], Reading]:
    """{(inspection, api key, component): the reading} that each of ``evaluations`` judged, in one query."""
    wanted = {(e.inspection_id, e.item_key, e.component_id) for e in evaluations}
    out = {}
    rows = Reading.objects.filter(inspection_id__in={k[0] for k in wanted}).select_related("item__template")
    for r in rows:
        key = (r.inspection_id, f"{r.item.template.code}.{r.item.key}", r.component_id)
        if key in wanted:
            out[key] = r
    return out


def trend_reading_and_limit(finding: Finding, system: str) -> tuple[str, str]:
    """What the building-automation trends saw and what it was judged against, in the reader's units
    (``automation.fault_findings.trend_reading_parts``: a loaded filter's pressure drop and change point, a freeze
    event's lowest supply air and first stage, a rule's share of the operating time and its test); "—" only where
    the evidence holds nothing."""
    from automation.fault_findings import trend_reading_parts

    reading, limit = trend_reading_parts(
        rule=finding.rule, evidence=finding.evidence or {}, component=finding.component
    )
    return reasons.render(reading, system) or "—", reasons.render(limit, system) or "—"


def reading_and_limit(e: Evaluation | None, readings: dict, system: str) -> tuple[str, str]:
    """The values the judgement was made on and the limit it was judged against, in the reader's units
    (reports.documents.history_cells.judged_cells, as the unit history prints them); "—" when there are none."""
    if e is None:
        return "—", "—"
    values, limit = judged_cells(
        evaluation=e, reading=readings.get((e.inspection_id, e.item_key, e.component_id)), system=system
    )
    return "; ".join(v for v in values if v) or "—", limit or "—"


def _choice(raw: str, allowed: dict[str, str], *, label: str, errors: dict) -> str:
    if raw in allowed:
        return raw
    errors[label.lower()] = f"{label}: {raw[:40]!r} is not offered; allowed: {', '.join(allowed.values())}"
    return ""


def _filters(request, sites) -> tuple[dict, dict]:
    """The list's filters from the address: state (open by default), site among hers, severity; each refused
    value named at its field."""
    errors: dict[str, str] = {}
    state = _choice(request.GET.get("state", "open") or "open", dict(STATES), label="State", errors=errors)
    severity_raw = request.GET.get("severity", "")
    severities = {"": "any", **{v: label.lower() for v, label in Finding.Severity.choices}}
    severity = _choice(severity_raw, severities, label="Severity", errors=errors)
    site_raw = request.GET.get("site", "").strip()
    # The faults pages' own site filter: the same refusal for a site she may not see, a word or no site at all.
    site, problem = site_choice(site_raw, sites)
    if problem:
        errors["site"] = problem
    return {"state": state or "open", "severity": severity, "site": site, "site_raw": site_raw[:40]}, errors


@login_required
@require_GET
def findings_list(request):
    """Her sites' findings, worst and oldest first, with their reading and limit and the corrective work's
    progress; filtered by state, site and severity."""
    system = request.user.unit_system
    sites = list(sites_visible_to(user=request.user).order_by("name", "pk"))
    chosen, errors = _filters(request, sites)
    rows = []
    more = 0
    if not errors:
        qs = (
            findings_visible_to(user=request.user)
            .exclude(close_cause=Finding.CloseCause.MERGED)
            .select_related(
                "ahu__building__site",
                "component",
                "corrective_work_order__ahu__building__site",  # its overdue day is on its site's calendar
                "latest_evaluation",
                "evaluation",
            )
        )
        if chosen["state"] != "all":
            qs = qs.filter(state=chosen["state"])
        if chosen["severity"]:
            qs = qs.filter(severity=chosen["severity"])
        if chosen["site"] is not None:
            qs = qs.filter(ahu__building__site=chosen["site"])
        found = sorted(qs, key=lambda f: (f.state != "open", SEVERITY_ORDER.get(f.severity, 9), f.opened_at, f.pk))
        more = max(len(found) - LIST_LIMIT, 0)
        found = found[:LIST_LIMIT]
        judged = [f.latest_evaluation or f.evaluation for f in found]
        readings = _readings_of([e for e in judged if e is not None])
        for f, e in zip(found, judged, strict=True):
            site = f.ahu.building.site
            value, limit = (
                trend_reading_and_limit(f, system) if f.from_trends else reading_and_limit(e, readings, system)
            )
            rows.append(
                {
                    "f": f,
                    "site": site,
                    "part": f.component.name if f.component is not None else "the unit as a whole",
                    "problem": finding_problem(f),
                    "source": f.source_words,
                    "text": reason_for(evaluation=f, unit_system=system),
                    "first_seen": site_date_text(f.opened_at, site),
                    "last_seen": site_date_text(f.last_seen_at or f.opened_at, site),
                    "closed": site_date_text(f.closed_at, site),
                    "value": value,
                    "limit": limit,
                    "progress": progress_words(f.corrective_work_order, finding=f),
                }
            )
    return render(
        request,
        "frontend/manager/findings.html",
        {
            "rows": rows,
            "more": more,
            "sites": sites,
            "chosen": chosen,
            "errors": errors,
            "states": STATES,
            "severities": Finding.Severity.choices,
        },
        status=400 if errors else 200,
    )


@login_required
@require_GET
def finding_detail(request, pk: int):
    """One finding of her sites: what and where, its reading against its limit, each visit that saw it, the photos
    of those visits, the corrective work and its progress, and the inspection record to ask for."""
    finding = finding_for(user=request.user, pk=pk)
    system = request.user.unit_system
    site = finding.ahu.building.site
    part = finding.component.name if finding.component is not None else None
    observations = finding_observations(finding=finding)
    latest = finding.latest_evaluation or finding.evaluation
    readings = _readings_of([e for e in (*observations, latest) if e is not None])
    history = []
    for e in observations:
        value, limit = reading_and_limit(e, readings, system)
        insp = e.inspection
        history.append(
            {
                "e": e,
                "inspection": insp,
                "day": site_date_text(e.amendment.created_at if e.amendment else insp.finished_at, site),
                "value": value,
                "limit": limit,
                # The part is in the page's heading: each visit's judgement does not begin with it again.
                "text": text_without_subject(reason_for(evaluation=e, unit_system=system), part),
            }
        )
    photos = [
        {
            "p": p,
            **photo_urls(p.client_uuid),
            "day": site_date_text(p.uploaded_at, site),
        }
        for p in finding_photos(finding=finding, inspection_ids=[e.inspection_id for e in observations])
    ]
    value, limit = (
        trend_reading_and_limit(finding, system) if finding.from_trends else reading_and_limit(latest, readings, system)
    )
    wo = finding.corrective_work_order
    # The record of the visit that last saw it (the inspection report covers every form of its work order); none
    # for a finding of the building-automation trends, whose evidence is the fault's.
    visit = finding.latest_inspection or finding.inspection
    record_work_order = visit.work_order if visit is not None else None
    return render(
        request,
        "frontend/manager/finding.html",
        {
            "f": finding,
            "site": site,
            "part": part or "the unit as a whole",
            "problem": finding_problem(finding),
            "source": finding.source_words,
            "trend": trend_evidence(finding=finding, user=request.user) if finding.from_trends else None,
            "text": reason_for(evaluation=finding, unit_system=system),
            "first_seen": site_date_text(finding.opened_at, site),
            "last_seen": site_date_text(finding.last_seen_at or finding.opened_at, site),
            "closed": site_date_text(finding.closed_at, site),
            "value": value,
            "limit": limit,
            "history": history,
            "photos": photos,
            "wo": wo,
            "progress": progress_words(wo, finding=finding),
            "record_wo": record_work_order,
        },
    )


def trend_evidence(*, finding: Finding, user) -> dict:
    """What a finding of the building-automation trends was found on: the rule's published section, the latest
    evidence window on the site's clock, the share of the operating time, and the fault whose evidence chart
    supervisors and administrators may open (``frontend:fault``; a property manager reads the words here)."""
    from accounts.selectors import primary_role
    from automation.fault_findings import evidence_window_words, share_words
    from automation.fault_models import Fault

    from .automation_faults import MANAGING

    evidence = finding.evidence or {}
    fault = Fault.objects.filter(finding=finding).order_by("-pk").first()
    return {
        "section": evidence.get("section", ""),
        "window": evidence_window_words(evidence, finding.ahu.building.site.time_zone),
        "share": share_words(evidence.get("share")),
        "fault": fault if fault is not None and primary_role(user=user) in MANAGING else None,
    }


LAST_VISITS = 5


@login_required
@require_GET
def unit_detail(request, pk: int):
    """A unit of her sites, read-only: components, the last visits, freeze readiness, open findings, and the unit
    history PDF to ask for (in her units)."""
    ahu = ahus_visible_to(user=request.user).filter(pk=pk).first()
    if ahu is None:
        raise Http404("No such unit that you may see.")
    site = ahu.building.site
    system = request.user.unit_system
    visits = [
        {"i": i, "day": site_date_text(i.finished_at or i.received_at, site)}
        for i in inspections_visible_to(user=request.user)
        .filter(ahu=ahu)
        .select_related("work_order", "technician")
        .order_by("-finished_at", "-pk")[:LAST_VISITS]
    ]
    readiness = freeze_readiness(units=[ahu], as_of=timezone.now())
    open_findings = sorted(
        findings_visible_to(user=request.user).filter(ahu=ahu, state=Finding.State.OPEN),
        key=lambda f: (SEVERITY_ORDER.get(f.severity, 9), f.opened_at, f.pk),
    )
    return render(
        request,
        "frontend/manager/unit.html",
        {
            "ahu": ahu,
            "site": site,
            "tree": component_tree(ahu=ahu),
            "visits": visits,
            "freeze": readiness[0] if readiness else None,
            "design_airflow": shown(ahu.design_supply_airflow_m3s, "airflow", system),
            "findings": [
                {
                    "f": f,
                    "problem": finding_problem(f),
                    "source": f.source_words,
                    "part": f.component.name if f.component is not None else "the unit as a whole",
                    "first_seen": site_date_text(f.opened_at, site),
                    "progress": progress_words(f.corrective_work_order, finding=f),
                }
                for f in open_findings
            ],
            **unit_records_context(ahu=ahu, system=system),
        },
    )
