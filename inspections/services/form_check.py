"""Checking a finished form (the sync's first half): every field judged and the readings evaluated, nothing written.

``form_parse`` turns one raw form (JSON from the phone, see inspections/SYNC.md) into clean values (``Parsed``) or
``Errors`` naming each field, its value and what is allowed, in the form's units; ``form_evaluate`` judges the clean
readings. ``batch_read`` reads once what every form of a request shares. Storing what passed is
``inspections.services.sync``. Each reading is judged by ``reading_check`` (sign-off parses its readings with
its ``reading_parse``, by the same rules) and the clean readings by ``form_evaluation``.
"""

from __future__ import annotations

import datetime as dt
import uuid
from collections import Counter
from dataclasses import dataclass, field
from typing import Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db.models.fields.files import FieldFile
from django.utils import timezone

from accounts.models import User
from engineering.units import SYSTEMS
from inventory.models import AHU
from scheduling.models import WorkOrder

from .. import check, evaluation, selectors
from ..check import Errors
from ..models import Inspection, Photo, Reading
from . import photos as photo_service
from .form_evaluation import reading_values, values_evaluate
from .reading_check import reading_parse, run_hours_check

MAX_FORMS = 50
MAX_NAME = 200
MAX_READINGS = 2000


@dataclass
class Parsed:
    """A form as it is parsed. A field the form got wrong is ``None`` while the rest is judged (its error is in the
    form's ``Errors``); a form ``form_parse`` passes has them all (``head``)."""

    client_uuid: uuid.UUID | None
    work_order: WorkOrder
    version_seen: int | None
    unit_system: str | None
    started_at: dt.datetime | None
    finished_at: dt.datetime | None
    checklist: selectors.Checklist
    clock: check.Placed | None = None
    phone_times: dict[str, Any] = field(default_factory=dict)
    readings: list[Reading] = field(default_factory=list)
    improbable: list[str] = field(default_factory=list)
    photos: list[tuple[dict[str, Any], photo_service.CleanImage | Photo]] = field(default_factory=list)
    signature: dict[str, Any] = field(default_factory=dict)
    # Whether the unit's row is locked for the request (``batch_read``): its run-hour meter is then read once, on
    # arrival (``meter_neighbours``, by ``run_hours_check``), and that read serves the store's check too.
    unit_locked: bool = False
    meter_neighbours: tuple[Any, Any] | None = None

    def head(self) -> Head:
        """The form's own fields of a form that passed; a form with one missing is a defect, never stored."""
        if (
            self.client_uuid is None
            or self.version_seen is None
            or self.unit_system is None
            or self.started_at is None
            or self.finished_at is None
        ):
            raise ValueError(f"form {self.client_uuid} was passed without all of its own fields")
        return Head(
            client_uuid=self.client_uuid,
            version_seen=self.version_seen,
            unit_system=self.unit_system,
            started_at=self.started_at,
            finished_at=self.finished_at,
        )


@dataclass(frozen=True)
class Head:
    """The own fields of a form that passed (``Parsed.head``)."""

    client_uuid: uuid.UUID
    version_seen: int
    unit_system: str
    started_at: dt.datetime
    finished_at: dt.datetime


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
    # The files of the forms stored so far (removed if the batch fails).
    written: list[FieldFile] = field(default_factory=list)
    # Units that exactly one form of the request is for: no other form writes their filter history.
    single_units: set[int] = field(default_factory=set)
    _filter_history: selectors.FilterHistory | None = None
    # (the request's work order, the form's moved copy of it): copied back once the form's savepoint is released
    moved: list[tuple[WorkOrder, WorkOrder]] = field(default_factory=list)

    def filter_history(self) -> selectors.FilterHistory:
        """The filter history of the banks of ``single_units``, read whole at the first form that asks (two
        queries, and one per registered source, for the request instead of for each form)."""
        if self._filter_history is None:
            units = {wo.ahu_id: wo.ahu for wo in self.work_orders.values() if wo.ahu_id in self.single_units}
            self._filter_history = selectors.filter_history_read(
                components=[c for ahu in units.values() for c in ahu.components.all()]
            )
        return self._filter_history

    def form_kept(self) -> None:
        """The form's savepoint was released: the work orders it moved are the request's from now on."""
        for original, moved in self.moved:
            for f in WorkOrder._meta.concrete_fields:
                setattr(original, f.attname, getattr(moved, f.attname))
        self.moved.clear()


def uuid_or_none(raw: object) -> uuid.UUID | None:
    if not isinstance(raw, str) or len(raw) > 64:
        return None
    try:
        return uuid.UUID(raw)
    except ValueError:
        return None


def batch_read(*, user: User, forms: list[object]) -> Batch:
    """Read at once what the forms of a request share: a fixed number of queries for any number of forms."""
    from ..services.library import templates_current

    dicts = [f for f in forms if isinstance(f, dict)]
    client_ids = {u for f in dicts if (u := uuid_or_none(f.get("client_uuid"))) is not None}
    wo_ids = {u for f in dicts if (u := uuid_or_none(f.get("work_order"))) is not None}
    firsts = {i.client_uuid: i for i in Inspection.objects.filter(client_uuid__in=client_ids)} if client_ids else {}
    if wo_ids:
        # Every work order the forms name, locked once for the request, in one order (two requests cannot wait
        # on each other), before they are read: each form then judges the row as it stands.
        list(WorkOrder.objects.select_for_update().filter(public_id__in=wo_ids).order_by("pk").values_list("pk"))
    work_orders = selectors.work_orders_for_sync(user=user, public_ids=wo_ids)
    if work_orders:
        # Their units too, once for the request, in one order, after the work orders (as each form's meter
        # reading did before): a form's run-hour meter is then read once, under this lock, on arrival and for
        # the store alike. The rows alone (no join to, and no lock of, their buildings and sites).
        units = {wo.ahu_id for wo in work_orders.values()}
        list(AHU.objects.select_for_update().filter(pk__in=units).order_by("pk").values_list("pk"))
    forms_per_unit = Counter(
        work_orders[u].ahu_id for f in dicts if (u := uuid_or_none(f.get("work_order"))) in work_orders
    )
    return Batch(
        work_orders=work_orders,
        firsts=firsts,
        templates=templates_current(),
        single_units={unit for unit, n in forms_per_unit.items() if n == 1},
    )


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


def _clock(
    parsed: Parsed,
    raw: dict[str, Any],
    sent_at: object,
    errors: Errors,
    *,
    started_at: dt.datetime,
    finished_at: dt.datetime,
) -> None:
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
        started_at=started_at,
        finished_at=finished_at,
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
    *, user: User, raw: object, sent_at: object = None, position: int | None = None, batch: Batch | None = None
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
        unit_locked=batch is not None,
    )
    _signature(parsed, raw.get("signature"), errors)
    if started is not None and finished is not None:
        # before the readings: the meter reading is dated on the server's timeline
        arrived = work_order.arrived_by(started)  # a visit started before its page was (re)opened began then
        _clock(parsed, raw, sent_at, errors, started_at=arrived, finished_at=finished)
    seen: set[tuple[str, int | None]] = set()
    for i, r in enumerate(readings or []):
        reading_parse(parsed, i, r, seen, errors)
    if readings is not None and system is not None and finished is not None:
        run_hours_check(parsed, readings, errors)
    _photos(parsed, raw.get("photos"), errors)
    return (None if errors else parsed), errors, client_uuid


def form_evaluate(parsed: Parsed, batch: Batch | None = None) -> list[evaluation.Result]:
    """Judge a parsed form; in a request (``batch``), a unit no other form of it is for reads its filter history
    from the request's (``Batch.filter_history``)."""
    history = batch.filter_history if batch is not None and parsed.work_order.ahu_id in batch.single_units else None
    return values_evaluate(
        ahu=parsed.work_order.ahu,
        values=reading_values(parsed.readings),
        slots=parsed.checklist.slots,
        finished_at=parsed.head().finished_at,
        history=history,
    )
