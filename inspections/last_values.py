"""The last value of each checklist reading on a unit: what the technician read there last time, and when.

A read (selector) of its own: ``last_readings`` takes the unit's recent signed forms before a moment, newest
first, and keeps each reading's most recent value, corrected by any amendment to it (the record's truth,
not the value as first typed). ``last_value_words`` writes one as a person reads it beside the field
("last: 182 Pa on 2 Nov 2026"), in the reader's units and on the site's calendar.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

from engineering.formatting import significant_text
from inventory.models import AHU

from . import reasons
from .models import Amendment, Inspection, Reading

# How many earlier forms are looked through for a reading (a rarely asked item still finds its last value;
# an item not read in the last dozen visits has no last value worth showing).
VISITS_LOOKED_AT = 12
CHECK_WORDS = {"ok": "OK", "not_ok": "Not OK", "na": "not applicable"}


@dataclass(frozen=True)
class LastReading:
    """A reading's latest stored value: SI number or its text code, and the form it came from."""

    item: str  # the item's api key ("filter_check.dp")
    component: str | None  # the component's label code, None for the unit
    value_si: float | None
    value_text: str
    finished_at: dt.datetime
    inspection_id: int


def last_readings(
    *, ahu: AHU, before: dt.datetime, exclude_work_order_id: int | None = None
) -> dict[tuple[str, str | None], LastReading]:
    """Each reading's latest value on ``ahu`` from forms finished before ``before`` (the visit's own work order
    left out), an amendment's corrected value in place of the typed one. Three queries however long the form."""
    forms = Inspection.objects.filter(ahu=ahu, finished_at__lt=before)
    if exclude_work_order_id is not None:
        forms = forms.exclude(work_order_id=exclude_work_order_id)
    recent = list(forms.order_by("-finished_at", "-id").values_list("id", "finished_at")[:VISITS_LOOKED_AT])
    when = dict(recent)
    order = {pk: n for n, (pk, _) in enumerate(recent)}
    corrected: dict[tuple[int, str, str | None], dict] = {}
    for amendment in Amendment.objects.filter(inspection_id__in=when).order_by("created_at", "id"):
        for change in amendment.changes or []:
            after = change.get("after") or {}
            corrected[(amendment.inspection_id, change.get("item"), change.get("component"))] = after
    out: dict[tuple[str, str | None], LastReading] = {}
    readings = (
        Reading.objects.filter(inspection_id__in=when)
        .select_related("item__template", "component")
        .exclude(item__kind__in=("photo", "text"))
    )
    for reading in sorted(readings, key=lambda x: (order[x.inspection_id], x.pk)):
        key = (reading.item.api_key, reading.component.label_code if reading.component else None)
        if key in out:
            continue
        value_si, value_text = reading.value_si, reading.value_text
        fix = corrected.get((reading.inspection_id, *key))
        if fix is not None:
            value_si, value_text = fix.get("value_si"), fix.get("value_text") or ""
        if value_si is None and not value_text:
            continue
        out[key] = LastReading(key[0], key[1], value_si, value_text, when[reading.inspection_id], reading.inspection_id)
    return out


def _day(moment: dt.datetime, zone: str) -> str:
    local = moment.astimezone(zoneinfo.ZoneInfo(zone or "UTC"))
    return f"{local.day} {local:%b %Y}"


def last_value_words(*, last: LastReading, kind: str, quantity: str, choices, system: str, zone: str) -> str:
    """ "last: 182 Pa on 2 Nov 2026" (a number in the reader's units; a check or choice in the form's words)."""
    if last.value_text == "na":
        value = "not applicable"
    elif kind == "number" and last.value_si is not None:
        value = (
            reasons.render([reasons.q(last.value_si, quantity)], system)
            if quantity
            else significant_text(last.value_si, figures=6)
        )
    elif kind == "check":
        value = CHECK_WORDS.get(last.value_text, last.value_text)
    elif kind == "choice":
        labels = {str(c.get("value")): str(c.get("label", c.get("value"))) for c in choices or []}
        value = labels.get(last.value_text, last.value_text)
    else:
        return ""
    return f"last: {value} on {_day(last.finished_at, zone)}"
