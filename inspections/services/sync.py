"""The offline sync endpoint's service: store each finished form exactly once, never drop one.

Contract: inspections/SYNC.md. A form is either refused whole (nothing
saved; the errors name the item, the value and the allowed range in the
form's units) or stored whole in one transaction with its readings,
evaluations, photos, findings, corrective work orders, meter reading and the
work order's completion.
"""

from __future__ import annotations

import datetime as dt
import math
import uuid
from dataclasses import dataclass, field
from typing import Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import IntegrityError, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from accounts.services import audit_record
from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint
from scheduling.models import WorkOrder

from .. import checklists, evaluation, selectors
from ..models import Inspection, Photo, Reading
from . import findings as findings_service
from . import photos as photo_service

MAX_FORMS = 50
MAX_TEXT = 2000
CLOCK_SKEW = dt.timedelta(minutes=10)
CHECK_VALUES = ("ok", "not_ok", "na")


@dataclass
class Parsed:
    client_uuid: uuid.UUID
    work_order: WorkOrder
    version_seen: int
    unit_system: str
    started_at: dt.datetime
    finished_at: dt.datetime
    checklist: selectors.Checklist
    readings: list[Reading] = field(default_factory=list)
    improbable: list[str] = field(default_factory=list)
    photos: list[tuple[dict, photo_service.CleanImage | Photo]] = field(default_factory=list)
    signature: dict[str, Any] = field(default_factory=dict)


class Errors(dict):
    def add(self, key: str, message: str) -> None:
        self.setdefault(key, []).append(message)


def _num_text(x: float | None) -> str:
    if x is None:
        return "any"
    return f"{float(f'{x:.4g}'):g}".replace("-", "−")


def _range_text(lo: float | None, hi: float | None, unit: str) -> str:
    u = f" {unit}" if unit else ""
    if lo is not None and hi is not None:
        return f"{_num_text(lo)} to {_num_text(hi)}{u}"
    if lo is not None:
        return f"at least {_num_text(lo)}{u}"
    return f"at most {_num_text(hi)}{u}"


def _time(raw: object, key: str, errors: Errors) -> dt.datetime | None:
    if not isinstance(raw, str) or (value := parse_datetime(raw)) is None:
        errors.add(key, f"{key}={raw!r} is not an ISO 8601 date-time such as 2025-03-01T08:55:00Z")
        return None
    if timezone.is_naive(value):
        errors.add(key, f"{key}={raw!r} has no time-zone offset; add Z or +01:00")
        return None
    if value > timezone.now() + CLOCK_SKEW:
        errors.add(key, f"{key}={raw!r} is in the future; check the phone's clock")
        return None
    return value


def _uuid(raw: object, key: str, errors: Errors) -> uuid.UUID | None:
    try:
        return uuid.UUID(str(raw))
    except (ValueError, TypeError, AttributeError):
        errors.add(key, f"{key}={raw!r} is not a UUID")
        return None


def _number(raw: object) -> float | None:
    if isinstance(raw, bool):
        return None
    if isinstance(raw, int | float):
        x = float(raw)
    elif isinstance(raw, str):
        try:
            x = float(raw.strip().replace(",", "."))
        except ValueError:
            return None
    else:
        return None
    return x if math.isfinite(x) else None


def _reading(parsed: Parsed, i: int, raw: object, seen: set, errors: Errors) -> None:
    at = f"readings[{i}]"
    if not isinstance(raw, dict):
        errors.add(at, "each reading is an object {item, component, value, note}")
        return
    key, comp_code, value, note = raw.get("item"), raw.get("component"), raw.get("value"), raw.get("note") or ""
    slot = parsed.checklist.by_key().get((key, comp_code or None))
    if slot is None:
        if any(k == key for k, _ in parsed.checklist.by_key()):
            errors.add(f"{at}.component", f"item {key!r} is not asked for component {comp_code!r} on this unit")
        else:
            errors.add(f"{at}.item", f"item {key!r} is not on this work order's checklist")
        return
    if slot.key in seen:
        errors.add(at, f"item {key!r} (component {comp_code!r}) is answered twice in this form")
        return
    seen.add(slot.key)
    if not isinstance(note, str) or len(note) > MAX_TEXT:
        errors.add(f"{at}.note", f"a note is text of at most {MAX_TEXT} characters")
        return
    it = slot.item
    reading = Reading(item=it, component=slot.component, note=note, entered=value)
    label = it.label + (f" ({slot.component.name})" if slot.component else "")
    if value == "na" and it.kind != "text":
        reading.value_text = "na"
    elif it.kind == "check":
        if value not in CHECK_VALUES:
            errors.add(f"{at}.value", f"{label}: {value!r} is not one of ok, not_ok, na")
            return
        reading.value_text = value
    elif it.kind == "choice":
        allowed = [c["value"] for c in it.choices]
        if value not in allowed:
            errors.add(f"{at}.value", f"{label}: {value!r} is not one of {', '.join(allowed)}, na")
            return
        reading.value_text = value
    elif it.kind == "text":
        if not isinstance(value, str) or len(value) > MAX_TEXT:
            errors.add(f"{at}.value", f"{label}: expected text of at most {MAX_TEXT} characters")
            return
        reading.value_text = value
    elif it.kind == "photo":
        if value not in (None, "", "ok"):
            errors.add(f"{at}.value", f"{label}: a photo item takes no value; send the photo in 'photos'")
            return
        return  # photo items are answered by their photos
    else:
        x = _number(value)
        unit = checklists.display_unit_label(it.quantity, parsed.unit_system)
        lim = slot.limits
        lo = checklists.to_display(lim.get("physical_min"), it.quantity, parsed.unit_system)
        hi = checklists.to_display(lim.get("physical_max"), it.quantity, parsed.unit_system)
        if x is None:
            errors.add(f"{at}.value", f"{label}: {value!r} is not a number; allowed {_range_text(lo, hi, unit)}")
            return
        try:
            si = checklists.from_display(x, it.quantity, parsed.unit_system)
        except EngineeringInputError as exc:
            errors.add(f"{at}.value", f"{label}: {exc}")
            return
        tol = 1e-9 * max(1.0, abs(si))
        if (lim.get("physical_min") is not None and si < lim["physical_min"] - tol) or (
            lim.get("physical_max") is not None and si > lim["physical_max"] + tol
        ):
            errors.add(
                f"{at}.value", f"{label}: {_num_text(x)} {unit} is impossible; allowed {_range_text(lo, hi, unit)}"
            )
            return
        reading.value_si = si
        plo, phi = lim.get("plausible_min"), lim.get("plausible_max")
        if (plo is not None and si < plo) or (phi is not None and si > phi):
            reading.improbable = True
            dlo = checklists.to_display(plo, it.quantity, parsed.unit_system)
            dhi = checklists.to_display(phi, it.quantity, parsed.unit_system)
            parsed.improbable.append(
                f"{label}: {_num_text(x)} {unit} is outside the plausible "
                f"{_range_text(dlo, dhi, unit)}; please check it"
            )
    parsed.readings.append(reading)


def _run_hours(parsed: Parsed, raw_readings: list, errors: Errors) -> None:
    """Refuse a run-hour value the unit's meter cannot have reached since its last reading.

    The same check as every other way a reading comes in
    (``scheduling.services.meter_reading_check``). A value below an earlier
    reading is left to the store step, which keeps the form and flags it
    (``meter_reading_refused``): a replaced meter reads lower, and the office
    records the replacement.
    """
    from scheduling.services import meter_reading_check

    reading = next((r for r in parsed.readings if r.item.api_key == "visit.run_hours" and r.value_si is not None), None)
    if reading is None:
        return
    i = next(
        (n for n, raw in enumerate(raw_readings) if isinstance(raw, dict) and raw.get("item") == "visit.run_hours"), 0
    )
    try:
        meter_reading_check(
            ahu=parsed.work_order.ahu,
            hours=reading.value_si,
            taken_at=parsed.finished_at,
            label=reading.item.label,
            if_replaced="answer “not applicable” here and give the office the new meter's reading",
        )
    except ValidationError as exc:
        for problems in exc.error_dict.values():
            for problem in problems:
                if problem.code != "meter_backwards":
                    errors.add(f"readings[{i}].value", " ".join(problem.messages))


def _photos(parsed: Parsed, raw_list: object, errors: Errors) -> None:
    if raw_list in (None, []):
        return
    if not isinstance(raw_list, list):
        errors.add("photos", "photos is a list of {client_uuid, item, component, data}")
        return
    by_key = parsed.checklist.by_key()
    for i, raw in enumerate(raw_list):
        at = f"photos[{i}]"
        if not isinstance(raw, dict):
            errors.add(at, "each photo is an object {client_uuid, item, component, data}")
            continue
        pid = _uuid(raw.get("client_uuid"), f"{at}.client_uuid", errors)
        slot = by_key.get((raw.get("item"), raw.get("component") or None))
        if slot is None:
            errors.add(
                f"{at}.item",
                f"item {raw.get('item')!r} (component {raw.get('component')!r}) is not on this work order's checklist",
            )
            continue
        if pid is None:
            continue
        earlier = Photo.objects.filter(client_uuid=pid).first()
        if earlier is not None:
            if earlier.work_order_id != parsed.work_order.pk or earlier.inspection_id is not None:
                errors.add(f"{at}.client_uuid", f"photo {pid} belongs to another work order or inspection")
                continue
            parsed.photos.append(({**raw, "slot": slot}, earlier))
            continue
        if not raw.get("data"):
            errors.add(f"{at}.data", f"photo {pid} was not uploaded before; send its data")
            continue
        try:
            data = photo_service.data_url_decode(
                raw["data"], field=f"{at}.data", max_bytes=settings.PLENUM_PHOTO_MAX_BYTES
            )
            image = photo_service.image_clean(data, field=f"{at}.data")
        except ValidationError as exc:
            for k, msgs in exc.message_dict.items():
                for m in msgs:
                    errors.add(k, m)
            continue
        parsed.photos.append(({**raw, "slot": slot}, image))


def _signature(parsed: Parsed, raw: object, errors: Errors) -> None:
    if not isinstance(raw, dict):
        errors.add("signature", "a signed form needs signature {name, image, signed_at}")
        return
    name = raw.get("name")
    if not isinstance(name, str) or not name.strip() or len(name) > 200:
        errors.add("signature.name", "the signer's name is required (at most 200 characters)")
    signed_at = _time(raw.get("signed_at"), "signature.signed_at", errors)
    try:
        image = photo_service.signature_clean(raw.get("image"))
    except ValidationError as exc:
        for k, msgs in exc.message_dict.items():
            for m in msgs:
                errors.add(k, m)
        return
    parsed.signature = {"name": (name or "").strip(), "signed_at": signed_at, "image": image}


def form_parse(*, user, raw: object) -> tuple[Parsed | None, Errors, uuid.UUID | None]:
    """Validate one form completely, without writing anything."""
    errors = Errors()
    if not isinstance(raw, dict):
        errors.add("form", "each form is an object; see inspections/SYNC.md")
        return None, errors, None
    client_uuid = _uuid(raw.get("client_uuid"), "client_uuid", errors)
    wo_id = _uuid(raw.get("work_order"), "work_order", errors)
    work_order = selectors.work_order_for_sync(user=user, public_id=wo_id) if wo_id else None
    if wo_id and work_order is None:
        errors.add("work_order", f"work_order={str(wo_id)!r}: no such work order in your organisation")
    version = raw.get("work_order_version")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        errors.add("work_order_version", f"work_order_version={version!r} is not a whole number ≥ 1")
    system = raw.get("unit_system")
    if system not in ("si", "us"):
        errors.add("unit_system", f"unit_system={system!r} is not one of si, us")
    started = _time(raw.get("started_at"), "started_at", errors)
    finished = _time(raw.get("finished_at"), "finished_at", errors)
    if started and finished and started > finished:
        errors.add("finished_at", "finished_at is before started_at")
    readings = raw.get("readings")
    if not isinstance(readings, list):
        errors.add("readings", "readings is a list of {item, component, value, note}")
    if errors or work_order is None:
        return None, errors, client_uuid
    parsed = Parsed(
        client_uuid=client_uuid,
        work_order=work_order,
        version_seen=version,
        unit_system=system,
        started_at=started,
        finished_at=finished,
        checklist=selectors.checklist_build(work_order=work_order),
    )
    seen: set = set()
    for i, r in enumerate(readings):
        _reading(parsed, i, r, seen, errors)
    _run_hours(parsed, readings, errors)
    _photos(parsed, raw.get("photos"), errors)
    _signature(parsed, raw.get("signature"), errors)
    return (None if errors else parsed), errors, client_uuid


# ---------------------------------------------------------------------------
# Storing
# ---------------------------------------------------------------------------


def _filter_points_for(ahu, finished_at):
    """Earlier readings of a bank's present filters, for its change forecast (``selectors.filter_series``)."""

    def points(component) -> list[FilterPoint]:
        return selectors.filter_series(component=component, before=finished_at).current.forecast_points()

    return points


def _evaluate(parsed: Parsed) -> list[evaluation.Result]:
    wo = parsed.work_order
    values = {
        (r.item.api_key, r.component.pk if r.component else None): evaluation.Value(
            number=r.value_si, text=r.value_text
        )
        for r in parsed.readings
    }
    form = evaluation.Form(
        ahu=wo.ahu,
        components=list(wo.ahu.components.all()),
        values=values,
        slots=parsed.checklist.slots,
        finished_at=parsed.finished_at,
        filter_points=_filter_points_for(wo.ahu, parsed.finished_at),
    )
    return evaluation.evaluate(form)


def _not_ok(reading: Reading) -> bool:
    return reading.verdict == "fail"


def _flags(parsed: Parsed, user, wo: WorkOrder, results) -> list[dict]:
    flags = []
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
        names = [
            f"{s.template.title} › {s.item.label}" + (f" ({s.component.name})" if s.component else "") for s in missing
        ]
        more = f" and {len(names) - 10} more" if len(names) > 10 else ""
        flags.append({"code": "incomplete", "reason": "required items not answered: " + "; ".join(names[:10]) + more})
    slots = {s.key: s for s in parsed.checklist.slots}
    for r in parsed.readings:
        key = (r.item.api_key, r.component.pk if r.component else None)
        if not _not_ok(r):
            continue
        label = r.item.label + (f" ({r.component.name})" if r.component else "")
        if slots[key].item.photo_required_when_not_ok and key not in photographed:
            flags.append({"code": "missing_photo", "reason": f"{label} is not ok but has no photo"})
        if slots[key].item.note_required_when_not_ok and not r.note.strip():
            flags.append({"code": "missing_note", "reason": f"{label} is not ok but has no note"})
    return flags


def _result_json(
    inspection: Inspection, status: str, flags, evals, found, wo: WorkOrder, *, unit_system: str = "si"
) -> dict:
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
    }


def duplicate_result(inspection: Inspection, *, user) -> dict:
    if inspection.technician_id != user.pk:
        errors = Errors()
        errors.add(
            "client_uuid",
            f"client_uuid={str(inspection.client_uuid)!r} is already used by another person's form; generate a new one",
        )
        return refused_result(inspection.client_uuid, errors)
    first = dict(inspection.sync_result)
    return {**first, "status": "duplicate", "first_status": first.get("status")}


def refused_result(client_uuid, errors: Errors) -> dict:
    return {
        "client_uuid": str(client_uuid) if client_uuid else None,
        "status": "refused",
        "inspection_id": None,
        "work_order_state": None,
        "flags": [],
        "errors": dict(errors),
        "evaluation": [],
        "findings": [],
    }


def _store(parsed: Parsed, user, results) -> dict:
    from scheduling.services import meter_reading_record, work_order_complete

    written: list = []
    sig = parsed.signature
    inspection = Inspection(
        client_uuid=parsed.client_uuid,
        organisation_id=parsed.work_order.organisation_id,
        work_order=parsed.work_order,
        ahu=parsed.work_order.ahu,
        technician=user,
        template_versions={t.code: t.version for t in parsed.checklist.templates},
        unit_system=parsed.unit_system,
        work_order_version_seen=parsed.version_seen,
        started_at=parsed.started_at,
        finished_at=parsed.finished_at,
        signature_name=sig["name"],
        signed_at=sig["signed_at"],
    )
    inspection.signature_image.save(f"{parsed.client_uuid.hex}.png", ContentFile(sig["image"].data), save=False)
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
    by_reading = {}
    for res in results:
        by_reading.setdefault((res.item, res.component.pk if res.component else None), res)
    for r in parsed.readings:
        res = by_reading.get((r.item.api_key, r.component.pk if r.component else None))
        if r.value_text == "na":
            r.verdict = "na"
        elif res is not None:
            r.verdict, r.reason, r.reason_parts = res.verdict, res.reason[:500], res.reason_parts
    try:
        with transaction.atomic():
            wo = WorkOrder.objects.select_for_update().get(pk=parsed.work_order.pk)
            flags = _flags(parsed, user, wo, results)
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
            found = findings_service.findings_open(inspection=inspection, evaluations=evals, results=results, by=user)
            hours = next(
                (r.value_si for r in parsed.readings if r.item.api_key == "visit.run_hours" and r.value_si is not None),
                None,
            )
            if hours is not None:
                try:
                    with transaction.atomic():
                        meter_reading_record(
                            ahu=wo.ahu, hours=hours, taken_at=parsed.finished_at, source="checklist", by=user
                        )
                except ValidationError as exc:
                    flags.append(
                        {"code": "meter_reading_refused", "reason": "run-hour meter: " + " ".join(exc.messages)}
                    )
            blocking = {"work_order_cancelled", "work_order_closed", "work_order_reassigned", "incomplete"}
            if not any(f["code"] in blocking for f in flags) and wo.is_open:
                try:
                    with transaction.atomic():
                        work_order_complete(work_order=wo, by=user, completed_at=parsed.finished_at)
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
            inspection.sync_result = _result_json(
                inspection, status, flags, evals, found, wo, unit_system=getattr(user, "unit_system", "si")
            )
            # flags and flag_reason change only inside this creating transaction.
            Inspection.objects.filter(pk=inspection.pk).update(
                flags=flags,
                flag_reason=inspection.flag_reason,
                sync_result=inspection.sync_result,
                work_order_completed=inspection.work_order_completed,
            )
            audit_record(
                actor=user,
                obj=inspection,
                action="inspection_submit",
                organisation=wo.organisation,
                changes={
                    "client_uuid": str(parsed.client_uuid),
                    "work_order": str(wo.public_id),
                    "readings": len(parsed.readings),
                    "flags": [f["code"] for f in flags],
                    "findings": [f.pk for f in found],
                },
            )
            return inspection.sync_result
    except IntegrityError:
        for f in written:
            f.storage.delete(f.name)
        first = Inspection.objects.filter(client_uuid=parsed.client_uuid).first()
        if first is None:
            raise
        return duplicate_result(first, user=user)
    except BaseException:
        for f in written:
            f.storage.delete(f.name)
        raise


def inspection_submit(*, user, form: object) -> dict:
    """Store one finished form (or return the first result for its client_uuid, or refuse it whole)."""
    if isinstance(form, dict):
        try:
            first = Inspection.objects.filter(client_uuid=uuid.UUID(str(form.get("client_uuid")))).first()
        except (ValueError, TypeError, AttributeError):
            first = None
        if first is not None:
            return duplicate_result(first, user=user)
    parsed, errors, client_uuid = form_parse(user=user, raw=form)
    if parsed is None:
        return refused_result(client_uuid, errors)
    results = _evaluate(parsed)
    return _store(parsed, user, results)


def inspection_sync(*, user, forms: list) -> list[dict]:
    """One result per form, in order. Each form is its own transaction."""
    if not isinstance(forms, list) or len(forms) > MAX_FORMS:
        raise ValidationError({"forms": [f"forms is a list of at most {MAX_FORMS} forms"]})
    return [inspection_submit(user=user, form=f) for f in forms]
