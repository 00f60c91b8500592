"""The flags a synced form is stored with: what the server noticed about it, each a code and a reason.

Raised here with the words of ``inspections.flags`` (the phone's checker says the same); the store
(``inspections.services.sync``) adds the two it learns only while writing (the meter reading or the work order's
completion refused). tests/inspections/test_form_flags.py scans both modules for the codes they raise.
"""

from __future__ import annotations

import datetime as dt

from accounts.models import User
from engineering.controls import Verdict
from scheduling.models import WorkOrder

from .. import check
from .. import flags as form_flags
from ..models import Reading
from .form_check import Parsed


def _not_ok(reading: Reading) -> bool:
    return reading.verdict == Verdict.FAIL


def form_flags_raised(parsed: Parsed, user: User, wo: WorkOrder) -> list[dict[str, str]]:
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
        # Every fail says what was found: the phone asks for it on each one (checklist.js), so none goes unflagged.
        if not r.note.strip():
            flags.append(form_flags.flag_for("missing_note", label=label))
    return flags


def _clock_reason(placed: check.Placed, skew: dt.timedelta) -> str:
    how = "" if placed.measured else "at least "
    return (
        f"the phone's clock was {how}{check.skew_text(skew)} the server's when the form arrived; "
        f"its finish and signature times are placed on the server's clock (finished "
        f"{placed.finished_at:%Y-%m-%d %H:%M} UTC); set the phone to the network time"
    )
