"""One module per kind of report. Each offers ``prepare`` (check and normalise the inputs
for one person, tenancy included) and ``build`` (the HTML of a stored report).

``prepare`` is the only place a report's inputs are trusted; ``build`` reads only
what ``prepare`` stored, so a report can be rendered again later with the same text.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from types import ModuleType
from typing import Any

from django.core.exceptions import ValidationError
from django.http import Http404

from accounts.clock import local_date_of
from accounts.inputs import date_window, day_refusal, parse_day

MAX_ID = 2**63 - 1  # the database's largest key; bigger numbers cannot name a row


@dataclass(frozen=True)
class Prepared:
    parameters: dict[str, Any]
    site_ids: list[int]
    organisation_id: int


@dataclass(frozen=True)
class Built:
    html: str
    title: str
    extra: dict[str, Any] = field(default_factory=dict)


# The words of the forms' fields: a message names the field as the person sees it, while the API keeps the
# parameter's name as the key of its error.
LABELS = {
    "start": "From",
    "end": "To",
    "unit": "Unit",
    "units": "Units",
    "site": "Site",
    "sites": "Sites",
    "work_order": "Work order",
    "components": "Parts",
    "layout": "Paper",
    "pdfa": "Archival PDF/A",
}


def label_of(name: str) -> str:
    return LABELS.get(name, name.replace("_", " ").capitalize())


def shown(value: Any, limit: int = 40) -> str:
    """A typed value as it may be written back in a message: quoted, cut at ``limit`` characters, control
    characters (NUL, escape) spelled out so they neither vanish nor act."""
    text = ", ".join(map(str, value)) if isinstance(value, list) else str(value)
    cut = text[:limit] + ("…" if len(text) > limit else "")
    visible = "".join(c if c.isprintable() else f"\\x{ord(c):02x}" for c in cut)
    return f"“{visible}”"


class NotVisible(Http404):
    """404 for a site, unit or work order the person may not see (absent and foreign look alike). Its text is
    the API's ("units: no unit with id 2 among those you may see"); ``field`` and ``message`` let a page say it
    beside that field in the form's words ("Units: no such unit among those you may see (id 2)")."""

    def __init__(self, field_name: str, message: str, api_text: str | None = None):
        super().__init__(api_text or message)
        self.field = field_name
        self.message = message


def id_list(parameters: dict, name: str, *, required: bool = False) -> list[int]:
    """A sorted, de-duplicated list of positive integer ids from ``parameters[name]``."""
    raw = parameters.get(name, [])
    if raw in (None, ""):
        raw = []
    if not isinstance(raw, list) or not all(
        isinstance(x, int) and not isinstance(x, bool) and 0 < x <= MAX_ID for x in raw
    ):
        raise ValidationError(
            {name: f"{label_of(name)}: {shown(raw)} is not a list of ids; allowed: whole numbers from 1"}
        )
    if required and not raw:
        raise ValidationError({name: f"{label_of(name)}: none given; choose at least one"})
    return sorted(set(raw))


def one_id(parameters: dict, name: str) -> int:
    raw = parameters.get(name)
    if not isinstance(raw, int) or isinstance(raw, bool) or not 0 < raw <= MAX_ID:
        what = label_of(name).lower()
        raise ValidationError(
            {name: f"{label_of(name)}: {shown(raw)} is not a {what} id; allowed: a whole number from 1"}
        )
    return raw


def a_date(parameters: dict, name: str, default: date | None = None, *, today: date) -> date:
    label = label_of(name)
    raw = parameters.get(name)
    if raw in (None, ""):
        if default is None:
            raise ValidationError({name: f"{label}: a date is required"})
        return default
    day = parse_day(raw)
    if day is None:
        raise ValidationError({name: day_refusal(raw, label=label, said=shown(raw))})
    # The input policy's window (2000 to ten years after ``today``, the report's): a report of year 9999 is a
    # typo, and its date sums would run past the calendar.
    earliest, latest = date_window(today=today)
    if not earliest <= day <= latest:
        raise ValidationError(
            {
                name: f"{label}: {local_date_of(day)} is outside the days allowed, "
                f"{local_date_of(earliest)} to {local_date_of(latest)}"
            }
        )
    return day


def period(parameters: dict, *, default_start: date, default_end: date, today: date | None = None) -> tuple[date, date]:
    """The report's From and To days. A period may not begin after ``today`` (by default ``default_end``, which
    the documents set to the sites' today at the request, ``inventory.today``): a report of days not yet lived
    would claim figures for them. Both days lie in the input policy's window from ``today``.
    A period still running (To after today) is judged as of the request, as its "figures as of" line says."""
    today = default_end if today is None else today
    start = a_date(parameters, "start", default_start, today=today)
    end = a_date(parameters, "end", default_end, today=today)
    if end < start:
        raise ValidationError({"end": f"To: {local_date_of(end)} is before From: {local_date_of(start)}"})
    if start > today:
        raise ValidationError(
            {
                "start": f"From: {local_date_of(start)} is after today ({local_date_of(today)}); "
                "a report covers days that have begun"
            }
        )
    if (end - start).days > 3 * 366:
        raise ValidationError(
            {"end": f"To: the period {local_date_of(start)} – {local_date_of(end)} is longer than the 3 years allowed"}
        )
    return start, end


def period_text(parameters: dict) -> str:
    """ "1 Dec 2025 – 30 Nov 2026" from a report's stored ISO days ("" when it has no period): the titles, the
    reports list and the API write a period alike."""
    try:
        start, end = (date.fromisoformat(str(parameters[k])) for k in ("start", "end"))
    except (KeyError, ValueError):
        return ""
    return f"{local_date_of(start)} – {local_date_of(end)}"


def refuse_missing(name: str, asked: list[int], found: set[int], what: str) -> None:
    """404 naming the ids that do not exist *for this person* (other tenants' ids look the same as absent ones)."""
    missing = [i for i in asked if i not in found]
    if missing:
        ids = ", ".join(map(str, missing))
        raise NotVisible(
            name,
            f"{label_of(name)}: no such {what} among those you may see (id {ids})",
            f"{name}: no {what} with id {ids} among those you may see",
        )


def single_organisation(org_ids: set[int], name: str) -> int:
    if len(org_ids) != 1:
        raise ValidationError({name: "a report covers the sites of one organisation; these belong to several"})
    return next(iter(org_ids))


def registry() -> dict[str, ModuleType]:
    """The document kinds: each module's ``prepare`` checks a request, its ``build`` makes the HTML."""
    from . import compliance_report, inspection_report, labels, unit_history

    return {
        "labels": labels,
        "inspection": inspection_report,
        "compliance": compliance_report,
        "unit_history": unit_history,
    }
