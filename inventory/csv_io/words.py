"""Plain words: each cell's problem names the field, the value and what is allowed, with its unit (the input
policy's wording, accounts.inputs and inventory.inputs, as the registry's page forms say it)."""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.core.exceptions import NON_FIELD_ERRORS, FieldDoesNotExist, ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator

from accounts.inputs import (
    INT16_MAX,
    equipment_date_problem,
    equipment_date_window,
    number_allowed,
    number_problem,
    shown,
    text_problem,
)

from ..inputs import AHU_DATES, AHU_NUMBERS, AHU_TEXTS, COMPONENT_DATES, COMPONENT_TEXTS, PLANNED_DATES
from ..models import AHU, ComponentKind
from .file_format import (
    FIELD_TO_COLUMN,
    LIST_SEPARATOR,
    CellError,
    Column,
    parse_bool,
    parse_date,
    parse_float,
    parse_int,
    parse_opt_text,
    parse_text,
    parse_twelve,
)

LABELS = {
    "code": "Site code",
    "altitude_m": "Altitude",
    "time_zone": "Time zone",
    "normals_min_c": "Monthly mean daily minimums",
    "normals_max_c": "Monthly mean daily maximums",
    "preheat_threshold_c": "Freeze-season threshold",
    "cooling_threshold_c": "Cooling-season threshold",
    "client": "Client",
    "site_code": "Site code",
    "building_code": "Building code",
    "building_name": "Building name",
    "building_floors": "Building floors",
    "floors": "Building floors",
    "ahu_tag": "Unit tag",
    "space_kind": "Kind of space served",
    "full_outdoor_air": "100 % outdoor air",
    "ventilation_zones": "Zones served",
    "air_distribution": "Air distribution",
    "heat_recovery": "Heat recovery",
    "status": "Status",
    "kind": "Kind of part",
    "parent": "Parent part",
    "position": "Position along the airstream",
    "retired_on": "Retired on",
    "label_code": "Label code",
}
KEY_ALLOWED = {
    "code": "a short code of letters, digits, - and _",
    "name": "the name as people know it, text",
    "site_code": "the code of one of your sites",
    "building_code": "the building's code within its site",
    "tag": "the unit's tag as painted on it",
    "ahu_tag": "the tag of a unit in that building",
    "kind": "one of " + ", ".join(ComponentKind.values),
}
UNIT_OF_SUFFIX = (("_m3s", "m³/s"), ("_m2", "m²"), ("_pa", "Pa"), ("_c", "°C"), ("_m", "m"))
WHOLE_RANGES = {"position": (0, INT16_MAX), "floors": (0, INT16_MAX), "design_occupants": (0, 100_000)}
BOOL_ALLOWED = "true or false (yes/no and 1/0 are read too)"


def _label(model, attr: str) -> str:
    if model is AHU and attr in AHU_NUMBERS:
        return AHU_NUMBERS[attr].label
    for table in (AHU_DATES, COMPONENT_DATES):
        if attr in table:
            return table[attr]
    for table in (AHU_TEXTS, COMPONENT_TEXTS):
        if attr in table:
            return table[attr][0]
    if attr in LABELS:
        return LABELS[attr]
    try:
        name = str(model._meta.get_field(attr).verbose_name)
    except FieldDoesNotExist:  # a column that is no model field keeps its own name
        name = attr.replace("_", " ")
    return name[:1].upper() + name[1:]


def _number_range(model, attr: str) -> tuple[float | None, float | None, str]:
    """The number's allowed range and unit: the input policy's table, else the field's own validators."""
    if model is AHU and attr in AHU_NUMBERS:
        r = AHU_NUMBERS[attr]
        return r.minimum, r.maximum, r.unit
    lo = hi = None
    if attr in WHOLE_RANGES:
        lo, hi = WHOLE_RANGES[attr]
    else:
        for validator in model._meta.get_field(attr)._validators:
            if isinstance(validator, MinValueValidator):
                lo = validator.limit_value
            elif isinstance(validator, MaxValueValidator):
                hi = validator.limit_value
    unit = next((u for s, u in UNIT_OF_SUFFIX if attr.endswith(s)), "")
    if attr in {"latitude", "longitude"}:
        unit = "degrees"
    if attr == "design_occupants":
        unit = "people"
    return lo, hi, unit


def _allowed(model, attr: str, parser=None, *, today: dt.date | None = None) -> str:
    """What a cell of ``attr`` may hold, in words; a date's window ends on ``today``, the row's site's."""
    if attr in KEY_ALLOWED and parser is None:
        return KEY_ALLOWED[attr]
    try:
        field = model._meta.get_field(attr)
    except FieldDoesNotExist:
        field = None
    if field is not None and field.choices:
        return "one of " + ", ".join(str(value) for value, _ in field.choices)
    if parser is parse_twelve or attr in {"normals_min_c", "normals_max_c"}:
        return f"12 numbers in °C separated by '{LIST_SEPARATOR}', January first"
    if parser is parse_bool:
        return BOOL_ALLOWED
    if parser is parse_date or (field is not None and field.get_internal_type() == "DateField"):
        if today is None:  # a model's own refusal (never of a date: every date may be empty)
            return "a date as YYYY-MM-DD"
        earliest, latest = equipment_date_window(today=today, planned=attr in PLANNED_DATES)
        return f"a date as YYYY-MM-DD from {earliest.isoformat()} to {latest.isoformat()}"
    if parser in (parse_float, parse_int) or (parser is None and field is not None and _is_number(model, attr)):
        lo, hi, unit = _number_range(model, attr)
        if lo is not None and hi is not None:
            if parser is parse_int:
                return f"a whole number from {lo:g} to {hi:g}{f' {unit}' if unit else ''}"
            return number_allowed(minimum=lo, maximum=hi, unit=unit)
        if lo is not None:
            return f"a number of at least {lo:g}{f' {unit}' if unit else ''}"
        return "a number" if parser is parse_float else "a whole number"
    if field is not None and getattr(field, "max_length", None):
        return f"text of at most {field.max_length} characters"
    return "text"


def read_cell(model, column: str, attr: str, parser, raw: str, *, today: dt.date) -> tuple[Any, str | None]:
    """The cell's typed value, or None with what is wrong in plain words; a date judged on ``today``."""
    label, text = _label(model, attr), raw.strip()
    field = model._meta.get_field(attr)
    if parser in (parse_opt_text, parse_text) and field.choices:
        if text and text not in {str(v) for v, _ in field.choices}:
            return None, f"{label}: {shown(text)} is not one of the choices; allowed: {_allowed(model, attr)}"
        return parser(raw), None
    try:
        value = parser(raw)
    except CellError as exc:
        if parser is parse_twelve:
            return None, f"{label}: {exc}; allowed: {_allowed(model, attr, parser, today=today)}"
        reason = {parse_date: "is not a date", parse_bool: "is not true or false"}.get(parser, str(exc))
        return None, f"{label}: {shown(text)} {reason}; allowed: {_allowed(model, attr, parser, today=today)}"
    if value is None:
        return None, None
    if parser in (parse_float, parse_int):
        lo, hi, unit = _number_range(model, attr)
        if lo is not None and hi is not None:
            problem = number_problem(value, label=label, minimum=lo, maximum=hi, unit=unit)
            if problem and parser is parse_int:
                problem = f"{label}: {value} is out of range; allowed: {_allowed(model, attr, parser, today=today)}"
            return (None, problem) if problem else (value, None)
    if parser is parse_date:
        problem = equipment_date_problem(value, label=label, today=today, planned=attr in PLANNED_DATES)
        return (None, problem[:1].upper() + problem[1:]) if problem else (value, None)
    if isinstance(value, str) and getattr(field, "max_length", None):
        problem = text_problem(value, label=label, max_length=field.max_length, lines=True)
        return (None, problem) if problem else (value, None)
    return value, None


def plain_model_errors(exc: ValidationError, model, row: dict[str, str]) -> list[tuple[str, str]]:
    """The model's refusals as (column, plain reason); Django's stock wording replaced by the policy's."""
    found = []
    errors = exc.error_dict if hasattr(exc, "error_dict") else {NON_FIELD_ERRORS: exc.error_list}
    for field_name, items in errors.items():
        if field_name.startswith("specs."):
            column = "spec." + field_name.removeprefix("specs.")
        else:
            column = FIELD_TO_COLUMN.get(field_name, field_name)
        for item in items:
            for error in item.error_list if hasattr(item, "error_list") else [item]:
                found.append((column, _plain(model, field_name, error, row.get(column, ""))))
    return found


def _plain(model, attr: str, error: ValidationError, raw: str) -> str:
    text = " ".join(error.messages)
    if model is None or attr.startswith("specs") or attr == NON_FIELD_ERRORS:
        return text
    try:
        model._meta.get_field(attr)
    except FieldDoesNotExist:
        return text
    label = _label(model, attr)
    if error.code in {"null", "blank", "required"}:
        return f"{label} is required; allowed: {_allowed(model, attr)}"
    if error.code == "invalid_choice":
        return f"{label}: {shown(raw.strip())} is not one of the choices; allowed: {_allowed(model, attr)}"
    if error.code in {"min_value", "max_value"}:
        lo, hi, unit = _number_range(model, attr)
        allowed = number_allowed(minimum=lo, maximum=hi, unit=unit) if None not in (lo, hi) else str(text)
        return f"{label}: {raw.strip()}{f' {unit}' if unit else ''} is out of range; allowed: {allowed}"
    if error.code == "max_length":
        return f"{label}: {len(raw.strip())} characters is too long; allowed: {_allowed(model, attr)}"
    return text if text.startswith(label) else f"{label}: {text}"


def _is_number(model, attr: str) -> bool:
    return model._meta.get_field(attr).get_internal_type() in {
        "FloatField", "IntegerField", "PositiveIntegerField", "PositiveSmallIntegerField", "DecimalField"
    }  # fmt: skip


def parse_row(
    row: dict[str, str], columns: list[Column], model, problems: list[tuple[str, str]], *, today: dt.date
) -> dict[str, Any]:
    """Typed values of the row's readable cells (an empty cell clears a nullable field and keeps others'
    defaults); every unreadable cell's problem is added to ``problems``. Dates are judged on ``today``: the
    day of the row's site (``inventory.today``), the organisation's while the row names none."""
    values = {}
    for column, attr, parser in columns:
        if column not in row:
            continue
        value, problem = read_cell(model, column, attr, parser, row[column], today=today)
        if problem:
            problems.append((column, problem))
            continue
        if value is not None:
            values[attr] = value
        elif model._meta.get_field(attr).null:
            values[attr] = None
    return values


def required_problems(row: dict[str, str], columns: list[str]) -> list[tuple[str, str]]:
    return [
        (c, f"{LABELS.get(c, c.replace('_', ' ').capitalize())} is required; allowed: {KEY_ALLOWED.get(c, 'text')}")
        for c in columns
        if not row.get(c, "").strip()
    ]
