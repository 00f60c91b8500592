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

from .. import evaluation
from ..models import Inspection, Photo, Reading
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
from .sync_answers import duplicate_result, failed_result, refused_result, result_json
from .sync_flags import form_flags_raised

logger = logging.getLogger(__name__)


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
        if evaluation.own_judgement(res.check):
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
            flags = form_flags_raised(parsed, user, wo)
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
            result = result_json(
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
                    out.append(failed_result(form))
                except DatabaseError as exc:
                    if not isinstance(exc, DataError):
                        raise
                    logger.exception("sync: one form failed in the database")
                    out.append(failed_result(form))
                except Exception:
                    logger.exception("sync: one form failed")
                    out.append(failed_result(form))
    except BaseException:  # the batch is rolled back whole: so are the files of its forms stored so far
        _files_delete(batch.written if batch is not None else [])
        raise
    return out
