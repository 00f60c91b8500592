"""The offline sync endpoint's service: store each finished form exactly once, never drop one.

Each form is first checked (``inspections.services.form_check``: parsed and evaluated, nothing written), then
stored here.

Contract: inspections/SYNC.md. A form is either refused whole (nothing
saved; the errors name the item, the value and the allowed range in the
form's units) or stored whole in one transaction with its readings,
evaluations, photos, findings, corrective work orders, meter reading and the
work order's completion.
"""

from __future__ import annotations

import copy
import datetime as dt
import logging
import uuid
from collections.abc import Iterable
from typing import Any

from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import DatabaseError, DataError, IntegrityError, transaction
from django.db.models.fields.files import FieldFile

from accounts.changes import changes_deferred, work_changed
from accounts.models import User
from accounts.services import audit_record, audits_deferred
from engineering.controls import Verdict
from scheduling.models import WorkOrder

from .. import check, evaluation, selectors
from .. import flags as form_flags
from ..check import Errors
from ..models import Evaluation, Finding, Inspection, Photo, Reading
from . import findings as findings_service
from . import photos as photo_service
from .form_check import (
    MAX_FORMS,
    Batch,
    Parsed,
    batch_read,
    form_evaluate,
    form_parse,
    uuid_or_none,
)

logger = logging.getLogger(__name__)


# ---------------------------------------------------------------------------
# Storing
# ---------------------------------------------------------------------------
def _not_ok(reading: Reading) -> bool:
    return reading.verdict == Verdict.FAIL


def _flags(parsed: Parsed, user: User, wo: WorkOrder) -> list[dict[str, str]]:
    flags: list[dict[str, str]] = []
    if wo.state == WorkOrder.State.CANCELLED:
        flags.append(
            {
                "code": "work_order_cancelled",
                "reason": f"the work order was cancelled ({wo.cancel_reason or 'no reason given'}) before "
                "this form arrived",
            }
        )
    elif wo.state in (WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED):
        flags.append(
            {"code": "work_order_closed", "reason": f"the work order was already {wo.state} when this form arrived"}
        )
    if wo.assignee_id != user.pk and wo.state != WorkOrder.State.CANCELLED:
        to = f"is now assigned to {wo.assignee}" if wo.assignee else "is no longer assigned to anyone"
        flags.append({"code": "work_order_reassigned", "reason": f"sent by {user}, but the work order {to}"})
    if wo.version != parsed.version_seen:
        flags.append(
            {
                "code": "work_order_changed",
                "reason": f"the work order changed after the phone saw it (version {parsed.version_seen}, "
                f"now {wo.version})",
            }
        )
    for text in parsed.improbable:
        flags.append({"code": "improbable_value", "reason": text})
    clock = parsed.clock
    if clock is not None and clock.skew is not None and clock.beyond_tolerance:
        flags.append({"code": "phone_clock", "reason": _clock_reason(clock, clock.skew)})
    answered = {(r.item.api_key, r.component.pk if r.component else None) for r in parsed.readings}
    photographed = {
        (p["slot"].item.api_key, p["slot"].component.pk if p["slot"].component else None) for p, _ in parsed.photos
    }
    missing = [
        s
        for s in parsed.checklist.slots
        if s.item.required and s.key not in (photographed if s.item.kind == "photo" else answered)
    ]
    if missing:
        flags.append(form_flags.flag_incomplete([form_flags.slot_place(s) for s in missing]))
    slots = {s.key: s for s in parsed.checklist.slots}
    for r in parsed.readings:
        key = (r.item.api_key, r.component.pk if r.component else None)
        if not _not_ok(r):
            continue
        label = form_flags.slot_label(slots[key])
        if slots[key].item.photo_required_when_not_ok and key not in photographed:
            flags.append(form_flags.flag_for("missing_photo", label=label))
        if slots[key].item.note_required_when_not_ok and not r.note.strip():
            flags.append(form_flags.flag_for("missing_note", label=label))
    return flags


def _clock_reason(placed: check.Placed, skew: dt.timedelta) -> str:
    how = "" if placed.measured else "at least "
    return (
        f"the phone's clock was {how}{check.skew_text(skew)} the server's when the form arrived; "
        f"its finish and signature times are placed on the server's clock (finished "
        f"{placed.finished_at:%Y-%m-%d %H:%M} UTC); set the phone to the network time"
    )


def _result_json(
    inspection: Inspection,
    status: str,
    flags: list[dict[str, str]],
    evals: list[Evaluation],
    found: list[Finding],
    wo: WorkOrder,
    *,
    unit_system: str = "si",
) -> dict[str, Any]:
    """The answer to the phone; reasons in ``unit_system`` (the sender's), ``reason_si`` as recorded."""
    return {
        "client_uuid": str(inspection.client_uuid),
        "status": status,
        "inspection_id": inspection.pk,
        "work_order_state": wo.state,
        "flags": flags,
        "errors": {},
        "evaluation": [
            {
                "check": e.check_name,
                "item": e.item_key,
                "component": e.component.label_code if e.component else None,
                "verdict": e.verdict,
                "reason": selectors.reason_for(evaluation=e, unit_system=unit_system),
                "reason_si": e.reason,
                "method": e.method,
                "derived": e.derived,
            }
            for e in evals
        ],
        "findings": [selectors.finding_shape(finding=f, unit_system=unit_system) for f in found],
        "clock_skew_s": inspection.clock_skew_s,
    }


def duplicate_result(inspection: Inspection, *, user: User) -> dict[str, Any]:
    if inspection.technician_id != user.pk:
        errors = Errors()
        errors.add(
            "client_uuid",
            f"The form's id {inspection.client_uuid} is already used by another person's form; generate a new one",
        )
        return refused_result(inspection.client_uuid, errors)
    first = dict(inspection.sync_result)
    return {**first, "status": "duplicate", "first_status": first.get("status")}


def refused_result(client_uuid: uuid.UUID | None, errors: Errors) -> dict[str, Any]:
    return {
        "client_uuid": str(client_uuid) if client_uuid else None,
        "status": "refused",
        "inspection_id": None,
        "work_order_state": None,
        "flags": [],
        "errors": dict(errors),
        "evaluation": [],
        "findings": [],
        "clock_skew_s": None,
    }


def _files_delete(files: Iterable[FieldFile]) -> None:
    """Remove the stored files of a form (or a batch) that was rolled back."""
    for f in files:
        if f.name:
            f.storage.delete(f.name)


def _store(parsed: Parsed, user: User, results: list[evaluation.Result], batch: Batch | None = None) -> dict[str, Any]:
    from scheduling.services import meter_reading_record, work_order_complete, work_order_complete_locked

    written: list[FieldFile] = []
    head = parsed.head()
    sig = parsed.signature
    inspection = Inspection(
        client_uuid=head.client_uuid,
        organisation_id=parsed.work_order.organisation_id,
        work_order=parsed.work_order,
        ahu=parsed.work_order.ahu,
        technician=user,
        template_versions={t.code: t.version for t in parsed.checklist.templates},
        unit_system=head.unit_system,
        work_order_version_seen=head.version_seen,
        started_at=head.started_at,
        finished_at=head.finished_at,
        signature_name=sig["name"],
        signed_at=sig["signed_at"],
        clock_skew=parsed.clock.skew if parsed.clock else None,
        phone_times=parsed.phone_times,
    )
    inspection.signature_image.save(f"{head.client_uuid.hex}.png", ContentFile(sig["image"].data), save=False)
    written.append(inspection.signature_image)
    new_photos = []
    for raw, obj in parsed.photos:
        slot = raw["slot"]
        if isinstance(obj, Photo):
            obj.item_key, obj.component = slot.item.api_key, slot.component
            new_photos.append(obj)
            continue
        photo = photo_service.photo_build(
            image=obj,
            client_uuid=uuid.UUID(str(raw["client_uuid"])),
            work_order=parsed.work_order,
            user=user,
            item_key=slot.item.api_key,
            component=slot.component,
        )
        written += [photo.image, photo.thumbnail]
        new_photos.append(photo)
    # Reading verdicts from the evaluation of the reading itself.
    by_reading: dict[tuple[str, int | None], evaluation.Result] = {}
    for res in results:
        by_reading.setdefault((res.item, res.component.pk if res.component else None), res)
    for r in parsed.readings:
        own = by_reading.get((r.item.api_key, r.component.pk if r.component else None))
        if r.value_text == "na":
            r.verdict = Verdict.NOT_APPLICABLE
        elif own is not None:
            r.verdict, r.reason, r.reason_parts = own.verdict, own.reason, own.reason_parts
    try:
        # In a batch the form's own savepoint (``inspection_sync``) is the one it needs.
        with transaction.atomic(savepoint=batch is None):
            if batch is not None:
                # Locked and read for the request (batch_read, and moved by its earlier forms); the form moves a
                # copy, which becomes the request's only once the form is kept (Batch.form_kept).
                wo = copy.copy(parsed.work_order)
                batch.moved.append((parsed.work_order, wo))
            else:
                wo = WorkOrder.objects.select_for_update().get(pk=parsed.work_order.pk)
            flags = _flags(parsed, user, wo)
            inspection.flags = flags
            inspection.flag_reason = "; ".join(f["reason"] for f in flags)[:5000]
            inspection.complete = not any(f["code"] == "incomplete" for f in flags)
            inspection.save()
            for r in parsed.readings:
                r.inspection = inspection
            Reading.objects.bulk_create(parsed.readings)
            for p in new_photos:
                p.inspection = inspection
                p.save()
            evals = findings_service.evaluations_store(inspection=inspection, results=results)
            found = findings_service.findings_open(
                inspection=inspection,
                evaluations=evals,
                results=results,
                by=user,
                templates=parsed.checklist.templates,  # the steps' names as the form's checklist read them
            )
            hours = next(
                (r.value_si for r in parsed.readings if r.item.api_key == "visit.run_hours" and r.value_si is not None),
                None,
            )
            if hours is not None:
                try:  # a refusal is raised before the service writes: the form stays whole without a savepoint
                    meter_reading_record(
                        ahu=parsed.work_order.ahu,  # already read with its site (wo is the locked row)
                        hours=hours,
                        taken_at=head.finished_at,
                        source="checklist",
                        by=user,
                        in_caller_transaction=batch is not None,
                        # In a batch the unit was locked by batch_read and its meter read under that lock on
                        # arrival (run_hours_check); nothing of the meter is written between: not read again.
                        unit_locked=batch is not None,
                        neighbours=parsed.meter_neighbours if batch is not None else None,
                    )
                except ValidationError as exc:
                    flags.append(
                        {"code": "meter_reading_refused", "reason": "run-hour meter: " + " ".join(exc.messages)}
                    )
            blocking = {"work_order_cancelled", "work_order_closed", "work_order_reassigned", "incomplete"}
            if not any(f["code"] in blocking for f in flags) and wo.is_open:
                try:  # in a batch: on the row locked above, refused before any write (no savepoint, no relock)
                    if batch is not None:
                        work_order_complete_locked(work_order=wo, by=user, completed_at=head.finished_at)
                    else:
                        work_order_complete(work_order=wo, by=user, completed_at=head.finished_at)
                    inspection.work_order_completed = True
                except ValidationError as exc:
                    flags.append(
                        {
                            "code": "work_order_not_completed",
                            "reason": "the work order could not be completed: " + " ".join(exc.messages),
                        }
                    )
            inspection.flags = flags
            inspection.flag_reason = "; ".join(f["reason"] for f in flags)[:5000]
            status = "flagged" if flags else "stored"
            result = _result_json(
                inspection, status, flags, evals, found, wo, unit_system=getattr(user, "unit_system", "si")
            )
            inspection.sync_result = result
            # flags and flag_reason change only inside this creating transaction.
            Inspection.objects.filter(pk=inspection.pk).update(
                flags=flags,
                flag_reason=inspection.flag_reason,
                sync_result=result,
                work_order_completed=inspection.work_order_completed,
            )
            audit_record(
                actor=user,
                obj=inspection,
                action="inspection_submit",
                organisation_id=wo.organisation_id,
                changes={
                    "client_uuid": str(head.client_uuid),
                    "work_order": str(wo.public_id),
                    "readings": len(parsed.readings),
                    "flags": [f["code"] for f in flags],
                    "findings": [f.pk for f in found],
                },
            )
            # The board and its "to verify"; the today of the work order's technician and of the one who sent it.
            work_changed(organisation_id=wo.organisation_id, people=[wo.assignee_id, user.pk])
        if batch is not None:
            batch.written += written
        return result
    except IntegrityError:
        _files_delete(written)
        if batch is not None:
            raise  # answered by inspection_sync once the form's savepoint is rolled back
        first = Inspection.objects.filter(client_uuid=head.client_uuid).first()
        if first is None:
            raise
        return duplicate_result(first, user=user)
    except BaseException:
        _files_delete(written)
        raise


def inspection_submit(
    *, user: User, form: object, sent_at: object = None, position: int | None = None, batch: Batch | None = None
) -> dict[str, Any]:
    """Store one finished form (or return the first result for its client_uuid, or refuse it whole).

    ``batch``: what the request's forms share, read once (``batch_read``)."""
    if isinstance(form, dict):
        first = None
        if isinstance(raw_id := form.get("client_uuid"), str):
            try:
                key = uuid.UUID(raw_id)
            except ValueError:
                key = None
            if key is not None and batch is not None and key not in batch.handled:
                first = batch.firsts.get(key)
            elif key is not None:
                first = Inspection.objects.filter(client_uuid=key).first()
            if key is not None and batch is not None:
                batch.handled.add(key)
        if first is not None:
            return duplicate_result(first, user=user)
    parsed, errors, client_uuid = form_parse(user=user, raw=form, sent_at=sent_at, position=position, batch=batch)
    if parsed is None:
        return refused_result(client_uuid, errors)
    results = form_evaluate(parsed, batch)
    return _store(parsed, user, results, batch)


def _first_stored(form: object) -> Inspection | None:
    """The inspection already stored under the form's client_uuid, if any."""
    key = uuid_or_none(form.get("client_uuid")) if isinstance(form, dict) else None
    return Inspection.objects.filter(client_uuid=key).first() if key is not None else None


def _failed_result(form: object) -> dict[str, Any]:
    """A form the server could not handle (a defect, logged): kept on the phone and sent again later."""
    raw_id = form.get("client_uuid") if isinstance(form, dict) else None
    errors = Errors()
    errors.add("form", "the server could not store this form just now; it stays on the phone and is sent again")
    return {
        **refused_result(None, errors),  # the same empty answer, with its own status
        "client_uuid": raw_id if isinstance(raw_id, str) and len(raw_id) <= 36 else None,
        "status": "error",
    }


def inspection_sync(*, user: User, forms: object, sent_at: object = None) -> list[dict[str, Any]]:
    """One result per form, in order. Each form is stored whole or not at all and never holds back the others.

    The batch is one transaction with a savepoint per form: a form that fails is rolled back to its
    savepoint alone, and the batch commits once. The answer versions move once, at the end
    of that transaction (``accounts.changes.changes_deferred``), not once per write of every form.
    A form the server fails on (a defect, not the phone's input) answers
    ``status: "error"`` and is logged; a database outage still fails the batch
    (503 from config/api.py) so the phone keeps everything and retries.
    """
    if not isinstance(forms, list) or len(forms) > MAX_FORMS:
        raise ValidationError({"forms": [f"forms is a list of at most {MAX_FORMS} forms"]})
    out: list[dict[str, Any]] = []
    batch: Batch | None = None
    try:
        with transaction.atomic(), changes_deferred(), audits_deferred():
            batch = batch_read(user=user, forms=forms)
            for position, form in enumerate(forms, start=1):
                try:
                    # The form's audit events join the request's one insert only once its savepoint is released.
                    batch.moved.clear()
                    with audits_deferred(), transaction.atomic():
                        out.append(
                            inspection_submit(user=user, form=form, sent_at=sent_at, position=position, batch=batch)
                        )
                    batch.form_kept()
                except IntegrityError:
                    # Its id was stored meanwhile (sent twice in this request, or by another request at once):
                    # the form's savepoint is rolled back and it answers as a duplicate of the first.
                    first = _first_stored(form)
                    if first is not None:
                        out.append(duplicate_result(first, user=user))
                        continue
                    logger.exception("sync: one form failed in the database")
                    out.append(_failed_result(form))
                except DatabaseError as exc:
                    if not isinstance(exc, DataError):
                        raise
                    logger.exception("sync: one form failed in the database")
                    out.append(_failed_result(form))
                except Exception:
                    logger.exception("sync: one form failed")
                    out.append(_failed_result(form))
    except BaseException:  # the batch is rolled back whole: so are the files of its forms stored so far
        _files_delete(batch.written if batch is not None else [])
        raise
    return out
