"""Closing findings: resolved on a later visit (ok again, or the filters replaced), corrected by completed work
(reopened when it is sent back for rework), or cleared by an amendment's corrected readings."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterable
from typing import TYPE_CHECKING

from django.utils import timezone

from accounts.models import User
from accounts.services import audit_record
from engineering.controls import Verdict

from ...evaluation import Result
from ...evaluation.results import FREEZE_TRIP_SET_HIGH
from ...models import Amendment, Evaluation, Finding, Inspection
from .corrective import corrective_for_group, proposals_withdraw_resolved
from .problems import FILTER_CHECKS, condition_of, known_condition, problem_of, template_conditions
from .record import finding_close

if TYPE_CHECKING:
    from scheduling.models import WorkOrder

# Findings a later partial test must not close: a freeze-protection finding closes by its corrective retest, or by a
# later complete test (every required step of the form answered: the inspection's ``complete``), never by one step.
NOT_RESOLVED_BY_LATER_OK = {"freeze_protection_failed"}


def banks_replaced(*, results: Iterable[Result]) -> set[int]:
    """Filter banks whose filters the form says were replaced (the replacement step answered ok)."""
    return {
        res.component.pk
        for res in results
        if res.item == "filter_replace.replaced" and res.verdict == Verdict.OK and res.component is not None
    }


def freeze_proven(results: Iterable[Result]) -> bool:
    """Every freeze-protection step of the form proven as freeze readiness reads it: ok, or a trip setting above its
    band that still protects the coil; a watch of the freeze condition (a trip setting outside its plausible range,
    near its limit) is not proven, so no freeze finding closes on such a test."""
    return all(
        res.verdict == Verdict.OK or res.condition_code == FREEZE_TRIP_SET_HIGH
        for res in results
        if res.item.startswith("preheater_freeze.") and res.verdict != Verdict.NOT_APPLICABLE
    )


def freeze_unproven(*, work_order: WorkOrder) -> bool:
    """Did the completed work's latest freeze-protection test leave a step unproven (``freeze_proven``: a watch of
    the freeze condition, such as a trip setting outside its plausible range)? False when it had no such test."""
    latest = (
        Inspection.objects.filter(work_order=work_order, evaluations__item_key__startswith="preheater_freeze.")
        .order_by("-finished_at", "-pk")
        .values_list("pk", flat=True)
        .first()
    )
    if latest is None:
        return False
    return (
        Evaluation.objects.filter(
            inspection_id=latest, item_key__startswith="preheater_freeze.", amendment__isnull=True
        )
        .exclude(verdict__in=[Verdict.OK, Verdict.NOT_APPLICABLE])
        .exclude(condition_code=FREEZE_TRIP_SET_HIGH)
        .exists()
    )


def _is_filter_finding(finding: Finding) -> bool:
    return finding.condition_code == "filter_loaded" or finding.problem.split(":", 1)[0] in FILTER_CHECKS


def findings_resolve(
    *,
    inspection: Inspection,
    evaluations: Iterable[Evaluation],
    results: Iterable[Result],
    failed: set[int],
    at: dt.datetime,
    by: User | None,
    open_rows: list[Finding] | None = None,
) -> list[Finding]:
    """Close the open findings of this unit that this visit (finished at ``at``) shows resolved.

    A finding is resolved when the visit judges the same check of the same part without the finding's condition
    ("ok on a later visit"): ok, or a watch that stands for another condition (a frost thermostat found too low,
    now set too high: the too-low condition is gone, the nuisance-trip watch is its own matter); a watch of the
    finding's own condition (near the same limit) leaves it open. A filter finding is also resolved when that bank's
    filters were replaced ("filters replaced"). Closed at ``at``, audited. Findings this visit saw fail
    (``failed``), findings seen on a visit after this one (an older form synced late), and freeze-protection
    findings on a form that is not complete (a partial retest: ``NOT_RESOLVED_BY_LATER_OK``) stay open. Corrective
    work still awaiting approval whose findings are then all closed is withdrawn.

    ``open_rows``: the unit's open findings as the caller read and locked them in this transaction (else read).
    """
    by_template = template_conditions()
    # {(problem, part id): the conditions its judgements on this visit stand for, None for an ok}; fails aside.
    judged: dict[tuple[str, int | None], set[str | None]] = {}
    for ev, res in zip(evaluations, results, strict=True):
        if ev.verdict == Verdict.FAIL:
            continue
        key = (problem_of(check=res.check, item=res.item), res.component.pk if res.component else None)
        judged.setdefault(key, set()).add(None if ev.verdict == Verdict.OK else condition_of(res, by_template))
    replaced = banks_replaced(results=results)
    if not judged and not replaced:
        return []
    closed = []
    if open_rows is None:
        open_rows = list(
            Finding.objects.select_for_update(of=("self",)).filter(ahu_id=inspection.ahu_id, state=Finding.State.OPEN)
        )
    candidates = sorted(
        (
            f
            for f in open_rows
            if f.state == Finding.State.OPEN
            and f.pk not in failed
            and (f.condition_code not in NOT_RESOLVED_BY_LATER_OK or (inspection.complete and freeze_proven(results)))
        ),
        key=lambda f: f.pk,
    )
    for finding in candidates:
        if finding.latest_inspection_id == inspection.pk or (finding.last_seen_at or finding.opened_at) > at:
            continue
        if finding.component_id in replaced and _is_filter_finding(finding):
            cause = Finding.CloseCause.REPLACED
        elif judged.get((finding.problem, finding.component_id), {finding.condition_code}) - {finding.condition_code}:
            cause = Finding.CloseCause.OK_LATER
        else:
            continue
        finding_close(finding, at=at, cause=cause, by=by, changes={"inspection": inspection.pk})
        closed.append(finding)
    proposals_withdraw_resolved(findings=closed, by=by)
    return closed


def findings_close_corrected(*, work_order: WorkOrder, by: User | None) -> list[Finding]:
    """Close the open findings whose corrective work order has just been completed, at its completion time.

    A finding the work order's own form saw failing again (a retest after the repair that still fails) is not
    corrected: it stays open and gets new corrective work, proposed as its first failure's was (urgent near the
    freeze season), so the fault never reads as closed while it is still there.
    """
    at = work_order.completed_at or timezone.now()
    still_failing_elsewhere: list[Finding] = []
    # Locked plainly first: most completed work is corrective for nothing, and the joins cost more than the lock.
    # In id order (the rows are read in their own order below): no sort by the default ordering for every form.
    ids = list(
        Finding.objects.select_for_update()
        .filter(corrective_work_order=work_order, state=Finding.State.OPEN)
        .order_by("pk")
        .values_list("pk", flat=True)
    )
    found = (
        list(
            Finding.objects.filter(pk__in=ids).select_related(
                "latest_inspection__work_order", "ahu__building__site", "component"
            )
        )
        if ids
        else []
    )
    still_failing = [f for f in found if f.latest_inspection and f.latest_inspection.work_order_id == work_order.pk]
    # Their repair proposed first: a trend finding the work's test confirmed waits for that repair (below).
    groups: dict[str, list[Finding]] = {}
    for finding in still_failing:
        finding.corrective_work_order = work_order  # completed now: no longer open work for it
        groups.setdefault(known_condition(finding.condition_code) or f"problem:{finding.problem}", []).append(finding)
    for key, group in groups.items():
        inspection = group[0].latest_inspection
        if inspection is None:  # never: a finding still failing was seen on this work's own form
            continue
        site = group[0].ahu.building.site
        corrective_for_group(
            inspection=inspection,
            condition=key if not key.startswith("problem:") else "",
            findings=group,
            urgent=any(f.severity == "critical" for f in group),
            source_ref=f"inspection:{inspection.pk}",
            site=site,
            by=by,
        )
    # A finding the trends keep (no visit of its own) whose problem the work's own test found: not corrected either;
    # it waits for the repair the visit's finding holds (a valve leak-by test that failed).
    kept = [f for f in found if f not in still_failing and f.source != Finding.Source.INSPECTION]
    awaited = repair_awaited(work_order=work_order)
    for finding in kept:
        held = awaited(finding.component_id)
        if held is not None:
            finding.corrective_work_order = held.corrective_work_order
            finding.save(update_fields=["corrective_work_order"])
            audit_record(
                actor=by,
                obj=finding,
                action="finding_confirmed",
                changes={"work_order": str(work_order.public_id), "finding": held.pk},
                organisation_id=finding.organisation_id,
            )
            still_failing_elsewhere.append(finding)
    if any(f.condition_code in NOT_RESOLVED_BY_LATER_OK for f in found) and freeze_unproven(work_order=work_order):
        # The work's own freeze test did not prove every step (an implausible trip setting): not corrected yet.
        still_failing_elsewhere += [f for f in found if f.condition_code in NOT_RESOLVED_BY_LATER_OK]
    closed = [f for f in found if f not in still_failing and f not in still_failing_elsewhere]
    for finding in closed:
        finding_close(
            finding, at=at, cause=Finding.CloseCause.CORRECTED, by=by, changes={"work_order": str(work_order.public_id)}
        )
    return closed


def confirming_findings(work_order: WorkOrder) -> dict[int | None, Finding]:
    """{part id or None: open finding} that the completed work's own visits found for the condition the work was
    raised for (e.g. ``valve_leak``): the work's test confirmed the problem instead of putting it right."""
    if not work_order.condition_code:
        return {}
    found = (
        Finding.objects.filter(
            latest_inspection__work_order=work_order,
            condition_code=work_order.condition_code,
            state=Finding.State.OPEN,
            source=Finding.Source.INSPECTION,
        )
        .select_related("corrective_work_order")
        .order_by("pk")
    )
    return {f.component_id: f for f in found}


def _confirmed_for(confirmed: dict[int | None, Finding], component_id: int | None) -> Finding | None:
    """The confirming finding of a part's problem (that part's), or of a unit's (any part's: FC#8 names no coil)."""
    if component_id is not None:
        return confirmed.get(component_id)
    return next(iter(confirmed.values()), None)


def repair_awaited(*, work_order: WorkOrder) -> Callable[[int | None], Finding | None]:
    """Decides "a confirmed problem waits for its repair", here alone for the trend findings
    (``findings_close_corrected``) and their faults (``automation.fault_keeping.work_order_moved``) alike.

    Completed work whose own visit found the condition it was raised for (``confirming_findings``: a valve leak-by
    test that found the leak) put nothing right: what it answered on a part — or on the unit, for a rule that names
    no part (FC#8) — waits for the repair work of that visit's finding. The answer is a question per part (a
    component id, or None for the unit): the confirming finding whose corrective work is the repair to wait for, or
    None when the work put it right (close it). The visit's findings are read once, at the first question."""
    read: list[dict[int | None, Finding]] = []

    def awaited(component_id: int | None) -> Finding | None:
        if not read:
            read.append(confirming_findings(work_order))
        return _confirmed_for(read[0], component_id)

    return awaited


def findings_reopen_for_rework(*, work_order: WorkOrder, by: User | None) -> list[Finding]:
    """Corrective work sent back for rework: the findings its completion closed are open again.

    A finding of the building-automation trends stays closed with its fault: the trends judge the unit again
    each night, and a fault still there opens a new fault and finding, held by the open rework."""
    found = list(
        Finding.objects.select_for_update()
        .filter(corrective_work_order=work_order, state=Finding.State.CLOSED, close_cause=Finding.CloseCause.CORRECTED)
        .exclude(source=Finding.Source.BAS_TREND)
    )
    for finding in found:
        finding.state, finding.closed_at, finding.close_cause, finding.closed_by = Finding.State.OPEN, None, "", None
        finding.save(update_fields=["state", "closed_at", "close_cause", "closed_by"])
        audit_record(
            actor=by,
            obj=finding,
            action="finding_reopen",
            organisation_id=finding.organisation_id,
            changes={"work_order": str(work_order.public_id), "reason": "corrective work sent back for rework"},
        )
    return found


def findings_close_cleared(
    *, inspection: Inspection, amendment: Amendment, results: Iterable[Result], by: User | None
) -> list[Finding]:
    """Close the open findings last seen on this inspection whose check the amendment's corrected readings
    now judge without the finding's condition, as a later visit would (``findings_resolve``). A finding seen again
    on a later visit stays open: the later failure stands.

    An ok clears a finding, and so does a watch that stands for another condition (a frost thermostat corrected from
    too low to too high); a watch of the finding's own condition (near the same limit, or a check that cannot judge)
    leaves it open for the supervisor. The corrective work it proposed is left as it is; the supervisor may reject
    or cancel it.
    """
    by_template = template_conditions()
    passing: dict[tuple[str, str, int | None], set[str | None]] = {}
    for res in results:
        if res.verdict != Verdict.FAIL:
            key = (res.check, res.item, res.component.pk if res.component else None)
            passing.setdefault(key, set()).add(None if res.verdict == Verdict.OK else condition_of(res, by_template))
    found = [
        f
        for f in Finding.objects.select_for_update(of=("self",))  # lock the findings, not their (nullable) parts
        .filter(latest_inspection=inspection, state=Finding.State.OPEN)
        .select_related("latest_evaluation", "component")
        if f.latest_evaluation is not None  # a visit's finding always has one
        and passing.get(
            (f.latest_evaluation.check_name, f.latest_evaluation.item_key, f.latest_evaluation.component_id),
            {f.condition_code},
        )
        - {f.condition_code}
    ]
    for finding in found:
        finding.cleared_by_amendment = amendment
        finding_close(
            finding,
            at=amendment.created_at,
            cause=Finding.CloseCause.AMENDED,
            by=by,
            changes={"amendment": amendment.pk},
        )
    return found


def work_order_moved(sender: object, *, work_order: WorkOrder, before: str, by: User | None, **kwargs: object) -> None:
    """``scheduling.signals.work_order_moved`` receiver: completion closes findings, rework reopens them."""
    from scheduling.models import WorkOrder

    if work_order.state == WorkOrder.State.COMPLETED:
        findings_close_corrected(work_order=work_order, by=by)
    elif before == WorkOrder.State.COMPLETED and work_order.state == WorkOrder.State.IN_PROGRESS:
        findings_reopen_for_rework(work_order=work_order, by=by)
