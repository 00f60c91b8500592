"""A number as a person types it: the one reader of typed numbers (form text, a JSON value, a CSV cell).

A decimal comma reads as a point ("12,5" is 12.5). A comma followed by exactly three digits after a whole part
that is not zero ("12,075", "1,250") may as well be a thousands separator: it is no number here, and
``comma_words`` says both readings so the message can ask which was meant. "0,125", "12,5", "12,50" and
"1,2345" stay decimal commas. The app never shows a number grouped with a comma
(``engineering.formatting.format_number``), so a number typed as shown reads the same.

The phone reads typed text by the same rule: ``frontend/static/frontend/js/numbers.js`` (``parseNumber``,
``commaWords``, ``exponentWords``: the phone reads only what a person types, so no exponent);
tests/inspections/test_phone_agreement.py holds the two together. ``accounts.inputs`` answers with these names.
"""

from __future__ import annotations

import math
import re
from typing import Any

# A typed number: a sign, digits with one decimal point or comma, an exponent; ASCII digits only (Python's float
# alone would also take '1_000', '١٢' and 'infinity').
_TYPED_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?", re.ASCII)
# A number in exponent notation, with a decimal point or comma: "1e5", "-2.5E3", "1,5e2". A person typing a reading
# or a field never means one ("1e5" is more likely a slip than 100000, common practice): a person's typed number
# (``parse_number(..., exponent=False)``) refuses it, ``exponent_words`` says so; machine data (a trend or meter
# CSV cell, an API value) may write numbers so and keeps reading them.
_EXPONENT = re.compile(r"[+-]?(?:[0-9]+[.,]?[0-9]*|[.,][0-9]+)[eE][+-]?[0-9]+", re.ASCII)
# One comma, exactly three digits after it, nothing else: a thousands separator or a decimal comma.
_AMBIGUOUS_COMMA = re.compile(r"([+-]?)([0-9]+),([0-9]{3})", re.ASCII)


def comma_readings(raw: Any) -> tuple[str, str] | None:
    """The two numbers an ambiguous comma may mean, as a person would type each ("12,075": "12075" and
    "12.075"), or None when the text has no such comma (a whole part of zero is a decimal comma: "0,125")."""
    if not isinstance(raw, str):
        return None
    found = _AMBIGUOUS_COMMA.fullmatch(raw.strip())
    if found is None or int(found.group(2)) == 0:
        return None
    sign, whole, fraction = found.groups()
    sign = "-" if sign == "-" else ""
    whole = whole.lstrip("0")
    return f"{sign}{whole}{fraction}", f"{sign}{whole}.{fraction}"


def comma_words(raw: Any) -> str | None:
    """ "“12,075” could be 12075 or 12.075: type 12075 or 12.075" for an ambiguous comma, else None; the caller
    puts the field's name before it."""
    readings = comma_readings(raw)
    if readings is None:
        return None
    grouped, decimal = readings
    return f"“{str(raw).strip()}” could be {grouped} or {decimal}: type {grouped} or {decimal}"


def exponent_words(raw: Any, allowed: str = "") -> str | None:
    """ "“1e5” is not a plain number; type digits with an optional decimal point or comma, allowed 0 to 1000000 h"
    for typed text in exponent notation, else None; ``allowed`` is the field's own range as its range refusal says
    it ("allowed 0 to 1000000 h"), the caller puts the field's name before it."""
    if not isinstance(raw, str) or _EXPONENT.fullmatch(raw.strip()) is None:
        return None
    words = f"“{raw.strip()[:40]}” is not a plain number; type digits with an optional decimal point or comma"
    return f"{words}, {allowed}" if allowed else words


def parse_number(raw: Any, *, exponent: bool = True) -> float | None:
    """A finite float from a JSON number or typed text ('1,5' reads 1.5); None when it is none.

    'nan', 'inf', '1e309', '12,5a' and friends are not numbers a person means; nor is '12,075', which may mean
    12075 or 12.075 (``comma_words`` says so). ``exponent=False`` for what a person typed in a field: '1e5' is
    none either (``exponent_words`` says so); machine data keeps reading it."""
    if not exponent and exponent_words(raw) is not None:
        return None
    if isinstance(raw, bool) or raw is None:
        return None
    if isinstance(raw, int | float):
        try:
            value = float(raw)
        except OverflowError:  # a 400-digit JSON integer
            return None
    elif isinstance(raw, str):
        if comma_readings(raw) is not None:
            return None
        text = raw.strip().replace(",", ".")
        if not text or len(text) > 40 or not _TYPED_NUMBER.fullmatch(text):
            return None
        value = float(text)
    else:
        return None
    return value if math.isfinite(value) else None
