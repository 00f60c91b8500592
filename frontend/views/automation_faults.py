"""The faults the building-automation trends found: the supervisor's list across the portfolio (filter by site,
closed ones folded away) and a property manager's summary of her own sites.

Reads come through ``automation.fault_selectors`` (every list from ``sites_visible_to``); values are shown in the
person's units. One fault's evidence is ``automation_trends``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict

from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Q
from django.shortcuts import render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET

from accounts.models import Role
from accounts.selectors import primary_role
from automation.fault_models import Fault
from automation.fault_selectors import faults_visible_to, loaded_filters_visible_to
from automation.judging import fault_reason
from engineering.faults.consequences import consequence_text
from engineering.faults.freeze import FREEZE_RISK
from inspections.freeze import freeze_readiness_for
from inspections.selectors import reason_for
from inventory.selectors import sites_managed_by, sites_visible_to

MANAGING = {Role.SUPERVISOR, Role.ADMIN}
DEFAULT_DAYS = 7  # a unit's trend page shows a week unless asked otherwise


CLOSED_SHOWN = 50


def _role(request) -> str | None:
    return primary_role(user=request.user)


def _consequence_words(fault: Fault, system: str) -> str:
    """The fault's consequence in the reader's units; where the trends gave no number, what the rule's fault
    risks (a freeze event: coil freeze damage)."""
    if fault.code == Fault.FREEZE:
        return FREEZE_RISK
    return consequence_text(fault.code, fault.consequence, system)


def _work_cells(wo) -> dict:
    """The corrective work a fault or a loaded filter proposed: its title, state in words and where to act on it
    (a proposal awaiting approval: the corrective page; else its work order)."""
    return {
        "work": wo,
        "work_words": wo.state_words if wo else "",
        "work_url": (
            f"{reverse('frontend:corrective')}#wo-{wo.public_id}"
            if wo is not None and wo.approval == wo.Approval.PENDING
            else (reverse("frontend:checklist", kwargs={"public_id": wo.public_id}) if wo else "")
        ),
    }


def fault_row(fault: Fault, system: str) -> dict:
    """One fault as the faults pages show it (the active list's cells, the closed list, a fault's evidence page)."""
    return {
        "fault": fault,
        "finding": None,
        "ahu": fault.ahu,
        "site": fault.ahu.building.site,
        "title": fault.title,
        "part": fault.component.name if fault.component_id else "",
        "code": fault.code,
        "section": fault.section,
        "finding_id": fault.finding_id,
        "first_seen_at": fault.first_seen_at,
        "last_seen_at": fault.last_seen_at,
        "share": None if fault.share is None else round(fault.share * 100),
        "share_words": "",
        "consequence": _consequence_words(fault, system),
        "reason": fault_reason(fault, system),
        "evidence_url": reverse("frontend:fault", kwargs={"pk": fault.pk}),
        **_work_cells(fault.corrective_work_order),
    }


def loaded_filter_row(finding, system: str) -> dict:
    """A filter bank the trends found loaded (``automation.fault_selectors.loaded_filters_visible_to``), in the same
    cells as a fault: what was found in the reader's units, since when, the change it proposed, and its evidence,
    the unit's trends over the week up to the day it was last seen (the bank's pressure drop on the pressures
    chart)."""
    site = finding.ahu.building.site
    part = finding.component.name if finding.component_id else ""
    last_day = (finding.last_seen_at or finding.opened_at).astimezone(zoneinfo.ZoneInfo(site.time_zone))
    # The site day a trend day ends at its next midnight: the day before that midnight is the one judged.
    last_day = (last_day - dt.timedelta(microseconds=1)).date()
    start = last_day - dt.timedelta(days=DEFAULT_DAYS - 1)
    return {
        "fault": None,
        "finding": finding,
        "ahu": finding.ahu,
        "site": site,
        "title": finding.title.removesuffix(f" — {part}") if part else finding.title,
        "part": part,
        "code": "Filter pressure drop",
        "section": (finding.evidence or {}).get("section", ""),
        "finding_id": finding.pk,
        "first_seen_at": finding.opened_at,
        "last_seen_at": finding.last_seen_at or finding.opened_at,
        "share": None,
        "share_words": "judged on the day's median",
        "consequence": reason_for(evaluation=finding, unit_system=system),
        "reason": reason_for(evaluation=finding, unit_system=system),
        "evidence_url": reverse("frontend:unit_trends", kwargs={"pk": finding.ahu_id}) + f"?start={start.isoformat()}",
        **_work_cells(finding.corrective_work_order),
    }


def site_choice(raw: str, sites: list) -> tuple[object | None, str]:
    """The site a faults page is filtered by (``?site=``): one of ``sites`` (those the person may see), or none
    asked. Anything else — another's site, a word, a number of no site — is named at the field with what is allowed
    (the page answers 400 and lists nothing), never a bare "not found" that would tell whether the site exists."""
    if not raw:
        return None, ""
    chosen = next((s for s in sites if str(s.pk) == raw), None)
    if chosen is None:
        return None, f"Site: {raw[:20]!r} is not one of the sites you may see; choose one of the list."
    return chosen, ""


def _active_rows(request, site, system: str, faults: list[Fault]) -> list[dict]:
    """The active faults (open, of ``faults``) and the filters the trends found loaded, latest seen first."""
    rows = [fault_row(f, system) for f in faults if f.state == Fault.State.OPEN]
    rows += [loaded_filter_row(f, system) for f in loaded_filters_visible_to(user=request.user, site=site)]
    return sorted(rows, key=lambda r: r["last_seen_at"], reverse=True)


@login_required
@require_GET
def faults(request):
    """Supervisors and administrators: the active faults of every site they see (filter by site) with the filters
    the trends found loaded, closed ones folded away. A property manager: a summary of her own sites (filter by
    site). Anyone else: forbidden."""
    role = _role(request)
    if role == Role.PROPERTY_MANAGER:
        return _manager_summary(request)
    if role not in MANAGING:
        raise PermissionDenied("Only a supervisor, administrator or property manager may open the faults.")
    system = request.user.unit_system
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    chosen, problem = site_choice(request.GET.get("site", ""), sites)
    active, closed, closed_total = [], [], 0
    if not problem:
        active = _active_rows(request, chosen, system, list(faults_visible_to(user=request.user, site=chosen)))
        closed_qs = faults_visible_to(user=request.user, site=chosen, open_only=False).filter(state=Fault.State.CLOSED)
        closed = [fault_row(f, system) for f in closed_qs[:CLOSED_SHOWN]]
        closed_total = closed_qs.count()
    return render(
        request,
        "frontend/automation/faults.html",
        {
            "sites": sites,
            "chosen": chosen,
            "active": active,
            "closed": closed,
            "closed_total": closed_total,
            "managed_sites": list(sites_managed_by(user=request.user).order_by("name")),
            "site_problem": problem,
        },
        status=400 if problem else 200,
    )


def _freeze_events(read: list[Fault], readiness: dict) -> list[dict]:
    """The freeze events of ``read`` that keep their unit from being ready (``readiness``: {unit id:
    ``inspections.freeze.FreezeReadiness``}), each with its unit's readiness and its corrective work in words."""
    out = []
    for f in (f for f in read if f.code == Fault.FREEZE):
        r = readiness.get(f.ahu_id)
        if r is not None and r.ready:
            continue
        if f.state == Fault.State.CLOSED and r is None:
            continue
        work = f.corrective_work_order.state_words if f.corrective_work_order else ""
        out.append({"fault": f, "readiness": r, "work_words": work})
    return out


def _manager_summary(request):
    """Her sites' active faults and loaded filters counted per site, then each one in plain words: the unit, what
    was found, since when, what the service company does about it and her finding's page (its evidence in words);
    the freeze events that keep a unit from being ready, and the units not ready for freeze protection without one
    (a failed or missing test) in her dashboard's words (``inspections.freeze``'s reason). Filtered by one of her
    sites (``?site=``, refused as the supervisor's page refuses it). The faults are read once: the open ones and
    every freeze event together. The evidence charts stay the supervisors'."""
    system = request.user.unit_system
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    chosen, problem = site_choice(request.GET.get("site", ""), sites)
    shown_sites = [chosen] if chosen is not None else sites
    counts: dict[int, int] = defaultdict(int)
    active, freeze, not_ready, readiness = [], [], [], {}
    if not problem:
        read = list(
            faults_visible_to(user=request.user, site=chosen, open_only=False).filter(
                Q(state=Fault.State.OPEN) | Q(code=Fault.FREEZE)
            )
        )
        for r in _active_rows(request, chosen, system, read):
            counts[r["site"].pk] += 1
            if not r["work"]:
                r["work_words"] = "no work yet"
            r["finding_url"] = (
                reverse("frontend:manager_finding", kwargs={"pk": r["finding_id"]}) if r["finding_id"] else ""
            )
            active.append(r)
        active.sort(key=lambda r: (r["site"].name, r["ahu"].tag, r["first_seen_at"]))
        readiness = {
            r.unit.pk: r
            for r in freeze_readiness_for(
                user=request.user, site_ids=[chosen.pk] if chosen else None, as_of=timezone.now()
            )
        }
        freeze = _freeze_events(read, readiness)
        events_of = {e["fault"].ahu_id for e in freeze}
        # The units not ready without a freeze event to show (a failed or missing test): the dashboard's words.
        not_ready = [r for r in readiness.values() if not r.ready and r.unit.pk not in events_of]
    return render(
        request,
        "frontend/automation/manager_faults.html",
        {
            "rows": [{"site": s, "active": counts.get(s.pk, 0)} for s in shown_sites],
            "active": active,
            "freeze": freeze,
            "freeze_not_ready": not_ready,
            "freeze_protected": bool(readiness),
            "sites": sites,
            "chosen": chosen,
            "site_problem": problem,
        },
        status=400 if problem else 200,
    )
