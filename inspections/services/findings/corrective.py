"""Corrective work for findings: one open corrective work order per unit and problem (found or proposed),
proposals withdrawn when their findings are resolved or become design reviews, and a supervisor's own work
order attached to a finding."""

from __future__ import annotations

import zoneinfo
from typing import TYPE_CHECKING, TypeGuard

from django.db import transaction

from accounts.changes import changes_deferred, work_changed
from accounts.models import User
from accounts.services import audit_record
from inventory.models import Component, Site

from ...models import Finding, Inspection
from .problems import CONDITION_TITLES, FILTER_BYPASS_TITLE, FREEZE_LEAD_DAYS, PRIORITY, SEVERITY_ORDER, STEP_TITLES
from .record import acting_person

if TYPE_CHECKING:
    from scheduling.models import WorkOrder

RESOLVED_WITHDRAWN = "withdrawn: its findings were resolved on a later visit before the work was approved"


def proposals_withdraw_resolved(*, findings: list[Finding], by: User | None) -> None:
    """Withdraw (cancel, audited) each corrective proposal still awaiting approval whose findings are all closed.
    Approved work is left to the supervisor."""
    from scheduling.models import WorkOrder
    from scheduling.services import work_order_cancel

    ids = {f.corrective_work_order_id for f in findings if f.corrective_work_order_id is not None}
    if not ids:  # most visits close nothing: no query built for none
        return
    # The versions move once for the loop, people before the organisation (accounts.changes: per call the order
    # holds; a move per visit would interleave them).
    with transaction.atomic(), changes_deferred():
        for wo in WorkOrder.objects.select_for_update().filter(pk__in=ids).order_by("pk"):
            if wo.approval != WorkOrder.Approval.PENDING or wo.state not in WorkOrder.OPEN_STATES:
                continue
            if Finding.objects.filter(corrective_work_order=wo, state=Finding.State.OPEN).exists():
                continue
            work_order_cancel(work_order=wo, by=by, reason=RESOLVED_WITHDRAWN)


DESIGN_REVIEW_WITHDRAWN = (
    "withdrawn: its findings are now design review items (the unit's design minimum outdoor air is below what "
    "the space needs), not monthly corrective work"
)


def proposal_withdraw_for_design_review(*, finding: Finding, by: User | None) -> None:
    """A finding that has become a design review no longer asks for the corrective work proposed for it earlier:
    a proposal still awaiting approval whose open findings are all design reviews is cancelled (audited).
    Approved work is left to the supervisor."""
    from scheduling.models import WorkOrder
    from scheduling.services import work_order_cancel

    wo = finding.corrective_work_order
    if wo is None or wo.approval != WorkOrder.Approval.PENDING or wo.state not in WorkOrder.OPEN_STATES:
        return
    others = Finding.objects.filter(corrective_work_order=wo, state=Finding.State.OPEN).exclude(pk=finding.pk)
    if others.exclude(kind=Finding.Kind.DESIGN_REVIEW).exists():
        return
    work_order_cancel(work_order=wo, by=by, reason=DESIGN_REVIEW_WITHDRAWN)
    wo.refresh_from_db()


def _is_open_work(wo: WorkOrder | None) -> TypeGuard[WorkOrder]:
    from scheduling.models import WorkOrder

    return (
        wo is not None
        and wo.kind == WorkOrder.Kind.CORRECTIVE
        and wo.state in WorkOrder.OPEN_STATES
        and wo.approval != WorkOrder.Approval.REJECTED
    )


def corrective_for_group(
    *,
    inspection: Inspection,
    condition: str,
    findings: list[Finding],
    urgent: bool,
    source_ref: str,
    site: Site,
    by: User | None,
) -> None:
    """One corrective work order for the findings of one problem: the open one, or a new proposal."""
    from scheduling.services import corrective_work_order_propose

    waiting = [f for f in findings if not _is_open_work(f.corrective_work_order)]
    if not waiting:
        return
    components = {f.component_id for f in findings}
    component = findings[0].component if len(components) == 1 else None
    wo = _open_corrective_for(
        ahu_id=inspection.ahu_id, condition=condition, problem=findings[0].problem, component=component
    )
    if wo is not None and wo.component_id is not None and len(components) > 1:
        # Work for one part holds the findings of that part only: each part finds or proposes its own.
        for part in dict.fromkeys(f.component_id for f in findings):
            corrective_for_group(
                inspection=inspection,
                condition=condition,
                findings=[f for f in findings if f.component_id == part],
                urgent=urgent,
                source_ref=source_ref,
                site=site,
                by=by,
            )
        return
    if wo is None:
        worst = max((f.severity for f in findings), key=SEVERITY_ORDER.index)
        if condition:
            title = CONDITION_TITLES.get(condition, findings[0].title)
            for own in (FILTER_BYPASS_TITLE, *STEP_TITLES.values()):
                # Not the condition's problem (a filter's media missing, torn or bypassed; a valve that will not
                # close): the work says what its findings say.
                if all(f.title.startswith(own) for f in findings):
                    title = own
            title += f" — {component.name}" if component is not None else _parts_named(findings)
        else:
            title = findings[0].title
        # Work for several parts names each part before its finding's text (the title names no single part).
        reason = "; ".join(
            f"{f.component.name}: {f.reason}" if component is None and f.component is not None else f.reason
            for f in findings
        )
        if urgent:
            reason += f" — inside or within {FREEZE_LEAD_DAYS} days of the freeze season at {site.name}"
        wo = corrective_work_order_propose(
            ahu=inspection.ahu,
            title=title,
            reason=reason,
            condition_code=condition,
            priority="urgent" if urgent else PRIORITY[worst],
            component=component,
            source_ref=source_ref,
            by=by,
            approved=urgent,
            observed_on=inspection.finished_at.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date(),
        )
    Finding.objects.filter(pk__in=[f.pk for f in waiting]).update(corrective_work_order=wo)
    for finding in waiting:
        finding.corrective_work_order = wo


def _parts_named(findings: list[Finding]) -> str:
    """ " — A and B": the parts of work for several parts, when every finding it holds names its part."""
    if any(f.component is None for f in findings):
        return ""
    names = list(dict.fromkeys(f.component.name for f in findings if f.component is not None))
    return " — " + (", ".join(names[:-1]) + " and " + names[-1] if len(names) > 1 else names[0])


def _open_corrective_for(*, ahu_id: int, condition: str, problem: str, component: Component | None) -> WorkOrder | None:
    """The open corrective work order of this unit for the same problem, if any (locked).

    The same problem is the same scheduling condition, or for failures without one (drain pan, belt, low
    outdoor air, coil balance, duct static, heat recovery…) the same problem of the findings it holds. A work
    order for the whole unit serves every part; a failure of the whole unit is served by the work order of
    any part. Open means not completed, verified or cancelled, and not rejected by a supervisor.
    """
    from django.db.models import Q

    from scheduling.models import WorkOrder

    qs = WorkOrder.objects.filter(
        ahu_id=ahu_id, kind=WorkOrder.Kind.CORRECTIVE, state__in=WorkOrder.OPEN_STATES
    ).exclude(approval=WorkOrder.Approval.REJECTED)
    if condition:
        qs = qs.filter(condition_code=condition)
    else:
        qs = qs.filter(condition_code="", source_findings__problem=problem)
    if component is not None:
        qs = qs.filter(Q(component=component) | Q(component__isnull=True))
    wo_id = qs.order_by("created_at", "pk").values_list("pk", flat=True).first()
    if wo_id is None:
        return None
    return WorkOrder.objects.select_for_update().get(pk=wo_id)


@transaction.atomic
def finding_work_order_attach(*, finding: Finding, work_order: WorkOrder, by: User | None) -> Finding:
    """A supervisor's work order made for ``finding`` (frontend "Make a work order") becomes its corrective work:
    the findings page says its state, and completing it closes the finding as corrected
    (:func:`findings_close_corrected`). Refused when the finding already holds open corrective work, so one
    fault never has two repairs running; a design review is never given corrective work."""
    from django.core.exceptions import ValidationError

    locked = Finding.objects.select_for_update(of=("self",)).select_related("corrective_work_order").get(pk=finding.pk)
    if locked.state != Finding.State.OPEN:
        raise ValidationError({"finding": [f"Finding: “{locked.title}” is {locked.get_state_display().lower()}"]})
    if locked.kind == Finding.Kind.DESIGN_REVIEW:
        raise ValidationError(
            {"finding": [f"Finding: “{locked.title}” is a design review; it takes no corrective work"]}
        )
    held = locked.corrective_work_order
    if _is_open_work(held) and held.pk != work_order.pk:
        raise ValidationError(
            {
                "finding": [
                    f"Finding: “{locked.title}” already has open corrective work, “{held.title}” "
                    f"({held.state_words}); approve or assign that one instead"
                ]
            }
        )
    locked.corrective_work_order = work_order
    locked.save(update_fields=["corrective_work_order"])
    audit_record(
        actor=acting_person(by),
        obj=locked,
        action="finding_work_order_attach",
        organisation_id=locked.organisation_id,
        changes={"work_order": str(work_order.public_id), "replaced": str(held.public_id) if held else None},
    )
    work_changed(organisation_id=locked.organisation_id)  # no work order changed: nobody's today
    finding.corrective_work_order = work_order
    return locked
