"""One registry form field: how it is shown (in the person's units), read and refused, and the page that draws
the fields with their refusals beside them."""

from __future__ import annotations

import math
from dataclasses import dataclass

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.shortcuts import render
from django.utils.text import slugify

from accounts.inputs import (
    FieldErrors,
    check_date,
    check_integer,
    check_text,
    comma_words,
    exponent_words,
    parse_number,
)
from engineering.errors import EngineeringInputError
from engineering.formatting import bound_text
from engineering.units import from_display, to_display, unit_label
from inventory.specs import spec_fields

from ..specs_form import keep_typed_choice, spec_rows


@dataclass(frozen=True)
class Field:
    name: str
    label: str
    kind: str = "text"  # text | lines | number | integer | choice | bool | date
    required: bool = False
    max_length: int = 200
    minimum: float | None = None  # SI
    maximum: float | None = None
    unit: str = ""  # a unit with no display quantity (people…)
    # Stored as a fraction 0–1 (the server's one reader, e.g. inventory.inputs.AHU_NUMBERS, checks it so), shown
    # and typed in % like every other share on the pages: 0.35 reads 35 %, 35 typed is stored 0.35.
    per_cent: bool = False
    quantity: str | None = None  # engineering.units quantity: shown and typed in the person's units
    choices: tuple = ()
    hint: str = ""
    allowed: str = ""  # said instead of the list of choices when the list is long or names records


def figure(value: float) -> str:
    return f"{round(value, 3):.10g}"


def shown_value(field: Field, value, system: str):
    """A stored value as the form shows it (SI → the person's units)."""
    if value is None:
        return ""
    if field.kind == "number" and field.quantity and isinstance(value, int | float):
        return figure(to_display(value=value, quantity=field.quantity, system=system))
    if field.kind == "number" and field.per_cent and isinstance(value, int | float):
        return figure(value * 100)
    if field.kind == "number" and isinstance(value, int | float):
        return figure(value)
    if field.kind == "date":
        return value.isoformat()
    return value


def unit_text(field: Field, system: str) -> str:
    if field.per_cent:
        return "%"
    return unit_label(quantity=field.quantity, system=system) if field.quantity else field.unit


def allowed_text(field: Field, system: str) -> str:
    if field.allowed:
        return field.allowed
    if field.kind == "number":
        # Written out in full (1000000, not 1e+06), in the person's units.
        lo, hi = (
            (to_display(value=v, quantity=field.quantity, system=system) for v in (field.minimum, field.maximum))
            if field.quantity
            else (field.minimum * 100, field.maximum * 100)
            if field.per_cent
            else (field.minimum, field.maximum)
        )
        unit = unit_text(field, system)
        return f"a number from {figure(lo)} to {figure(hi)}{f' {unit}' if unit else ''}"
    if field.kind == "integer":
        unit = f" {field.unit}" if field.unit else ""
        return f"a whole number from {bound_text(field.minimum)} to {bound_text(field.maximum)}{unit}"
    if field.kind == "choice":
        return "one of " + ", ".join(str(label) for _, label in field.choices)
    if field.kind == "date":
        return "a date as YYYY-MM-DD or DD.MM.YYYY"  # read by accounts.inputs.check_date (parse_day)
    if field.kind == "bool":
        return ""
    return f"text of at most {field.max_length} characters"


def _number(field: Field, raw: str, *, system: str, errors: FieldErrors):
    """A number typed in the person's units → SI, refused as typed (never rounded back) when it is not one or
    is out of range."""
    allowed = allowed_text(field, system)
    if not raw.strip():
        if field.required:
            errors.add(field.name, f"{field.label} is required; allowed: {allowed}")
        return None
    typed = parse_number(raw, exponent=False)
    if typed is None:  # "12,075": which number? "1e5": typed in full, within the field's range
        ambiguous = comma_words(raw) or exponent_words(raw, f"allowed: {allowed}")
        errors.add(
            field.name,
            f"{field.label}: {ambiguous}"
            if ambiguous
            else f"{field.label}: {raw.strip()[:40]!r} is not a finite number; allowed: {allowed}",
        )
        return None
    try:
        if field.quantity:
            value = from_display(value=typed, quantity=field.quantity, system=system)
        else:
            value = typed / 100 if field.per_cent else typed  # 35 / 100 is 0.35 exactly as stored
    except (EngineeringInputError, OverflowError):
        value = math.inf
    # A value typed at the edge of the range in another unit may convert a hair past it.
    slack = 1e-9 * max(abs(field.minimum), abs(field.maximum), 1)
    if not math.isfinite(value) or not field.minimum - slack <= value <= field.maximum + slack:
        unit = unit_text(field, system)
        errors.add(
            field.name,
            f"{field.label}: {raw.strip()[:40]}{f' {unit}' if unit else ''} is out of range; allowed: {allowed}",
        )
        return None
    return min(max(value, field.minimum), field.maximum)


def read_fields(fields: list[Field], post, *, system: str, today) -> tuple[dict, FieldErrors]:
    """Clean values of every field present in the form, and every refusal keyed by field."""
    errors = FieldErrors()
    clean: dict = {}
    for f in fields:
        raw = post.get(f.name, "")
        if f.kind == "bool":
            clean[f.name] = raw in {"1", "on", "true"}
        elif f.kind == "number":
            clean[f.name] = _number(f, raw, system=system, errors=errors)
        elif f.kind == "integer":
            clean[f.name] = check_integer(
                raw,
                key=f.name,
                label=f.label,
                errors=errors,
                minimum=int(f.minimum),
                maximum=int(f.maximum),
                unit=f.unit,
                required=f.required,
            )
        elif f.kind == "choice":
            values = [str(v) for v, _ in f.choices]
            if raw not in values:
                if raw or f.required:
                    errors.add(
                        f.name, f"{f.label}: {raw[:40]!r} is not one of the choices; allowed: {allowed_text(f, system)}"
                    )
                clean[f.name] = None
            else:
                clean[f.name] = raw
        elif f.kind == "date":
            clean[f.name] = check_date(raw, key=f.name, label=f.label, errors=errors, today=today) if raw else None
        else:
            value = check_text(
                raw,
                key=f.name,
                label=f.label,
                max_length=f.max_length,
                errors=errors,
                lines=f.kind == "lines",
                required=f.required,
            )
            clean[f.name] = value if value is not None else ""
    return clean, errors


def field_rows(fields: list[Field], *, values: dict, errors: dict, system: str) -> list[dict]:
    """What the template draws for each field: label with its unit, the value (as typed after a refusal), the
    allowed values and the refusals."""
    rows = []
    for f in fields:
        unit = unit_text(f, system)
        choices = [(str(v), label) for v, label in f.choices]
        rows.append(
            {
                "name": f.name,
                "id": f"f-{f.name}",
                "label": f"{f.label} ({unit})" if unit and f.kind in {"number", "integer"} else f.label,
                "kind": f.kind,
                "unit": unit,
                "required": f.required,
                "value": values.get(f.name, ""),
                "choices": keep_typed_choice(choices, values.get(f.name)),
                "hint": f.hint,
                "allowed": allowed_text(f, system),
                "errors": errors.get(f.name, []),
                "maxlength": f.max_length,
            }
        )
    return rows


def spec_field_rows(kind: str, *, values: dict, errors: dict, system: str) -> list[dict]:
    """The kind's spec fields (frontend.specs_form) in the same shape as the other rows."""
    out = []
    for r in spec_rows(fields=spec_fields(kind), values=values, errors=errors, system=system):
        s = r["spec"]
        number = s.kind in {"number", "integer"}
        out.append(
            {
                "name": r["name"],
                "id": r["id"],
                "label": f"{s.label} ({r['unit']})" if number and r["unit"] else s.label,
                "kind": {"choice": "choice", "bool": "bool", "date": "date"}.get(
                    s.kind, "number" if number else "text"
                ),
                "unit": r["unit"] if number else "",
                "required": s.required,
                "value": r["value"],
                "choices": r["choices"],
                "hint": "",
                "allowed": r["allowed"],
                "errors": r["errors"],
                "maxlength": r["maxlength"],
            }
        )
    return out


def service_errors(exc: ValidationError) -> dict[str, list[str]]:
    errors = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
    return {key.removeprefix("specs."): list(texts) for key, texts in errors.items()}


def form_page(
    request,
    *,
    title: str,
    rows: list[dict],
    errors: dict,
    back: str,
    submit: str,
    intro: str = "",
    extra: list[dict] | None = None,
    extra_title: str = "",
    status: int = 200,
    hidden: dict | None = None,
):
    shown = {r["name"].removeprefix("spec_") for r in [*rows, *(extra or [])]}
    loose = [t for key, texts in errors.items() if key not in shown for t in texts]
    return render(
        request,
        "frontend/registry/form.html",
        {
            "title": title,
            "intro": intro,
            "rows": rows,
            "extra": extra or [],
            "extra_title": extra_title,
            "refused": bool(errors),
            "loose": loose,
            "back": back,
            "submit": submit,
            "hidden": hidden or {},
        },
        status=status,
    )


def unique_code(name: str, taken) -> str:
    base = (slugify(name) or "x")[:34]
    code, n = base, 2
    while code in taken:
        code, n = f"{base}-{n}", n + 1
    return code


REASON = Field("reason", "Reason", kind="lines", max_length=300, hint="e.g. Replaced by AHU-05; removed in the refit.")


def say_saved_warnings(request, pairs) -> None:
    """Say on the page shown next what was saved but is unlikely, per part (``(component, SpecWarning)`` pairs
    from inventory.services.component_warnings or unit_warnings), in one form for every registry page."""
    for part, warning in pairs:
        messages.warning(request, f"Saved, but check {part.name}: {warning.message}")
