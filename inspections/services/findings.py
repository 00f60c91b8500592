"""Findings: every failed evaluation becomes one and proposes corrective work; done work closes it.

A finding closes when its corrective work order is completed (at the completion time; sent back for
rework, it opens again), or when an amendment corrects the readings so that its check passes.
"""

from __future__ import annotations

import datetime as dt

from django.utils import timezone

from accounts.services import audit_record
from engineering.freeze import daily_minimums_from_normals

from ..models import Evaluation, Finding, Inspection

FREEZE_LEAD_DAYS = 30
PRIORITY = {"critical": "urgent", "high": "high", "medium": "normal", "low": "low"}


def freeze_season_near(*, site, on: dt.date, lead_days: int = FREEZE_LEAD_DAYS) -> bool:
    """Is ``on`` inside the site's freeze season or at most ``lead_days`` before it?

    Uses the site's computed season start when it falls in that window, and
    otherwise the daily minimums interpolated from the site's monthly normals
    (engineering.freeze.daily_minimums_from_normals) against its preheat threshold.
    """
    start = site.freeze_season_start
    if start is not None and 0 <= (start - on).days <= lead_days:
        return True
    days = daily_minimums_from_normals(monthly_min_c=site.normals_min_c, start=on, days=lead_days + 1)
    return any(t <= site.preheat_threshold_c for _, t in days)


def _title(result, evaluation: Evaluation) -> str:
    where = f" — {result.component.name}" if result.component is not None else ""
    words = {
        "filter_loading": "Filter loaded",
        "oa_fraction_temperature": "Outdoor air below minimum",
        "oa_fraction_co2": "Outdoor air below minimum",
        "coil_balance": "Coil heat balance off",
        "supply_temperature": "Supply-air temperature off set point",
        "duct_static": "Duct static off set point",
        "damper_position": "Damper not at commanded position",
        "sensor_drift": "Sensor drift",
        "heat_recovery": "Heat recovery below design",
    }.get(result.check)
    if words is None:
        words = {
            "fan_not_proven": "Fan not proven",
            "freeze_protection_failed": "Freeze protection failed",
        }.get(result.condition_code, "Deficiency: " + result.reason.split(":")[0])
    return (words + where)[:200]


def evaluations_store(*, inspection: Inspection, results, amendment=None) -> list[Evaluation]:
    """The judgements of a form (or of an amendment's corrected form) as stored rows, written in one insert."""
    rows = [
        Evaluation(
            inspection=inspection,
            amendment=amendment,
            check_name=res.check,
            item_key=res.item,
            component=res.component,
            verdict=res.verdict,
            reason=res.reason[:500],
            reason_parts=res.reason_parts,
            method=res.method[:300],
            derived=res.derived,
            condition_code=res.condition_code,
        )
        for res in results
    ]
    Evaluation.objects.bulk_create(rows)
    return rows


def findings_open(
    *, inspection: Inspection, evaluations: list[Evaluation], results, by, amendment=None, opened_at=None
) -> list[Finding]:
    """One Finding per failed evaluation, each proposing a corrective work order.

    With ``amendment`` the findings point to it (the corrected readings failed,
    not the signed form) and open at ``opened_at`` (the amendment's time).

    A failed freeze-protection test inside or up to 30 days before the site's
    freeze season gets an urgent corrective work order, approved at once (the
    scheduling service e-mails the supervisors after commit); other findings
    wait for a supervisor's approval.
    """
    from scheduling.services import corrective_work_order_propose

    site = inspection.ahu.building.site
    opened_at = opened_at or inspection.finished_at
    source_ref = f"inspection:{inspection.pk}" + (f" amendment:{amendment.pk}" if amendment is not None else "")
    out = []
    for ev, res in zip(evaluations, results, strict=True):
        if ev.verdict != "fail":
            continue
        severity = res.severity
        urgent = res.condition_code == "freeze_protection_failed" and freeze_season_near(
            site=site, on=timezone.localtime(opened_at).date()
        )
        priority = "urgent" if urgent else PRIORITY[severity]
        finding = Finding.objects.create(
            organisation_id=inspection.organisation_id,
            inspection=inspection,
            evaluation=ev,
            ahu=inspection.ahu,
            component=res.component,
            severity="critical" if urgent else severity,
            title=_title(res, ev),
            reason=res.reason[:500],
            condition_code=res.condition_code,
            opened_at=opened_at,
            amendment=amendment,
        )
        reason = res.reason
        if urgent:
            reason += f" — inside or within {FREEZE_LEAD_DAYS} days of the freeze season at {site.name}"
        wo = None if _known(res.condition_code) else _open_corrective_for(finding=finding, item_key=ev.item_key)
        if wo is None:
            wo = corrective_work_order_propose(
                ahu=inspection.ahu,
                title=finding.title,
                reason=reason,
                condition_code=_known(res.condition_code),
                priority=priority,
                component=res.component,
                source_ref=source_ref,
                by=by,
                approved=urgent,
            )
        finding.corrective_work_order = wo
        finding.save(update_fields=["corrective_work_order"])
        out.append(finding)
    return out


# Condition codes the scheduling engine knows; other fails raise corrective work without one.
KNOWN_CONDITIONS = {
    "filter_loaded",
    "sensor_drift",
    "supply_temp_off",
    "damper_position",
    "fan_not_proven",
    "freeze_protection_failed",
}


def _open_corrective_for(*, finding: Finding, item_key: str):
    """An open corrective work order raised earlier for the same unit, part and problem, if any.

    For failures without a scheduling condition (drain pan, belt, low outdoor air, coil balance, duct
    static, heat recovery…) scheduling cannot find the duplicate itself, so the earlier findings say
    what was raised: the same condition code, or for failures without one the same checklist item.
    Open means not completed, verified or cancelled, and not rejected by a supervisor.
    """
    from scheduling.models import WorkOrder

    earlier = (
        Finding.objects.filter(
            ahu_id=finding.ahu_id,
            component=finding.component,
            corrective_work_order__kind=WorkOrder.Kind.CORRECTIVE,
            corrective_work_order__state__in=WorkOrder.OPEN_STATES,
        )
        .exclude(pk=finding.pk)
        .exclude(corrective_work_order__approval=WorkOrder.Approval.REJECTED)
    )
    if finding.condition_code:
        earlier = earlier.filter(condition_code=finding.condition_code)
    else:
        earlier = earlier.filter(condition_code="", evaluation__item_key=item_key)
    wo_id = earlier.order_by("-opened_at", "-pk").values_list("corrective_work_order_id", flat=True).first()
    if wo_id is None:
        return None
    return WorkOrder.objects.select_for_update().get(pk=wo_id)


def _known(code: str) -> str:
    return code if code in KNOWN_CONDITIONS else ""


def _actor(by):
    return by if getattr(by, "is_authenticated", False) else None


def _close(finding: Finding, *, at: dt.datetime, cause: str, by, changes: dict) -> None:
    finding.state, finding.closed_at, finding.close_cause = Finding.State.CLOSED, at, cause
    finding.closed_by = _actor(by)
    finding.save(update_fields=["state", "closed_at", "close_cause", "closed_by", "cleared_by_amendment"])
    audit_record(
        actor=by,
        obj=finding,
        action="finding_close",
        organisation=finding.organisation,
        changes={"cause": cause, **changes},
    )


def findings_close_corrected(*, work_order, by) -> list[Finding]:
    """Close the open findings whose corrective work order has just been completed, at its completion time."""
    at = work_order.completed_at or timezone.now()
    found = list(Finding.objects.select_for_update().filter(corrective_work_order=work_order, state=Finding.State.OPEN))
    for finding in found:
        _close(
            finding, at=at, cause=Finding.CloseCause.CORRECTED, by=by, changes={"work_order": str(work_order.public_id)}
        )
    return found


def findings_reopen_for_rework(*, work_order, by) -> list[Finding]:
    """Corrective work sent back for rework: the findings its completion closed are open again."""
    found = list(
        Finding.objects.select_for_update().filter(
            corrective_work_order=work_order, state=Finding.State.CLOSED, close_cause=Finding.CloseCause.CORRECTED
        )
    )
    for finding in found:
        finding.state, finding.closed_at, finding.close_cause, finding.closed_by = Finding.State.OPEN, None, "", None
        finding.save(update_fields=["state", "closed_at", "close_cause", "closed_by"])
        audit_record(
            actor=by,
            obj=finding,
            action="finding_reopen",
            organisation=finding.organisation,
            changes={"work_order": str(work_order.public_id), "reason": "corrective work sent back for rework"},
        )
    return found


def findings_close_cleared(*, inspection: Inspection, amendment, results, by) -> list[Finding]:
    """Close this inspection's open findings whose check the amendment's corrected readings now pass (ok).

    Only an ok clears a finding: a watch (near a limit, or a check that cannot judge) leaves it open for the
    supervisor. The corrective work it proposed is left as it is; the supervisor may reject or cancel it.
    """
    passing = {
        (res.check, res.item, res.component.pk if res.component else None) for res in results if res.verdict == "ok"
    }
    found = [
        f
        for f in Finding.objects.select_for_update(of=("self",))  # lock the findings, not their (nullable) parts
        .filter(inspection=inspection, state=Finding.State.OPEN)
        .select_related("evaluation", "component")
        if (f.evaluation.check_name, f.evaluation.item_key, f.evaluation.component_id) in passing
    ]
    for finding in found:
        finding.cleared_by_amendment = amendment
        _close(
            finding,
            at=amendment.created_at,
            cause=Finding.CloseCause.AMENDED,
            by=by,
            changes={"amendment": amendment.pk},
        )
    return found


def work_order_moved(sender, *, work_order, before: str, by, **kwargs) -> None:
    """``scheduling.signals.work_order_moved`` receiver: completion closes findings, rework reopens them."""
    from scheduling.models import WorkOrder

    if work_order.state == WorkOrder.State.COMPLETED:
        findings_close_corrected(work_order=work_order, by=by)
    elif before == WorkOrder.State.COMPLETED and work_order.state == WorkOrder.State.IN_PROGRESS:
        findings_reopen_for_rework(work_order=work_order, by=by)
