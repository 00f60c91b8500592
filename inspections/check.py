"""Check, then do: strict readers of the phone's raw JSON, and where a phone's times sit on the server's clock.

Each reader takes one raw value, returns a clean value or ``None`` after adding
a field error that names the field, the value and what is allowed. Nothing
here writes; ``inspections.services.form_check`` parses a form with them and
``inspections.services.sync`` stores the clean values only.
Contract: inspections/SYNC.md.
"""

from __future__ import annotations

import datetime as dt
import json
import uuid
from dataclasses import dataclass

from django.core.exceptions import ValidationError
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from accounts.inputs import FieldErrors, comma_words, control_characters, exponent_words, parse_number
from accounts.inputs import shown as _shown

# PostgreSQL's integer column (PositiveIntegerField and friends).
INT_MAX = 2**31 - 1
# A phone's clock before this is broken (or reset), not a visit: refused, the technician sets the date.
EARLIEST = dt.datetime(2000, 1, 1, tzinfo=dt.UTC)
# The latest a phone's clock may read; far enough that no honest skew reaches it, early enough that date sums fit.
LATEST = dt.datetime(2100, 1, 1, tzinfo=dt.UTC)
# Clocks closer than this to the server's are taken as they are; beyond it the visit is placed on the server's timeline.
CLOCK_TOLERANCE = dt.timedelta(minutes=5)
# ``{field: [message, ...]}``, the API's error shape (config/api.py): the input policy's own collector.
Errors = FieldErrors
# "“12,075” could be 12075 or 12.075: type 12075 or 12.075" for a comma that may group thousands, else None.
ambiguous_comma = comma_words
# "“1e5” is not a plain number; type digits with an optional decimal point or comma, allowed …" for a number typed
# with an exponent, else None (accounts.typed_numbers.exponent_words; the phone's twin numbers.js exponentWords).
exponent = exponent_words


def number(raw: object) -> float | None:
    """A finite number from a JSON number or text a person typed ("0,84"); ``None`` for 1e309, NaN, a list, and
    text with an exponent ("1e5", said by ``exponent``): the input policy's reader of a typed number."""
    return parse_number(raw, exponent=False)


def shown(raw: object, limit: int = 60) -> str:
    """A raw value as a person can read it in a message, cut short (a 2 MB string is not echoed)."""
    return _shown(raw, limit)


def text(
    raw: object, key: str, errors: Errors, *, label: str, max_len: int, required: bool = False, lines: bool = True
) -> str | None:
    """A string of at most ``max_len`` characters, without NUL or control characters (``lines``: tab/newline ok)."""
    if raw is None and not required:
        return ""
    if not isinstance(raw, str):
        errors.add(key, f"{label}: {shown(raw)} is not text; allowed text of at most {max_len} characters")
        return None
    if control_characters(raw, lines=lines):
        where = "" if lines else ", tabs or line breaks"
        errors.add(key, f"{label}: the text contains control characters (such as NUL){where}; remove them")
        return None
    if len(raw) > max_len:
        errors.add(key, f"{label}: {len(raw)} characters is too long; at most {max_len} are allowed")
        return None
    if required and not raw.strip():
        errors.add(key, f"{label} is required (text of at most {max_len} characters)")
        return None
    return raw


def whole(raw: object, key: str, errors: Errors, *, label: str, lo: int = 1, hi: int = INT_MAX) -> int | None:
    """A JSON whole number (not true/false, not 3.0) from ``lo`` to ``hi``."""
    if isinstance(raw, bool) or not isinstance(raw, int) or not lo <= raw <= hi:
        errors.add(key, f"{label}: {shown(raw)} is not allowed; allowed a whole number from {lo} to {hi}")
        return None
    return raw


def code(raw: object) -> str | None:
    """A short code such as an item key or a label code: a string, else ``None`` (a list is never a key)."""
    return raw if isinstance(raw, str) and len(raw) <= 200 else None


def uuid_(raw: object, key: str, errors: Errors, *, label: str | None = None) -> uuid.UUID | None:
    """A UUID given as a string."""
    try:
        if not isinstance(raw, str):
            raise TypeError
        return uuid.UUID(raw)
    except (ValueError, TypeError):
        errors.add(key, f"{label or key}: {shown(raw)} is not a UUID such as 3f5e9c6e-1b2a-4c3d-8e9f-0a1b2c3d4e5f")
        return None


def when(raw: object, key: str, errors: Errors, *, label: str) -> dt.datetime | None:
    """An ISO 8601 date-time with an offset, from 2000 to 2100 (a phone clock outside that is broken)."""
    value = None
    if isinstance(raw, str) and len(raw) <= 40:
        try:
            value = parse_datetime(raw)
        except ValueError:  # 2025-02-30T…: well formed, no such day
            value = None
    if value is None:
        errors.add(key, f"{label}: {shown(raw)} is not a date and time such as 2025-03-01T08:55:00Z")
        return None
    if timezone.is_naive(value):
        errors.add(key, f"{label}: {shown(raw)} has no time-zone offset; add Z or +01:00")
        return None
    if not EARLIEST <= value < LATEST:
        errors.add(
            key,
            f"{label}: {shown(raw)} is not a plausible date; allowed from {EARLIEST:%Y-%m-%d} to "
            f"{LATEST:%Y-%m-%d}; check the phone's date and time",
        )
        return None
    return value


def depth_within(value: object, limit: int) -> bool:
    """True if ``value`` nests lists/objects at most ``limit`` deep (no recursion: safe on any input)."""
    stack = [(value, 1)]
    while stack:
        v, d = stack.pop()
        if isinstance(v, dict | list):
            if d > limit:
                return False
            stack.extend((c, d + 1) for c in (v.values() if isinstance(v, dict) else v))
    return True


@dataclass(frozen=True)
class Placed:
    """A visit's times on the server's timeline, and how the phone's clock stood."""

    started_at: dt.datetime
    finished_at: dt.datetime
    signed_at: dt.datetime
    skew: dt.timedelta | None  # phone clock minus server clock at receipt; None when unknown
    measured: bool  # from the phone's own clock reading (sent_at), else inferred from the times
    shifted: bool  # finish and signature times were moved by the skew

    @property
    def beyond_tolerance(self) -> bool:
        return self.skew is not None and abs(self.skew) > CLOCK_TOLERANCE


def clock_place(
    *,
    started_at: dt.datetime,
    finished_at: dt.datetime,
    signed_at: dt.datetime,
    sent_at: dt.datetime | None,
    received_at: dt.datetime,
) -> Placed:
    """Place a visit on the server's timeline; the phone's clock never refuses a form.

    ``started_at`` comes from the server's page (server time, never shifted);
    ``finished_at``/``signed_at`` from the phone's clock, ``sent_at`` is the
    phone's clock when it sent the form. Skew = ``sent_at - received_at``
    (transit time is part of it, seconds on a live connection). A phone that
    does not send its clock (older pages) has its skew inferred where the
    times show it: finished later than the server's now (phone ahead), or
    before the page's start (phone behind). Beyond ``CLOCK_TOLERANCE`` the
    phone's times are shifted by the skew, keeping the phone's durations;
    finally they are held within [start, receipt + tolerance] so no visit
    ends in the future or before it began.
    """
    started_at = min(started_at, received_at)  # the page's time cannot be later than the form's arrival
    skew, measured = None, sent_at is not None
    if measured:
        skew = sent_at - received_at
    else:
        latest = max(finished_at, signed_at)
        if latest - received_at > CLOCK_TOLERANCE:
            skew = latest - received_at
        elif started_at - finished_at > CLOCK_TOLERANCE:
            skew = finished_at - started_at
    shifted = skew is not None and abs(skew) > CLOCK_TOLERANCE
    finished, signed = (finished_at - skew, signed_at - skew) if shifted else (finished_at, signed_at)
    top = received_at + CLOCK_TOLERANCE
    finished = min(max(finished, started_at), top)
    signed = min(max(signed, started_at), top)
    return Placed(
        started_at=started_at, finished_at=finished, signed_at=signed, skew=skew, measured=measured, shifted=shifted
    )


def skew_text(skew: dt.timedelta) -> str:
    """ "3 days 2 h 5 min ahead of" / "behind" the server's clock, in plain words."""
    seconds = abs(skew.total_seconds())
    days, rest = divmod(round(seconds), 86400)
    hours, rest = divmod(rest, 3600)
    minutes = rest // 60
    parts = [f"{days} day{'s' if days != 1 else ''}"] if days else []
    parts += [f"{hours} h"] if hours else []
    parts += [f"{minutes} min"] if minutes or not parts else []
    return " ".join(parts) + (" ahead of" if skew.total_seconds() > 0 else " behind")


# A sync body nests {forms: [{readings: [{value: …}]}]}: a handful of levels; anything far deeper is not a form.
BODY_MAX_DEPTH = 20


def _no_constant(name: str):
    raise ValueError(f"{name} is not a JSON number")


def body_parse(data: bytes, *, max_depth: int = BODY_MAX_DEPTH) -> object:
    """A request body as JSON, or ValidationError ``{"body": [...]}`` (config/api.py answers 400).

    NaN and Infinity are not JSON; a number too large for a float (1e309)
    parses as infinite and each field refuses it; nesting beyond
    ``max_depth`` (or beyond Python's own recursion limit) is refused whole.
    """
    try:
        value = json.loads(data.decode("utf-8"), parse_constant=_no_constant)
    except RecursionError:
        value = None
        deep = True
    except (ValueError, UnicodeDecodeError) as exc:
        raise ValidationError({"body": [f'the body is not JSON ({exc}); send {{"forms": [...]}}']}) from None
    else:
        deep = not depth_within(value, max_depth)
    if deep:
        raise ValidationError({"body": [f"the body nests lists and objects more than {max_depth} deep; a form is not"]})
    return value
