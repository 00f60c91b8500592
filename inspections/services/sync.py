"""The offline sync endpoint's service: store each finished form exactly once, never drop one.

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
from dataclasses import dataclass, field
from typing import Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import DatabaseError, DataError, IntegrityError, transaction
from django.utils import timezone

from accounts.changes import changes_deferred, organisation_changed
from accounts.services import audit_record, audits_deferred
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint
from engineering.formatting import significant_text
from engineering.units import SYSTEMS
from scheduling.models import WorkOrder

from .. import check, checklists, evaluation, selectors
from .. import flags as form_flags
from ..check import Errors
from ..display import plain_message
from ..models import Inspection, Photo, Reading
from . import findings as findings_service
from . import photos as photo_service

logger = logging.getLogger(__name__)

MAX_FORMS = 50
MAX_TEXT = 2000
MAX_NAME = 200
MAX_READINGS = 2000
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
    clock: check.Placed | None = None
    phone_times: dict[str, Any] = field(default_factory=dict)
    readings: list[Reading] = field(default_factory=list)
    improbable: list[str] = field(default_factory=list)
    photos: list[tuple[dict, photo_service.CleanImage | Photo]] = field(default_factory=list)
    signature: dict[str, Any] = field(default_factory=dict)


@dataclass
class Batch:
    """What every form of one sync request needs, read once for the request (``batch_read``).

    ``work_orders``: the work orders the sender may add to, by public id (``selectors.work_orders_for_sync``);
    ``firsts``: the forms already stored before the request, by client uuid; ``templates``: the current
    checklist templates; ``handled``: the client uuids of forms already handled in this request (a form
    sent twice in one request asks the database again, so its second copy answers as before)."""

    work_orders: dict[uuid.UUID, WorkOrder]
    firsts: dict[uuid.UUID, Inspection]
    templates: dict[str, Any]
    handled: set[uuid.UUID] = field(default_factory=set)
    written: list = field(default_factory=list)  # files of the forms stored so far (removed if the batch fails)
    # (the request's work order, the form's moved copy of it): copied back once the form's savepoint is released
    moved: list = field(default_factory=list)

    def form_kept(self) -> None:
        """The form's savepoint was released: the work orders it moved are the request's from now on."""
        for original, moved in self.moved:
            for f in WorkOrder._meta.concrete_fields:
                setattr(original, f.attname, getattr(moved, f.attname))
        self.moved.clear()


def _uuid_or_none(raw: object) -> uuid.UUID | None:
    if not isinstance(raw, str) or len(raw) > 64:
        return None
    try:
        return uuid.UUID(raw)
    except ValueError:
        return None


def batch_read(*, user, forms: list) -> Batch:
    """Read at once what the forms of a request share: a fixed number of queries for any number of forms."""
    from ..services.library import templates_current

    dicts = [f for f in forms if isinstance(f, dict)]
    client_ids = {u for f in dicts if (u := _uuid_or_none(f.get("client_uuid"))) is not None}
    wo_ids = {u for f in dicts if (u := _uuid_or_none(f.get("work_order"))) is not None}
    firsts = {i.client_uuid: i for i in Inspection.objects.filter(client_uuid__in=client_ids)} if client_ids else {}
    if wo_ids:
        # Every work order the forms name, locked once for the request, in one order (two requests cannot wait
        # on each other), before they are read: each form then judges the row as it stands.
        list(WorkOrder.objects.select_for_update().filter(public_id__in=wo_ids).order_by("pk").values_list("pk"))
    return Batch(
        work_orders=selectors.work_orders_for_sync(user=user, public_ids=wo_ids),
        firsts=firsts,
        templates=templates_current(),
    )


def _num_text(x: float | None) -> str:
    return "any" if x is None else significant_text(x)


def _range_text(lo: float | None, hi: float | None, unit: str) -> str:
    u = f" {unit}" if unit else ""
    if lo is not None and hi is not None:
        return f"{_num_text(lo)} to {_num_text(hi)}{u}"
    if lo is not None:
        return f"at least {_num_text(lo)}{u}"
    return f"at most {_num_text(hi)}{u}"


def _reading(parsed: Parsed, i: int, raw: object, seen: set, errors: Errors) -> None:
    at = f"readings[{i}]"
    if not isinstance(raw, dict):
        errors.add(at, "each reading is an object {item, component, value, note}")
        return
    key, comp_code, value = raw.get("item"), raw.get("component"), raw.get("value")
    if check.code(key) is None:
        errors.add(f"{at}.item", f"item {check.shown(key)} is not an item key (text such as filter_check.dp)")
        return
    if comp_code is not None and check.code(comp_code) is None:
        errors.add(f"{at}.component", f"component {check.shown(comp_code)} is not a label code (text) or null")
        return
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
    it = slot.item
    label = it.label + (f" ({slot.component.name})" if slot.component else "")
    note = check.text(raw.get("note"), f"{at}.note", errors, label=f"{label}, note", max_len=MAX_TEXT)
    if note is None:
        return
    reading = Reading(item=it, component=slot.component, note=note, entered=value)
    if value == "na" and it.kind != "text":
        reading.value_text = "na"
    elif it.kind == "check":
        if not isinstance(value, str) or value not in CHECK_VALUES:
            errors.add(f"{at}.value", f"{label}: {check.shown(value)} is not one of ok, not_ok, na")
            return
        reading.value_text = value
    elif it.kind == "choice":
        allowed = [c["value"] for c in it.choices]
        if not isinstance(value, str) or value not in allowed:
            errors.add(f"{at}.value", f"{label}: {check.shown(value)} is not one of {', '.join(allowed)}, na")
            return
        reading.value_text = value
    elif it.kind == "text":
        if check.text(value, f"{at}.value", errors, label=label, max_len=MAX_TEXT, required=True) is None:
            return
        reading.value_text = value
    elif it.kind == "photo":
        if not (value is None or (isinstance(value, str) and value in ("", "ok"))):
            errors.add(f"{at}.value", f"{label}: a photo item takes no value; send the photo in 'photos'")
            return
        return  # photo items are answered by their photos
    else:
        x = check.number(value)
        if x is not None and parsed.unit_system is None:
            return  # a number, but in an unknown unit system (refused under unit_system): no limits to judge it by
        if x is None and parsed.unit_system is None:
            errors.add(f"{at}.value", f"{label}: {check.shown(value)} is not a number")
            return
        unit = checklists.display_unit_label(it.quantity, parsed.unit_system)
        lim = slot.limits
        lo = checklists.to_display(lim.get("physical_min"), it.quantity, parsed.unit_system)
        hi = checklists.to_display(lim.get("physical_max"), it.quantity, parsed.unit_system)
        if x is None:
            errors.add(
                f"{at}.value", f"{label}: {check.shown(value)} is not a number; allowed {_range_text(lo, hi, unit)}"
            )
            return
        try:
            si = checklists.from_display(x, it.quantity, parsed.unit_system)
        except EngineeringInputError as exc:
            errors.add(f"{at}.value", f"{label}: {plain_message(exc)}")
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


# What a technician does when the meter was in fact replaced (the phone shows the same words, inspections.phone).
RUN_HOURS_IF_REPLACED = "answer “not applicable” here and give the office the new meter's reading"


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
            if_replaced=RUN_HOURS_IF_REPLACED,
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
        pid = check.uuid_(raw.get("client_uuid"), f"{at}.client_uuid", errors, label="photo")
        item, comp = check.code(raw.get("item")), raw.get("component")
        slot = by_key.get((item, comp or None)) if item and (comp is None or check.code(comp)) else None
        if slot is None:
            errors.add(
                f"{at}.item",
                f"item {check.shown(raw.get('item'))} (component {check.shown(comp)}) is not on this work order's "
                "checklist",
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
    name = check.text(
        raw.get("name"),
        "signature.name",
        errors,
        label="The signer's name",
        max_len=MAX_NAME,
        required=True,
        lines=False,
    )
    signed_at = check.when(raw.get("signed_at"), "signature.signed_at", errors, label="Signed at")
    try:
        image = photo_service.signature_clean(raw.get("image"))
    except ValidationError as exc:
        for k, msgs in exc.message_dict.items():
            for m in msgs:
                errors.add(k, m)
        return
    parsed.signature = {"name": (name or "").strip(), "signed_at": signed_at, "image": image}


def _clock(parsed: Parsed, raw: dict, sent_at: object, errors: Errors) -> None:
    """Place the phone's times on the server's timeline (``check.clock_place``); the phone's clock never refuses."""
    phone_sent = raw.get("sent_at", sent_at)
    sent = None
    if phone_sent is not None:
        sent = check.when(phone_sent, "sent_at", errors, label="Sent at (the phone's clock)")
    signed = parsed.signature.get("signed_at")
    if (sent is None and phone_sent is not None) or signed is None:
        return
    received = timezone.now()
    placed = check.clock_place(
        started_at=parsed.started_at,
        finished_at=parsed.finished_at,
        signed_at=signed,
        sent_at=sent,
        received_at=received,
    )
    parsed.phone_times = {
        "started_at": raw.get("started_at"),
        "finished_at": raw.get("finished_at"),
        "signed_at": (raw.get("signature") or {}).get("signed_at"),
        "sent_at": phone_sent,
        "received_at": received.isoformat(),
        "skew_from": None if placed.skew is None else ("sent_at" if placed.measured else "times"),
    }
    parsed.clock = placed
    parsed.started_at, parsed.finished_at = placed.started_at, placed.finished_at
    parsed.signature["signed_at"] = placed.signed_at


def _json_kind(raw: object) -> str:
    """What a JSON value is, in JSON's words (a form that is not an object says what it is instead)."""
    if raw is None:
        return "null"
    if isinstance(raw, bool):
        return "true/false"
    if isinstance(raw, int | float):
        return "a number"
    if isinstance(raw, str):
        return "text"
    if isinstance(raw, list):
        return "a list"
    return type(raw).__name__


# The words for a work order the sender may not add to, the same whether it exists or not (ids do not leak).
UNKNOWN_WORK_ORDER = "no such work order that you may see"


def form_parse(
    *, user, raw: object, sent_at: object = None, position: int | None = None, batch: Batch | None = None
) -> tuple[Parsed | None, Errors, uuid.UUID | None]:
    """Validate one form completely, without writing anything: clean values, or errors naming each field.

    Every field is judged, so one answer names all that is wrong with the form: its top-level fields, the
    signature and every reading (readings are judged against the work order's checklist, so only once the
    work order is one the sender may add to: nothing about another unit is said).
    ``sent_at`` is the phone's clock when it sent the batch (the form's own
    ``sent_at`` wins); the phone's times are placed on the server's timeline.
    ``position`` is the form's place in its batch (1 = first), named when the form is not even an object.
    ``batch``: what the request's forms share, read once (``batch_read``); read for this form otherwise.
    """
    errors = Errors()
    if not isinstance(raw, dict):
        which = f"form {position}" if position is not None else "the form"
        errors.add(
            "form", f"{which} is not an object (got {_json_kind(raw)}); each form is an object, see inspections/SYNC.md"
        )
        return None, errors, None
    client_uuid = check.uuid_(raw.get("client_uuid"), "client_uuid", errors, label="The form's id")
    wo_id = check.uuid_(raw.get("work_order"), "work_order", errors, label="Work order")
    if batch is not None:
        work_order = batch.work_orders.get(wo_id) if wo_id else None
    else:
        work_order = selectors.work_order_for_sync(user=user, public_id=wo_id) if wo_id else None
    if wo_id and work_order is None:
        errors.add("work_order", f"Work order {str(wo_id)!r}: {UNKNOWN_WORK_ORDER}")
    version = check.whole(raw.get("work_order_version"), "work_order_version", errors, label="Work order version")
    system = raw.get("unit_system")
    if not isinstance(system, str) or system not in SYSTEMS:
        errors.add("unit_system", f"Unit system: {check.shown(system)} is not one of {', '.join(SYSTEMS)}")
        system = None  # numbers are then checked for being numbers only, not against their limits
    started = check.when(raw.get("started_at"), "started_at", errors, label="Started at")
    finished = check.when(raw.get("finished_at"), "finished_at", errors, label="Finished at")
    readings = raw.get("readings")
    if not isinstance(readings, list) or len(readings) > MAX_READINGS:
        errors.add(
            "readings",
            f"Readings: {check.shown(readings)} is not allowed; allowed a list of at most {MAX_READINGS} readings "
            "{item, component, value, note}",
        )
        readings = None
    if work_order is None:
        return None, errors, client_uuid
    parsed = Parsed(
        client_uuid=client_uuid,
        work_order=work_order,
        version_seen=version,
        unit_system=system,
        started_at=started,
        finished_at=finished,
        checklist=selectors.checklist_build(
            work_order=work_order, templates=batch.templates if batch is not None else None
        ),
    )
    _signature(parsed, raw.get("signature"), errors)
    if started is not None and finished is not None:
        _clock(parsed, raw, sent_at, errors)  # before the readings: the meter reading is dated on the server's timeline
    seen: set = set()
    for i, r in enumerate(readings or []):
        _reading(parsed, i, r, seen, errors)
    if readings is not None and system is not None and finished is not None:
        _run_hours(parsed, readings, errors)
    _photos(parsed, raw.get("photos"), errors)
    return (None if errors else parsed), errors, client_uuid


# ---------------------------------------------------------------------------
# Storing
# ---------------------------------------------------------------------------


def _filter_points_for(unit, finished_at):
    """Earlier readings of a bank's present filters, for its change forecast (``selectors.filter_series``).

    ``unit``: the AHU, or its components as already loaded. Every bank of the unit is read at the first
    question, in the fixed queries of ``filter_series_for``: a unit with 13 banks costs what one with one does."""
    series: dict = {}

    def points(component) -> list[FilterPoint]:
        if not series:
            components = unit if isinstance(unit, list) else list(unit.components.all())
            series.update(selectors.filter_series_for(components=components, before=finished_at) or {None: None})
        found = series.get(component.pk)
        if found is None:  # not one of the unit's banks as loaded (never expected): asked on its own
            found = selectors.filter_series(component=component, before=finished_at)
        return found.current.forecast_points()

    return points


def _evaluate(parsed: Parsed) -> list[evaluation.Result]:
    wo = parsed.work_order
    values = {
        (r.item.api_key, r.component.pk if r.component else None): evaluation.Value(
            number=r.value_si, text=r.value_text
        )
        for r in parsed.readings
    }
    components = list(wo.ahu.components.all())
    form = evaluation.Form(
        ahu=wo.ahu,
        components=components,
        values=values,
        slots=parsed.checklist.slots,
        finished_at=parsed.finished_at,
        filter_points=_filter_points_for(components, parsed.finished_at),
    )
    return evaluation.evaluate(form)


def _not_ok(reading: Reading) -> bool:
    return reading.verdict == Verdict.FAIL


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
    if parsed.clock is not None and parsed.clock.beyond_tolerance:
        flags.append({"code": "phone_clock", "reason": _clock_reason(parsed.clock)})
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


def _clock_reason(placed: check.Placed) -> str:
    how = "" if placed.measured else "at least "
    return (
        f"the phone's clock was {how}{check.skew_text(placed.skew)} the server's when the form arrived; "
        f"its finish and signature times are placed on the server's clock (finished "
        f"{placed.finished_at:%Y-%m-%d %H:%M} UTC); set the phone to the network time"
    )


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
        "clock_skew_s": inspection.clock_skew_s,
    }


def duplicate_result(inspection: Inspection, *, user) -> dict:
    if inspection.technician_id != user.pk:
        errors = Errors()
        errors.add(
            "client_uuid",
            f"The form's id {inspection.client_uuid} is already used by another person's form; generate a new one",
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
        "clock_skew_s": None,
    }


def _store(parsed: Parsed, user, results, batch: Batch | None = None) -> dict:
    from scheduling.services import meter_reading_record, work_order_complete, work_order_complete_locked

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
        clock_skew=parsed.clock.skew if parsed.clock else None,
        phone_times=parsed.phone_times,
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
            r.verdict = Verdict.NOT_APPLICABLE
        elif res is not None:
            r.verdict, r.reason, r.reason_parts = res.verdict, res.reason, res.reason_parts
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
                try:  # a refusal is raised before the service writes: the form stays whole without a savepoint
                    meter_reading_record(
                        ahu=parsed.work_order.ahu,  # already read with its site (wo is the locked row)
                        hours=hours,
                        taken_at=parsed.finished_at,
                        source="checklist",
                        by=user,
                        in_caller_transaction=batch is not None,
                    )
                except ValidationError as exc:
                    flags.append(
                        {"code": "meter_reading_refused", "reason": "run-hour meter: " + " ".join(exc.messages)}
                    )
            blocking = {"work_order_cancelled", "work_order_closed", "work_order_reassigned", "incomplete"}
            if not any(f["code"] in blocking for f in flags) and wo.is_open:
                try:  # in a batch: on the row locked above, refused before any write (no savepoint, no relock)
                    if batch is not None:
                        work_order_complete_locked(work_order=wo, by=user, completed_at=parsed.finished_at)
                    else:
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
                organisation_id=wo.organisation_id,
                changes={
                    "client_uuid": str(parsed.client_uuid),
                    "work_order": str(wo.public_id),
                    "readings": len(parsed.readings),
                    "flags": [f["code"] for f in flags],
                    "findings": [f.pk for f in found],
                },
            )
            organisation_changed(organisation_id=wo.organisation_id)  # today, the board and its "to verify"
        if batch is not None:
            batch.written += written
        return inspection.sync_result
    except IntegrityError:
        for f in written:
            f.storage.delete(f.name)
        if batch is not None:
            raise  # answered by inspection_sync once the form's savepoint is rolled back
        first = Inspection.objects.filter(client_uuid=parsed.client_uuid).first()
        if first is None:
            raise
        return duplicate_result(first, user=user)
    except BaseException:
        for f in written:
            f.storage.delete(f.name)
        raise


def inspection_submit(
    *, user, form: object, sent_at: object = None, position: int | None = None, batch: Batch | None = None
) -> dict:
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
    results = _evaluate(parsed)
    return _store(parsed, user, results, batch)


def _first_stored(form: object) -> Inspection | None:
    """The inspection already stored under the form's client_uuid, if any."""
    key = _uuid_or_none(form.get("client_uuid")) if isinstance(form, dict) else None
    return Inspection.objects.filter(client_uuid=key).first() if key is not None else None


def _failed_result(form: object) -> dict:
    """A form the server could not handle (a defect, logged): kept on the phone and sent again later."""
    raw_id = form.get("client_uuid") if isinstance(form, dict) else None
    errors = Errors()
    errors.add("form", "the server could not store this form just now; it stays on the phone and is sent again")
    return {
        **refused_result(None, errors),  # the same empty answer, with its own status
        "client_uuid": raw_id if isinstance(raw_id, str) and len(raw_id) <= 36 else None,
        "status": "error",
    }


def inspection_sync(*, user, forms: list, sent_at: object = None) -> list[dict]:
    """One result per form, in order. Each form is stored whole or not at all and never holds back the others.

    The batch is one transaction with a savepoint per form: a form that fails is rolled back to its
    savepoint alone, and the batch commits once. The organisations' answer versions move once, at the end
    of that transaction (``accounts.changes.changes_deferred``), not once per write of every form.
    A form the server fails on (a defect, not the phone's input) answers
    ``status: "error"`` and is logged; a database outage still fails the batch
    (503 from config/api.py) so the phone keeps everything and retries.
    """
    if not isinstance(forms, list) or len(forms) > MAX_FORMS:
        raise ValidationError({"forms": [f"forms is a list of at most {MAX_FORMS} forms"]})
    out = []
    batch = None
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
        for f in batch.written if batch is not None else []:
            f.storage.delete(f.name)
        raise
    return out
