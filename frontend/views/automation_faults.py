"""The faults the building-automation trends found: the supervisor's list across the portfolio (filter by site,
closed ones folded away) and a property manager's summary of her own sites.

Reads come through ``automation.fault_selectors`` (every list from ``sites_visible_to``); values are shown in the
person's units. One fault's evidence is ``automation_trends``.
"""

from __future__ import annotations

from collections import defaultdict

from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.shortcuts import render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET

from accounts.models import Role
from accounts.selectors import primary_role
from automation.fault_models import Fault
from automation.fault_selectors import faults_visible_to
from automation.judging import fault_reason
from engineering.faults.consequences import consequence_text
from engineering.faults.freeze import FREEZE_RISK
from inspections.freeze import freeze_readiness_for
from inventory.selectors import sites_managed_by, sites_visible_to

MANAGING = {Role.SUPERVISOR, Role.ADMIN}


CLOSED_SHOWN = 50


def _role(request) -> str | None:
    return primary_role(user=request.user)


def _consequence_words(fault: Fault, system: str) -> str:
    """The fault's consequence in the reader's units; where the trends gave no number, what the rule's fault
    risks (a freeze event: coil freeze damage)."""
    if fault.code == Fault.FREEZE:
        return FREEZE_RISK
    return consequence_text(fault.code, fault.consequence, system)


def fault_row(fault: Fault, system: str) -> dict:
    wo = fault.corrective_work_order
    return {
        "fault": fault,
        "share": None if fault.share is None else round(fault.share * 100),
        "consequence": _consequence_words(fault, system),
        "reason": fault_reason(fault, system),
        "work": wo,
        "work_words": wo.state_words if wo else "",
        "work_url": (
            f"{reverse('frontend:corrective')}#wo-{wo.public_id}"
            if wo is not None and wo.approval == wo.Approval.PENDING
            else (reverse("frontend:checklist", kwargs={"public_id": wo.public_id}) if wo else "")
        ),
    }


@login_required
@require_GET
def faults(request):
    """Supervisors and administrators: the active faults of every site they see (filter by site), closed ones
    folded away. A property manager: a summary of their own sites. Anyone else: forbidden."""
    role = _role(request)
    if role == Role.PROPERTY_MANAGER:
        return _manager_summary(request)
    if role not in MANAGING:
        raise PermissionDenied("Only a supervisor, administrator or property manager may open the faults.")
    system = request.user.unit_system
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    raw = request.GET.get("site", "")
    chosen = next((s for s in sites if str(s.pk) == raw), None) if raw else None
    # An unknown filter value is named at the field (400), not answered with a bare "not found", and lists nothing.
    problem = (
        f"Site: {raw[:20]!r} is not one of the sites you may see; choose one of the list." if raw and not chosen else ""
    )
    active, closed, closed_total = [], [], 0
    if not problem:
        active = [fault_row(f, system) for f in faults_visible_to(user=request.user, site=chosen)]
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


def _manager_summary(request):
    """Her sites' active faults counted per site, then each one in plain words: the unit, what was found, since
    when, what the service company does about it and her finding's page (its evidence in words); the freeze events
    that keep a unit from being ready. The evidence charts stay the supervisors'."""
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    counts: dict[int, int] = defaultdict(int)
    active = []
    for f in faults_visible_to(user=request.user):
        counts[f.ahu.building.site_id] += 1
        wo = f.corrective_work_order
        active.append(
            {
                "fault": f,
                "site": f.ahu.building.site,
                "work_words": wo.state_words if wo else "no work yet",
                "finding_url": reverse("frontend:manager_finding", kwargs={"pk": f.finding_id}) if f.finding_id else "",
            }
        )
    active.sort(key=lambda r: (r["site"].name, r["fault"].ahu.tag, r["fault"].first_seen_at))
    readiness = {r.unit.pk: r for r in freeze_readiness_for(user=request.user, as_of=timezone.now())}
    freeze = []
    for f in faults_visible_to(user=request.user, open_only=False).filter(code=Fault.FREEZE):
        r = readiness.get(f.ahu_id)
        if r is not None and r.ready:
            continue
        if f.state == Fault.State.CLOSED and r is None:
            continue
        freeze.append(
            {
                "fault": f,
                "readiness": r,
                "work_words": f.corrective_work_order.state_words if f.corrective_work_order else "",
            }
        )
    return render(
        request,
        "frontend/automation/manager_faults.html",
        {"rows": [{"site": s, "active": counts.get(s.pk, 0)} for s in sites], "active": active, "freeze": freeze},
    )
