"""A visit's values as its record says them, in the reader's units: a reading's value, a verdict in words, a
reason without the part its row names, and derived values as of the visit (a filter change date the trend had
already reached before the visit reads as past, never as a forecast)."""

from __future__ import annotations

import datetime as dt

from engineering.controls import Verdict
from engineering.formatting import quantity_text
from inspections import display, reasons
from inspections.display import VERDICT_WORDS
from inspections.evaluation import set_aside_parts
from inspections.models import Inspection, Reading
from inspections.selectors import item_limits, reason_for
from inventory.models import AHU
from scheduling.services import meter_reading_words

# The visit's run-hour value (its meter reading is stored from it, inspections.services.sync).
RUN_HOURS_ITEM = "visit.run_hours"
CHECK_VALUES = {"ok": "OK", "not_ok": "Not OK", "na": "N/A"}
# Verdicts in words, as the phone and the record page say them (inspections.display).
VERDICTS = {code: words for code, words in VERDICT_WORDS.items() if code}


# What the meter rule says of the visit's run-hour value: (verdict code, words), ``run_hours_words``.
MeterSaid = tuple[str, str]


def reading_verdict(reading: Reading, *, judged: bool, meter: MeterSaid = ("", ""), system: str) -> tuple[str, str]:
    """A reading's verdict beside it on the record page and in the PDFs, as the phone says it (``judged``: a check
    judged it): (its words, what they mean), "Recorded" and "no limit applies to this reading" for a value no
    check judged (inspections.display.reading_verdict_words), or for the run-hour value what the meter rule says of
    it (``meter``, from ``run_hours_words``): "Recorded — plausible: …", or "Watch — below the last reading of …
    — meter replaced or misread?"; or "Not judged" and why for a value set aside as implausible (``set_aside_words``,
    in the reader's ``system``). A photo, a note, an N/A or an empty answer has no value to judge: ("", "")."""
    item = reading.item
    nothing = reading.value_text == "na" or (reading.value_si is None and not reading.value_text)
    if not reading.verdict and (item.kind in (item.Kind.PHOTO, item.Kind.TEXT) or nothing):
        return "", ""
    code, words = meter if item.api_key == RUN_HOURS_ITEM and not reading.verdict else ("", "")
    if code:
        return display.verdict_words(code), words
    said = set_aside_words(reading, system) if reading.improbable and not (reading.verdict or judged) else ""
    return display.reading_verdict_words(reading.verdict, judged=judged, checked=words, set_aside=said)


def set_aside_words(reading: Reading, system: str) -> str:
    """Why a reading set aside as implausible was not judged, in the reader's units ("75.0 °C is outside the
    plausible 0.0–60.0 °C; re-check the reading", inspections.evaluation.set_aside_parts, as the phone says it),
    against the limits its checklist gave it; "" for a value within them."""
    limits = item_limits(item=reading.item, ahu=reading.inspection.ahu, component=reading.component)
    return reasons.render(set_aside_parts(reading.item, reading.value_si, limits), system)


def reading_verdict_code(reading: Reading, *, meter: MeterSaid = ("", "")) -> str:
    """The verdict code a reading's row is marked with: its own, or the meter rule's for the run-hour value."""
    if reading.verdict or reading.item.api_key != RUN_HOURS_ITEM:
        return reading.verdict
    return meter[0]


def run_hours_words(inspection: Inspection, *, ahu: AHU, zone: dt.tzinfo) -> MeterSaid:
    """What the meter rule says of the visit's run-hour value as of the form's finish time, as the phone said it
    beside the field: ("", "plausible: 615 h since the last reading of 12000 h on …"), ("watch", "below the last
    reading of … — meter replaced or misread?"), ("", "") for nothing (``scheduling.services.meter_reading_words``).
    One query, only for a visit with a run-hour value."""
    hours = next(
        (r.value_si for r in inspection.readings.all() if r.item.api_key == RUN_HOURS_ITEM and not r.verdict),
        None,
    )
    if hours is None:
        return "", ""
    return meter_reading_words(ahu=ahu, hours=hours, finished_at=inspection.finished_at, zone=zone)


def reading_value(reading: Reading, system: str) -> str:
    item = reading.item
    if reading.value_text == "na":
        return "N/A"
    if item.kind == item.Kind.NUMBER:
        if reading.value_si is None:
            return "—"
        return number_shown(reading.value_si, item.quantity, system)
    if item.kind == item.Kind.CHECK:
        return CHECK_VALUES.get(reading.value_text, reading.value_text)
    if item.kind == item.Kind.CHOICE:
        labels = {c.get("value"): c.get("label") for c in item.choices or []}
        return labels.get(reading.value_text, reading.value_text)
    return reading.value_text or "—"


def number_shown(value_si: float, quantity: str, system: str) -> str:
    """A number of the record in the reader's unit as typed: at least its quantity's usual precision, more where the
    value has them (12.5 rpm, never "12 rpm"; engineering.formatting.typed_decimals), never grouped ("16500 h",
    "1200 cfm"): a reading, and each side of an amended one."""
    return quantity_text(value_si, quantity=quantity, system=system, typed=True)


_FORECAST_KEYS = ("forecast_change_date", "forecast_earliest_date", "forecast_latest_date")


def _past_forecast(derived: dict, visit_day: dt.date | None) -> dt.date | None:
    """The filter trend's change date when it lies before the visit (the line had already reached its final
    pressure drop): a date the record must not call a forecast."""
    raw = derived.get("forecast_change_date")
    if not raw or visit_day is None:
        return None
    try:
        day = dt.date.fromisoformat(str(raw)[:10])
    except ValueError:
        return None
    return day if day < visit_day else None


def _long_day(day: dt.date) -> str:
    return f"{day.day} {day:%B %Y}"


def derived_for_visit(derived: dict, system: str, *, item: str, visit_day: dt.date | None) -> list[tuple[str, str]]:
    """``display.derived_rows`` as of the visit: a change date the trend reached before the visit reads as
    past ("trend reached the final pressure drop: 2 March 2025, before this visit"), without its range."""
    past = _past_forecast(derived, visit_day)
    if past is None:
        return display.derived_rows(derived, system, item=item)
    rows = display.derived_rows({k: v for k, v in derived.items() if k not in _FORECAST_KEYS}, system, item=item)
    return [*rows, ("trend reached the final pressure drop", f"{_long_day(past)}, before this visit")]


def derived_text_for_visit(derived: dict, system: str, *, item: str, visit_day: dt.date | None) -> str:
    """``display.derived_text`` as of the visit (a change date already past reads as past, as
    ``derived_for_visit``)."""
    past = _past_forecast(derived, visit_day)
    if past is None:
        return display.derived_text(derived, system, item=item)
    text = display.derived_text({k: v for k, v in derived.items() if k not in _FORECAST_KEYS}, system, item=item)
    return f"{text} The trend reached the final pressure drop on {_long_day(past)}, before this visit.".strip()


def reason_as_of(judged, system: str, visit_day: dt.date | None) -> str:
    """A reading's or judgement's reason in the reader's units, without the part its row names, and with a change
    date already past at the visit said as past."""
    text = reasons.text_without_subject(
        reason_for(evaluation=judged, unit_system=system), judged.component.name if judged.component_id else None
    )
    derived = getattr(judged, "derived", None) or {}
    past = _past_forecast(derived, visit_day)
    if past is not None:
        text = text.replace(
            f"change forecast {_long_day(past)}", f"trend reached the final pressure drop on {_long_day(past)}"
        )
    return text


def row_reason(reading, system: str, visit_day: dt.date | None) -> str:
    """A reading's reason for its record row, left out when it says nothing the row does not."""
    reason = reason_as_of(reading, system, visit_day)
    return "" if says_nothing_more(reason, reading.item.label, reading_value(reading, system), "") else reason


def says_nothing_more(reason: str, label: str, value: str, verdict_code: str) -> bool:
    """A reason that only repeats the row: "confirmed: <item>", "<item>: <choice>", or a reading inside its band."""
    if not reason:
        return True
    rest = reason
    for lead in ("confirmed: ", "not confirmed: "):
        if rest.startswith(lead):
            rest = rest[len(lead) :]
    rest = rest.replace(label, "").replace(label[:1].lower() + label[1:], "").strip(" :;,.")
    if not rest or rest == value:
        return True
    return verdict_code == Verdict.OK and " is within " in reason
