"""One reading of a synced form (or of an amendment) judged against its checklist item, nothing written: a known
item on a part the unit has, answered once, its value of the item's kind and, for a number, possible in the form's
units (impossible refused, implausible kept and flagged); and a run-hour value the unit's meter can have reached."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from django.core.exceptions import ValidationError

from engineering.errors import EngineeringInputError
from engineering.formatting import significant_text

from .. import check, limits
from ..check import Errors
from ..display import plain_message
from ..models import Reading

if TYPE_CHECKING:
    from .form_check import Parsed

MAX_TEXT = 2000
CHECK_VALUES = ("ok", "not_ok", "na")


def _num_text(x: float | None) -> str:
    return "any" if x is None else significant_text(x)


def _bound(x: float, decimals: int | None, side: str) -> str:
    return significant_text(x) if decimals is None else limits.bound_text(x, decimals=decimals, side=side)


def _range_text(lo: float | None, hi: float | None, unit: str, decimals: int | None) -> str:
    """A range in the person's units as the phone says it (limits.js ``describe``): each bound at the quantity's
    display ``decimals`` rounded inward (``limits.bound_text``), so no value the words allow is refused."""
    u = f" {unit}" if unit else ""
    if lo is not None and hi is not None:
        return f"{_bound(lo, decimals, 'min')} to {_bound(hi, decimals, 'max')}{u}"
    if lo is not None:
        return f"at least {_bound(lo, decimals, 'min')}{u}"
    return "any value" if hi is None else f"at most {_bound(hi, decimals, 'max')}{u}"


def reading_parse(parsed: Parsed, i: int, raw: object, seen: set[tuple[str, int | None]], errors: Errors) -> None:
    at = f"readings[{i}]"
    if not isinstance(raw, dict):
        errors.add(at, "each reading is an object {item, component, value, note}")
        return
    key, comp_code, value = raw.get("item"), raw.get("component"), raw.get("value")
    item_code, part_code = check.code(key), check.code(comp_code)
    if item_code is None:
        errors.add(f"{at}.item", f"item {check.shown(key)} is not an item key (text such as filter_check.dp)")
        return
    if comp_code is not None and part_code is None:
        errors.add(f"{at}.component", f"component {check.shown(comp_code)} is not a label code (text) or null")
        return
    slot = parsed.checklist.by_key().get((item_code, part_code or None))
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
        reading.value_text = str(value)  # text: check.text refuses anything else
    elif it.kind == "photo":
        if not (value is None or (isinstance(value, str) and value in ("", "ok"))):
            errors.add(f"{at}.value", f"{label}: a photo item takes no value; send the photo in 'photos'")
            return
        return  # photo items are answered by their photos
    else:
        x = check.number(value)
        ambiguous = check.ambiguous_comma(value)
        if ambiguous:  # "12,075": 12075 h or 12.075 h; the technician says which
            errors.add(f"{at}.value", f"{label}: {ambiguous}")
            return
        system = parsed.unit_system
        if system is None:  # an unknown unit system (refused under unit_system): no limits to judge a number by
            if x is None:
                errors.add(
                    f"{at}.value", f"{label}: {check.exponent(value) or f'{check.shown(value)} is not a number'}"
                )
            return
        unit = limits.display_unit_label(it.quantity, system)
        places = limits.display_decimals(it.quantity, system)
        lim = slot.limits
        lo = limits.to_display(lim.get("physical_min"), it.quantity, system)
        hi = limits.to_display(lim.get("physical_max"), it.quantity, system)
        if x is None:  # "1e5": typed with an exponent, said so with the range (the phone's numbers.js exponentWords)
            in_range = f"allowed {_range_text(lo, hi, unit, places)}"
            said = check.exponent(value, in_range) or f"{check.shown(value)} is not a number; {in_range}"
            errors.add(f"{at}.value", f"{label}: {said}")
            return
        try:
            si = limits.from_display(x, it.quantity, system)
        except EngineeringInputError as exc:
            errors.add(f"{at}.value", f"{label}: {plain_message(exc)}")
            return
        tol = 1e-9 * max(1.0, abs(si))
        pmin, pmax = lim.get("physical_min"), lim.get("physical_max")
        if (pmin is not None and si < pmin - tol) or (pmax is not None and si > pmax + tol):
            errors.add(
                f"{at}.value",
                f"{label}: {_num_text(x)} {unit} is impossible; allowed {_range_text(lo, hi, unit, places)}",
            )
            return
        reading.value_si = si
        plo, phi = lim.get("plausible_min"), lim.get("plausible_max")
        if (plo is not None and si < plo) or (phi is not None and si > phi):
            reading.improbable = True
            dlo = limits.to_display(plo, it.quantity, system)
            dhi = limits.to_display(phi, it.quantity, system)
            parsed.improbable.append(
                f"{label}: {_num_text(x)} {unit} is outside the plausible "
                f"{_range_text(dlo, dhi, unit, places)}; please check it"
            )
    parsed.readings.append(reading)


# What a technician does when the meter was in fact replaced (the phone shows the same words, inspections.phone).
RUN_HOURS_IF_REPLACED = "answer “not applicable” here and give the office the new meter's reading"


def run_hours_check(parsed: Parsed, raw_readings: list[Any], errors: Errors) -> None:
    """Refuse a run-hour value the unit's meter cannot have reached since its last reading.

    The same check as every other way a reading comes in
    (``scheduling.services.meter_reading_check``). A value below an earlier
    reading is left to the store step, which keeps the form and flags it
    (``meter_reading_refused``): a replaced meter reads lower, and the office
    records the replacement.
    """
    from scheduling.services import meter_neighbours, meter_reading_check

    reading = next((r for r in parsed.readings if r.item.api_key == "visit.run_hours" and r.value_si is not None), None)
    finished_at = parsed.finished_at
    if reading is None or reading.value_si is None or finished_at is None:  # (chosen with a value above)
        return  # (no finish time: refused for that already, no date to check the meter by)
    i = next(
        (n for n, raw in enumerate(raw_readings) if isinstance(raw, dict) and raw.get("item") == "visit.run_hours"), 0
    )
    neighbours = meter_neighbours(ahu=parsed.work_order.ahu, component=None, taken_at=finished_at)
    if parsed.unit_locked:  # read under the request's lock of the unit: the store checks against the same read
        parsed.meter_neighbours = neighbours
    try:
        meter_reading_check(
            ahu=parsed.work_order.ahu,
            hours=reading.value_si,
            taken_at=finished_at,
            label=reading.item.label,
            if_replaced=RUN_HOURS_IF_REPLACED,
            neighbours=neighbours,
        )
    except ValidationError as exc:
        for problems in exc.error_dict.values():
            for problem in problems:
                if problem.code != "meter_backwards":
                    errors.add(f"readings[{i}].value", " ".join(problem.messages))
