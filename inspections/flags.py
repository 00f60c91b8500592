"""Every flag a stored form may carry for the supervisor, named once.

``FORM_FLAGS`` are the ones a phone can know from the form alone before it is sent: the server raises them
(``services.sync_flags.form_flags_raised``) with these very words, and the phone checks them on "Finish and sign"
from the checklist document (``phone.evaluation_context`` ships ``FORM_FLAGS`` as ``form_flags`` and each slot's
``required`` / ``photo_required_when_not_ok``; a note is asked on every fail), so both say the same thing.
``SERVER_FLAGS`` depend on what only the server knows when the form arrives (the work order's state and
version, the phone's clock, the meter's history) or are shown beside the field as it is typed (an unusual
value). tests/inspections/test_form_flags.py fails when the sync (``services.sync``, ``services.sync_flags``)
raises a code named in neither, and when the phone's checker (``frontend/static/frontend/js/formcheck.js``) lacks
a code of ``FORM_FLAGS``.
"""

from __future__ import annotations

# code -> the words, with {items} (the unanswered items) or {label} (the item) filled in.
FORM_FLAGS: dict[str, str] = {
    "incomplete": "required items not answered: {items}",
    "missing_photo": "{label} was marked Not OK without a photo of what is wrong",
    # Every fail: the phone asks "say what you found in the note" beside each one (DESIGN.md is silent on it).
    "missing_note": "{label} failed without a note saying what was found",
}

SERVER_FLAGS: tuple[str, ...] = (
    "work_order_cancelled",
    "work_order_closed",
    "work_order_reassigned",
    "work_order_changed",
    "work_order_not_completed",
    "improbable_value",
    "phone_clock",
    "meter_reading_refused",
)

# How many unanswered items the "incomplete" words name before "and N more".
INCOMPLETE_NAMED = 10


def slot_label(slot) -> str:
    """An item as a flag names it: its label, and its component's name when it has one."""
    return slot.item.label + (f" ({slot.component.name})" if slot.component else "")


def slot_place(slot) -> str:
    """An unanswered item as the "incomplete" words name it: the task's title › the item."""
    return f"{slot.template.title} › {slot_label(slot)}"


def flag_incomplete(names: list[str]) -> dict[str, str]:
    more = f" and {len(names) - INCOMPLETE_NAMED} more" if len(names) > INCOMPLETE_NAMED else ""
    items = "; ".join(names[:INCOMPLETE_NAMED]) + more
    return {"code": "incomplete", "reason": FORM_FLAGS["incomplete"].format(items=items)}


def flag_for(code: str, *, label: str) -> dict[str, str]:
    """A per-item flag of ``FORM_FLAGS`` (missing_photo, missing_note) for the item ``label``."""
    return {"code": code, "reason": FORM_FLAGS[code].format(label=label)}
