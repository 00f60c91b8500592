"""One input policy for every way in: numbers, whole numbers, dates, times and text.

Check, then do: each ``check_*`` function takes one raw value as it arrived (form
text, JSON value, CSV cell or a model attribute), returns the clean value, or
``None`` after adding a message to ``errors`` under the field's key. A message
names the field as a person knows it, the value and what is allowed. Nothing here
writes; services take the clean values only.

The same limits serve the jobs that read rows already stored (generation,
calendars, the board) and ``manage.py check_data``: ``date_problem`` and
``number_problem`` say what is wrong with a stored value, or ``None``.

Lowest app layer (accounts), so every app may use it; physics stays in
``engineering`` (unit conversion for messages comes from ``engineering.units``).
"""

from __future__ import annotations

import datetime as dt
import math
import re
import zoneinfo
from typing import Any

from django.core.exceptions import ValidationError
from django.utils.dateparse import parse_datetime

from accounts.clock import local_time_text

# The typed-number reader, answered from here too.
from accounts.typed_numbers import comma_words, parse_number
from accounts.typed_numbers import exponent_words as exponent_words
from engineering.errors import EngineeringInputError
from engineering.units import to_display, unit_label

# ---------------------------------------------------------------------------
# Limits
# ---------------------------------------------------------------------------
# No unit in the registry was started, and no reading or visit dated, before this day (common practice: the
# product's records begin this century; an earlier date is a typo such as 0025 for 2025 or a reset clock).
EARLIEST_DATE = dt.date(2000, 1, 1)
# Equipment outlives the product's records: air handlers in service 20 to 40 years and more are normal (common
# practice), so installation, service start and manufacture dates reach back to this day.
EARLIEST_EQUIPMENT_DATE = dt.date(1950, 1, 1)
# Plans and service starts reach at most this many years ahead of today (common practice: a maintenance plan
# or a unit on order is not dated further ahead; 9999-12-31 is a placeholder, not a date).
PLAN_YEARS_AHEAD = 10
# Clocks of phones and building-automation exports drift a little: a reading up to 10 minutes ahead of the
# server's clock is accepted (common practice).
READING_FUTURE_TOLERANCE = dt.timedelta(minutes=10)
# The database's integer columns (PostgreSQL integer, smallint, bigint).
INT32_MAX = 2**31 - 1
INT16_MAX = 2**15 - 1
INT64_MAX = 2**63 - 1
# NUL and the other C0/C1 control characters; multi-line text may keep tab, line feed and carriage return.
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")
_CONTROL_LINE = re.compile(r"[\x00-\x1f\x7f-\x9f]")


class FieldErrors(dict):
    """``{field: [message, ...]}``, the shape of ``ValidationError`` with a field dict and of the API's errors."""

    def add(self, key: str, message: str) -> None:
        self.setdefault(key, []).append(message)

    def raise_if_any(self) -> None:
        if self:
            raise ValidationError(dict(self))


def shown(raw: object, limit: int = 40) -> str:
    """A raw value as a person can read it in a message, cut short (a long string is not echoed whole)."""
    text = str(raw) if isinstance(raw, int | float) and not isinstance(raw, bool) else repr(raw)
    return text if len(text) <= limit else text[: limit - 1] + "…"


def years_after(day: dt.date, years: int) -> dt.date:
    """The same day ``years`` later (29 February becomes 28 February)."""
    try:
        return day.replace(year=day.year + years)
    except ValueError:
        return day.replace(year=day.year + years, day=28)


def latest_plan_date(*, today: dt.date) -> dt.date:
    return years_after(today, PLAN_YEARS_AHEAD)


# ---------------------------------------------------------------------------
# Numbers
# ---------------------------------------------------------------------------
def _display(value: float, quantity: str | None, system: str) -> tuple[float, str | None]:
    if quantity is None:
        return value, None
    try:
        return to_display(value=value, quantity=quantity, system=system), unit_label(quantity=quantity, system=system)
    except (EngineeringInputError, OverflowError):
        return value, None


def number_allowed(
    *, minimum: float, maximum: float, unit: str = "", quantity: str | None = None, system: str = "si"
) -> str:
    """'a number from 0.01 to 100 m³/s' in the person's units (``quantity`` names how to convert SI values)."""
    lo, label = _display(minimum, quantity, system)
    hi, _ = _display(maximum, quantity, system)
    unit_text = label if label is not None else unit
    return f"a number from {lo:.6g} to {hi:.6g}{f' {unit_text}' if unit_text else ''}"


def number_problem(
    value: Any, *, label: str, minimum: float, maximum: float, unit: str = "", quantity=None, system="si"
) -> str | None:
    """What is wrong with a stored or parsed number (not finite, out of range), or None."""
    if value is None:
        return None
    allowed = number_allowed(minimum=minimum, maximum=maximum, unit=unit, quantity=quantity, system=system)
    if isinstance(value, bool) or not isinstance(value, int | float):
        return f"{label}: {shown(value)} is not a number; allowed: {allowed}"
    if not math.isfinite(value):
        return f"{label}: {shown(value)} is not a finite number; allowed: {allowed}"
    if not minimum <= value <= maximum:
        shown_value, display_unit = _display(value, quantity, system)
        unit_text = display_unit if display_unit is not None else unit
        # A whole number in its own unit is said as typed (9223372036854775807, not 9.22337e+18).
        text = str(value) if isinstance(value, int) and quantity is None else f"{shown_value:.6g}"
        return f"{label}: {text}{f' {unit_text}' if unit_text else ''} is out of range; allowed: {allowed}"
    return None


def check_number(
    raw: Any,
    *,
    key: str,
    label: str,
    minimum: float,
    maximum: float,
    errors: FieldErrors,
    unit: str = "",
    quantity: str | None = None,
    system: str = "si",
    required: bool = False,
) -> float | None:
    """A finite number within [minimum, maximum] (SI), or None with a message in the person's units.

    ``raw`` is taken as SI; a form that shows another unit converts first. Empty is None (an error if required).
    """
    allowed = number_allowed(minimum=minimum, maximum=maximum, unit=unit, quantity=quantity, system=system)
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        if required:
            errors.add(key, f"{label} is required; allowed: {allowed}")
        return None
    value = parse_number(raw, exponent=False)  # typed text: "1e5" is refused, with the range (a JSON 1e5 reads)
    if value is None:
        ambiguous = comma_words(raw) or exponent_words(raw, f"allowed: {allowed}")
        errors.add(
            key,
            f"{label}: {ambiguous}"
            if ambiguous
            else f"{label}: {shown(raw)} is not a finite number; allowed: {allowed}",
        )
        return None
    problem = number_problem(
        value, label=label, minimum=minimum, maximum=maximum, unit=unit, quantity=quantity, system=system
    )
    if problem:
        errors.add(key, problem)
        return None
    return value


def check_integer(
    raw: Any,
    *,
    key: str,
    label: str,
    errors: FieldErrors,
    minimum: int = 0,
    maximum: int = INT32_MAX,
    unit: str = "",
    required: bool = False,
    allowed: str = "",
) -> int | None:
    """A whole number within [minimum, maximum] (default: what a database integer column holds): the one reader of
    whole numbers from forms, queries and JSON. A negative is a whole number; outside the range it reads "Estimated
    minutes: -1 is out of range; allowed: a whole number from 1 to 960", text that is none "Estimated minutes:
    '12a' is not a whole number; allowed: a whole number from 1 to 960" (``allowed``: other words for the range)."""
    allowed = allowed or f"a whole number from {minimum} to {maximum}{f' {unit}' if unit else ''}"
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        if required:
            errors.add(key, f"{label} is required; allowed: {allowed}")
        return None
    value: int | None = None
    if isinstance(raw, int) and not isinstance(raw, bool):
        value = raw
    elif (isinstance(raw, float) and math.isfinite(raw) and raw == int(raw)) or (
        isinstance(raw, str) and re.fullmatch(r"\s*[+-]?\d{1,30}\s*", raw)
    ):
        value = int(raw)
    if value is None:
        errors.add(key, f"{label}: {shown(raw)} is not a whole number; allowed: {allowed}")
        return None
    if not minimum <= value <= maximum:
        errors.add(
            key, f"{label}: {shown(raw if isinstance(raw, float) else value)} is out of range; allowed: {allowed}"
        )
        return None
    return value


# ---------------------------------------------------------------------------
# Dates and times
# ---------------------------------------------------------------------------
def date_window(*, today: dt.date) -> tuple[dt.date, dt.date]:
    """Plans (visits, schedules, report periods): from 2000-01-01 to ten years after today. Equipment dates
    have their own window (``equipment_date_window``)."""
    return EARLIEST_DATE, latest_plan_date(today=today)


def equipment_date_window(*, today: dt.date, planned: bool = False) -> tuple[dt.date, dt.date]:
    """Installation, service start and manufacture dates of equipment: from 1950-01-01 to today; a date that
    may be planned (a unit's service start) reaches ten years ahead as plans do."""
    return EARLIEST_EQUIPMENT_DATE, latest_plan_date(today=today) if planned else today


def equipment_date_problem(day: dt.date | None, *, label: str, today: dt.date, planned: bool = False) -> str | None:
    """'Installed on 2031-01-01 is out of range; allowed: 1950-01-01 to 2026-12-05' for an equipment date outside
    its window (today on the site's clock)."""
    return window_problem(day, label=label, window=equipment_date_window(today=today, planned=planned))


def date_problem(day: dt.date | None, *, label: str, today: dt.date) -> str | None:
    """'planned for 9999-12-31 is out of range; allowed: 2000-01-01 to 2036-12-05' for a stored date outside the
    plan window, else None."""
    return window_problem(day, label=label, window=date_window(today=today))


def window_problem(day: dt.date | None, *, label: str, window: tuple[dt.date, dt.date]) -> str | None:
    if day is None:
        return None
    earliest, latest = window
    if earliest <= day <= latest:
        return None
    # One statement of the window, by its first and last day: never a second, coarser range beside it (a
    # year span 1950–2026 said next to 'to 2026-12-05' read as two different rules).
    return f"{label} {day.isoformat()} is out of range; allowed: {earliest.isoformat()} to {latest.isoformat()}"


# A day as a person types it into a page: ISO (2026-12-04) or the day-first European form with dots and a
# four-digit year (04.12.2026), which no convention reads month first. A day with slashes (04/12/2026) is 4 December
# in Europe and 12 April in the US: never guessed, refused with the forms that are read.
DATE_FORMATS = "YYYY-MM-DD or DD.MM.YYYY (31 January 2026: 2026-01-31 or 31.01.2026)"
_ISO_DAY = re.compile(r"(\d{4})-(\d{2})-(\d{2})")
_DOTTED_DAY = re.compile(r"(\d{1,2})\.(\d{1,2})\.(\d{4})")
_SLASHED_DAY = re.compile(r"\d{1,4}/\d{1,2}/\d{1,4}")


def parse_day(raw: Any) -> dt.date | None:
    """A day from a ``date`` or typed text in one of ``DATE_FORMATS``; None when it is none (a day that does not
    exist, such as 31.02.2026, included)."""
    if isinstance(raw, dt.datetime):
        return raw.date()
    if isinstance(raw, dt.date):
        return raw
    if not isinstance(raw, str):
        return None
    text = raw.strip()
    iso, dotted = _ISO_DAY.fullmatch(text), _DOTTED_DAY.fullmatch(text)
    try:
        if iso:
            return dt.date(int(iso[1]), int(iso[2]), int(iso[3]))
        if dotted:
            return dt.date(int(dotted[3]), int(dotted[2]), int(dotted[1]))
    except ValueError:
        return None
    return None


def day_refusal(raw: Any, *, label: str, allowed: str = "", said: str | None = None) -> str:
    """'Due day: '04/12/2026' is not a date …; allowed: a date as YYYY-MM-DD or DD.MM.YYYY …' for text that
    ``parse_day`` does not read; ``allowed`` adds the window ("from 2000-01-01 to 2036-12-04"), ``said`` is the
    value as the caller's messages quote it (``shown`` by default)."""
    slashed = isinstance(raw, str) and _SLASHED_DAY.fullmatch(raw.strip())
    why = " (with slashes it could be day or month first)" if slashed else ""
    window = f" {allowed}" if allowed else ""
    value = shown(raw) if said is None else said
    return f"{label}: {value} is not a date{why}; allowed: a date as {DATE_FORMATS}{window}"


def check_date(
    raw: Any, *, key: str, label: str, today: dt.date, errors: FieldErrors, required: bool = False
) -> dt.date | None:
    """A date (``date``, 'YYYY-MM-DD' or 'DD.MM.YYYY', ``parse_day``) within the plan window (``date_window``)."""
    earliest, latest = date_window(today=today)
    window = f"from {earliest.isoformat()} to {latest.isoformat()}"
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        if required:
            errors.add(key, f"{label} is required; allowed: a date as {DATE_FORMATS} {window}")
        return None
    day = parse_day(raw)
    if day is None:
        errors.add(key, day_refusal(raw, label=label, allowed=window))
        return None
    problem = date_problem(day, label=label, today=today)
    if problem:
        errors.add(key, problem)
        return None
    return day


def in_zone(when: dt.datetime, tz: zoneinfo.ZoneInfo | str) -> dt.datetime:
    """A time without a zone is read in ``tz`` (the site's zone); an aware time stays as it is.

    The one rule for every way a reading comes in (API, CSV, forms): '2025-03-01 08:00' at a site in
    Helsinki is 08:00 in Helsinki, wherever the server is."""
    if when.tzinfo is not None and when.utcoffset() is not None:
        return when
    zone = tz if isinstance(tz, zoneinfo.ZoneInfo) else zoneinfo.ZoneInfo(tz or "UTC")
    return when.replace(tzinfo=zone)


def local_text(when: dt.datetime, zone: zoneinfo.ZoneInfo | str) -> str:
    """The time as the site's clock shows it with the zone named (``accounts.clock.local_time_text``, the one
    format of pages, PDFs and the phone); at the ends of the calendar (year 1, 9999) as it was given."""
    return local_time_text(when, zone=zone)


def reading_time_problem(when: dt.datetime, *, label: str, now: dt.datetime, tz=None) -> str | None:
    """A reading is not dated before 2000 nor later than now (plus 10 minutes of clock drift)."""
    zone = tz if isinstance(tz, zoneinfo.ZoneInfo) else zoneinfo.ZoneInfo(tz or "UTC")
    earliest = dt.datetime.combine(EARLIEST_DATE, dt.time(), tzinfo=zone)
    if when < earliest:
        year = EARLIEST_DATE.year
        # Said as given: zone rules before standard time (1 Jan 0001 in Helsinki is '00:19 LMT') are artefacts.
        given = when.isoformat(sep=" ", timespec="minutes").replace("+00:00", " UTC")
        return f"{label} {given} is before {year}; allowed: {year}-01-01 or later"
    if when > now + READING_FUTURE_TOLERANCE:
        return (
            f"{label} {local_text(when, zone)} is later than now "
            f"({local_text(now, zone)}, site time); a reading cannot come from the future "
            "— check the date and the device's clock"
        )
    return None


def check_reading_time(
    raw: Any, *, key: str, label: str, tz, now: dt.datetime, errors: FieldErrors
) -> dt.datetime | None:
    """A reading's date-time ('2025-03-01 08:00', ISO 8601, or a datetime): without a zone it is read in the
    site's zone ``tz``; not before 2000, not later than now plus 10 minutes."""
    allowed = "a date-time like 2025-03-01 08:00 (site time) or with an offset, 2025-03-01T08:00+02:00"
    if isinstance(raw, dt.datetime):
        when = raw
    elif isinstance(raw, str) and raw.strip() and len(raw) <= 40:
        try:
            when = parse_datetime(raw.strip().replace(" ", "T", 1))
        except ValueError:
            when = None
    else:
        when = None
    if when is None:
        errors.add(key, f"{label}: {shown(raw)} is not a date-time; allowed: {allowed}")
        return None
    when = in_zone(when, tz)
    problem = reading_time_problem(when, label=label, now=now, tz=tz)
    if problem:
        errors.add(key, problem)
        return None
    return when


# ---------------------------------------------------------------------------
# Text
# ---------------------------------------------------------------------------
def control_characters(value: str, *, lines: bool = False) -> str:
    """The control characters in ``value`` written out as a person can read them ('"\\x00", "\\x1b"'), or ''."""
    found = dict.fromkeys((_CONTROL if lines else _CONTROL_LINE).findall(value))
    return ", ".join(f'"\\x{ord(ch):02x}"' for ch in found)


def text_problem(value: str, *, label: str, max_length: int, lines: bool = False) -> str | None:
    """What is wrong with text (control characters, too long), or None: the one check for every text value
    stored, including the text inside JSON fields (PostgreSQL cannot store NUL in text or JSON)."""
    found = control_characters(value, lines=lines)
    if found:
        breaks = "; tab and line breaks are fine" if lines else ""
        return (
            f"{label}: the text contains control characters (such as NUL): {found}; "
            f"allowed: text without control characters{breaks}"
        )
    if len(value) > max_length:
        return f"{label}: {len(value)} characters is too long; allowed: at most {max_length} characters"
    return None


def check_text(
    raw: Any,
    *,
    key: str,
    label: str,
    max_length: int,
    errors: FieldErrors,
    lines: bool = False,
    required: bool = False,
) -> str | None:
    """Text of at most ``max_length`` characters without NUL or control characters (``lines``: tab and line
    breaks allowed), stripped; None with a message otherwise."""
    if raw is None:
        raw = ""
    if not isinstance(raw, str):
        errors.add(key, f"{label}: {shown(raw)} is not text; allowed: text of at most {max_length} characters")
        return None
    value = raw.strip()
    if required and not value:
        errors.add(key, f"{label} is required; allowed: text of at most {max_length} characters")
        return None
    problem = text_problem(value, label=label, max_length=max_length, lines=lines)
    if problem:
        errors.add(key, problem)
        return None
    return value
