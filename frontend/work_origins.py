"""Why a corrective work order exists, in the words the supervisor's findings and faults pages use: each finding
or building-automation fault that proposed it, with what was found (``inspections.selectors.reason_for``, the
findings pages' text; ``automation.judging.fault_reason``, the faults pages' text), when it was first seen and on
which part. The technician's work-order page shows them above the form."""

from __future__ import annotations

from automation.fault_models import Fault
from automation.judging import fault_reason
from automation.oa_agreement import RULE, VISIT_CHECKS, oa_disagreement
from inspections.models import Finding
from inspections.selectors import reason_for
from scheduling.models import WorkOrder


def work_order_origins(*, work_order: WorkOrder, unit_system: str) -> list[dict]:
    """[{title, text, seen_at, part, where, note}] for the faults, then the findings (a fault's own finding not
    again), that made ``work_order``; oldest first within each. ``note``: where the trends' FC6 and a visit's
    measured outdoor-air fraction of the unit disagree, that they do and what to check
    (``automation.oa_agreement``), beside either."""
    faults = list(
        Fault.objects.filter(corrective_work_order=work_order).select_related("component", "ahu__building__site")
    )
    said = {f.finding_id for f in faults if f.finding_id}
    findings = (
        Finding.objects.filter(corrective_work_order=work_order)
        .exclude(pk__in=said)
        .exclude(close_cause=Finding.CloseCause.MERGED)
        .select_related("component", "latest_evaluation", "evaluation")
    )
    rows = [
        {
            "title": f.title,
            "text": fault_reason(f, unit_system),
            "seen_at": f.first_seen_at,
            "part": f.component.name if f.component_id else "",
            "where": "in the building-automation trends",
            "note": oa_disagreement(ahu_id=f.ahu_id, zone=f.ahu.building.site.time_zone, fault=f)
            if f.code == RULE
            else "",
        }
        for f in sorted(faults, key=lambda f: (f.first_seen_at, f.pk))
    ]
    rows += [
        {
            "title": f.title,
            "text": reason_for(evaluation=f, unit_system=unit_system),
            "seen_at": f.opened_at,
            "part": f.component.name if f.component_id else "",
            "where": f"in the {f.source_words}" if f.source_words else "on a technician's visit",
            "note": oa_disagreement(ahu_id=f.ahu_id, zone=work_order.ahu.building.site.time_zone)
            if _measured_outdoor_air(f)
            else "",
        }
        for f in sorted(findings, key=lambda f: (f.opened_at, f.pk))
    ]
    return rows


def _measured_outdoor_air(finding: Finding) -> bool:
    """Whether a visit's finding judged the outdoor-air fraction it measured."""
    ev = finding.latest_evaluation or finding.evaluation
    return ev is not None and ev.check_name in VISIT_CHECKS
