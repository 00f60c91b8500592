"""After the form: edits refused, amendments, supervisor verification, flag resolution."""

from __future__ import annotations

from typing import Any

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import transaction
from django.utils import timezone

from accounts.changes import work_changed
from accounts.inputs import text_problem
from accounts.models import User
from accounts.services import audit_record
from engineering.controls import Verdict
from engineering.units import SYSTEMS
from inventory.selectors import sites_managed_by

from .. import evaluation, selectors
from ..check import Errors
from ..models import Amendment, Finding, Inspection
from . import findings as findings_service
from .form_check import Parsed
from .form_evaluation import reading_values, values_evaluate
from .reading_check import reading_parse

# A note or a reason a person writes: a few paragraphs (the page's inputs hold 2,000 characters).
TEXT_MAX = 2000


def _is_supervisor(user: User | None, inspection: Inspection) -> bool:
    return user is not None and sites_managed_by(user=user).filter(pk=inspection.ahu.building.site_id).exists()


def inspection_edit(*, inspection: Inspection, by: User | None, **changes: object) -> Inspection:
    """Signed inspections are never edited; this refuses and points to amendments.

    There is no unsigned state: every stored form is signed on the phone.
    """
    raise ValidationError(
        {
            "inspection": [
                f"{inspection.display_name} was signed by {inspection.signature_name} on "
                f"{inspection.signed_at:%Y-%m-%d %H:%M} and cannot be edited; add an amendment instead"
            ]
        }
    )


@transaction.atomic
def inspection_amend(
    *, inspection: Inspection, by: User | None, reason: str, readings: list[object], unit_system: str
) -> Amendment:
    """A correction to a signed inspection. The original readings stay untouched beside it.

    ``readings`` has the sync shape ({item, component, value, note}); each
    corrected value is checked like a synced one (impossible values refused)
    and the whole form is judged again with the corrections applied. A
    judgement that fails now but did not fail before (on the form or an
    earlier amendment) is stored as an Evaluation of this amendment and opens
    a Finding pointing to it, with its corrective work proposed like a synced
    failure; an open finding of this inspection whose check is now judged
    without its condition (ok, or a watch of another condition:
    ``findings_close_cleared``) is closed as cleared by the amendment. The original readings and evaluations
    stay as they were.
    """

    if by is None or not selectors.amendment_allowed(user=by, inspection=inspection):
        raise PermissionDenied("only the technician who signed it or a supervisor of the site may amend it")
    if not isinstance(reason, str) or not reason.strip():
        raise ValidationError({"reason": ["an amendment needs a reason"]})
    problem = text_problem(reason.strip(), label="Reason", max_length=TEXT_MAX, lines=True)
    if problem:
        raise ValidationError({"reason": [problem]})
    if unit_system not in SYSTEMS:
        raise ValidationError({"unit_system": [f"unit_system={unit_system!r} is not one of {', '.join(SYSTEMS)}"]})
    if not isinstance(readings, list) or not readings:
        raise ValidationError({"readings": ["an amendment corrects at least one reading"]})
    wo = inspection.work_order
    parsed = Parsed(
        client_uuid=inspection.client_uuid,
        work_order=wo,
        version_seen=wo.version,
        unit_system=unit_system,
        started_at=inspection.started_at,
        finished_at=inspection.finished_at,
        checklist=selectors.checklist_build(work_order=wo),
    )
    errors, seen = Errors(), set[tuple[str, int | None]]()
    for i, raw in enumerate(readings):
        reading_parse(parsed, i, raw, seen, errors)  # the sync's own parsing and range rules
    if errors:
        raise ValidationError(dict(errors))
    original = {(r.item.api_key, r.component_id): r for r in inspection.readings.select_related("item__template")}
    values = {k: evaluation.Value(number=r.value_si, text=r.value_text) for k, r in original.items()}
    values.update(reading_values(parsed.readings))
    results = values_evaluate(
        ahu=inspection.ahu, values=values, slots=parsed.checklist.slots, finished_at=inspection.finished_at
    )
    by_item: dict[tuple[str, int | None], evaluation.Result] = {}
    for judged in results:
        if evaluation.own_judgement(judged.check):
            by_item.setdefault((judged.item, judged.component.pk if judged.component else None), judged)
    changes: list[dict[str, Any]] = []
    for r in parsed.readings:
        key = (r.item.api_key, r.component.pk if r.component else None)
        old = original.get(key)
        res = by_item.get(key)
        changes.append(
            {
                "item": r.item.api_key,
                "component": r.component.label_code if r.component else None,
                "before": None
                if old is None
                else {"value_si": old.value_si, "value_text": old.value_text, "note": old.note, "verdict": old.verdict},
                "after": {
                    "value_si": r.value_si,
                    "value_text": r.value_text,
                    "note": r.note,
                    "verdict": res.verdict if res else "",
                    "condition_code": res.condition_code if res else "",
                    "reason": res.reason if res else "",
                    "reason_parts": res.reason_parts if res else [],
                },
            }
        )
    amendment = Amendment.objects.create(inspection=inspection, created_by=by, reason=reason.strip(), changes=changes)
    found = _newly_failed_open(inspection=inspection, amendment=amendment, results=results, by=by)
    cleared = findings_service.findings_close_cleared(
        inspection=inspection, amendment=amendment, results=results, by=by
    )
    if found or cleared:
        # Each corrected item names the finding it opened or cleared, in the one record of the amendment.
        for field_name, findings in (("finding", found), ("cleared_finding", cleared)):
            by_key = {
                (f.evaluation.item_key, f.component.label_code if f.component else None): f
                for f in findings
                if f.evaluation is not None  # (a finding of a form always has its evaluation)
            }
            for c in changes:
                if (f := by_key.get((c["item"], c["component"]))) is not None:
                    c[field_name] = f.pk
        amendment.changes = changes
        amendment.save(update_fields=["changes"])
    audit_record(
        actor=by,
        obj=inspection,
        action="inspection_amend",
        organisation=inspection.organisation,
        changes={
            "amendment": amendment.pk,
            "items": [c["item"] for c in changes],
            "findings": [f.pk for f in found],
            "cleared_findings": [f.pk for f in cleared],
        },
    )
    # Findings moved; the corrective work they opened or withdrew moved its assignees' versions itself.
    work_changed(organisation_id=inspection.organisation_id)
    return amendment


def _newly_failed_open(
    *, inspection: Inspection, amendment: Amendment, results: list[evaluation.Result], by: User | None
) -> list[Finding]:
    """Findings for judgements that fail after the amendment and had not failed on this inspection before."""

    def key(check: str, item: str, component_id: int | None) -> tuple[str, str, int | None]:
        return (check, item, component_id)

    # A failure whose finding an earlier amendment cleared counts as new if it fails again.
    failed_before = {
        key(e.check_name, e.item_key, e.component_id)
        for e in inspection.evaluations.filter(verdict=Verdict.FAIL)
        .exclude(finding__state=Finding.State.CLOSED)
        .only("check_name", "item_key", "component_id")
    }
    new = [
        res
        for res in results
        if res.verdict == Verdict.FAIL
        and key(res.check, res.item, res.component.pk if res.component else None) not in failed_before
    ]
    if not new:
        return []
    evals = findings_service.evaluations_store(inspection=inspection, results=new, amendment=amendment)
    return findings_service.findings_open(
        inspection=inspection,
        evaluations=evals,
        results=new,
        by=by,
        amendment=amendment,
        opened_at=amendment.created_at,
    )


@transaction.atomic
def inspection_verify(*, inspection: Inspection, by: User | None) -> Inspection:
    """A supervisor verifies the inspection; its completed work order moves to verified."""
    from scheduling.services import work_order_verify

    if not _is_supervisor(by, inspection):
        raise PermissionDenied("only a supervisor of the site may verify an inspection")
    if inspection.verified_at is not None:
        raise ValidationError({"inspection": [f"{inspection.display_name} was verified already"]})
    if inspection.flag_open:
        raise ValidationError(
            {"inspection": [f"{inspection.display_name} is flagged ({inspection.flag_reason}); resolve the flag first"]}
        )
    inspection.state = Inspection.State.VERIFIED
    inspection.verified_at = timezone.now()
    inspection.verified_by = by
    inspection.save(update_fields=["state", "verified_at", "verified_by"])
    if inspection.work_order.state == "completed":
        work_order_verify(work_order=inspection.work_order, by=by)
    audit_record(actor=by, obj=inspection, action="inspection_verify", organisation=inspection.organisation)
    work_changed(organisation_id=inspection.organisation_id)  # the board's "to verify" (the work order moved above)
    return inspection


@transaction.atomic
def flagged_form_resolve(*, inspection: Inspection, by: User | None, note: str) -> Inspection:
    """A supervisor has looked at a flagged form and says what was done about it."""
    if not _is_supervisor(by, inspection):
        raise PermissionDenied("only a supervisor of the site may resolve a flagged form")
    if not inspection.flags:
        raise ValidationError({"inspection": [f"{inspection.display_name} is not flagged"]})
    if inspection.flag_resolved_at is not None:
        raise ValidationError({"inspection": [f"the flag on {inspection.display_name} was resolved already"]})
    if not isinstance(note, str) or not note.strip():
        raise ValidationError({"note": ["say what was done about the flag"]})
    problem = text_problem(note.strip(), label="Note", max_length=TEXT_MAX, lines=True)
    if problem:
        raise ValidationError({"note": [problem]})
    inspection.flag_resolved_at = timezone.now()
    inspection.flag_resolved_by = by
    inspection.flag_resolution_note = note.strip()
    inspection.save(update_fields=["flag_resolved_at", "flag_resolved_by", "flag_resolution_note"])
    audit_record(
        actor=by,
        obj=inspection,
        action="flag_resolve",
        organisation=inspection.organisation,
        changes={"flags": [f["code"] for f in inspection.flags], "note": inspection.flag_resolution_note},
    )
    work_changed(organisation_id=inspection.organisation_id)
    return inspection
