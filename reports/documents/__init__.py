"""One module per kind of report. Each offers ``prepare`` (check and normalise the inputs
for one person, tenancy included) and ``build`` (the HTML of a stored report).

``prepare`` is the only place a report's inputs are trusted; ``build`` reads only
what ``prepare`` stored, so a report can be rendered again later with the same text.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from typing import Any

from django.core.exceptions import ValidationError
from django.http import Http404
from django.utils import timezone

from accounts.clock import local_date_of
from accounts.inputs import date_problem

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


def id_list(parameters: dict, name: str, *, required: bool = False) -> list[int]:
    """A sorted, de-duplicated list of positive integer ids from ``parameters[name]``."""
    raw = parameters.get(name, [])
    if raw in (None, ""):
        raw = []
    if not isinstance(raw, list) or not all(
        isinstance(x, int) and not isinstance(x, bool) and 0 < x <= MAX_ID for x in raw
    ):
        raise ValidationError({name: f"{name}={raw!r}: expected a list of ids (positive whole numbers)"})
    if required and not raw:
        raise ValidationError({name: f"{name}: give at least one id"})
    return sorted(set(raw))


def one_id(parameters: dict, name: str) -> int:
    raw = parameters.get(name)
    if not isinstance(raw, int) or isinstance(raw, bool) or not 0 < raw <= MAX_ID:
        raise ValidationError({name: f"{name}={raw!r}: expected the id (a positive whole number)"})
    return raw


def a_date(parameters: dict, name: str, default: date | None = None) -> date:
    raw = parameters.get(name)
    if raw in (None, ""):
        if default is None:
            raise ValidationError({name: f"{name}: a date (YYYY-MM-DD) is required"})
        return default
    try:
        day = date.fromisoformat(str(raw)[:20])
    except ValueError:
        raise ValidationError({name: f"{name}={str(raw)[:40]!r}: expected a date as YYYY-MM-DD"})
    # The input policy's window (2000 to ten years ahead): a report of year 9999 is a typo, and its date sums
    # would run past the calendar.
    problem = date_problem(day, label=f"Report {name}", today=timezone.localdate())
    if problem:
        raise ValidationError({name: problem})
    return day


def period(parameters: dict, *, default_start: date, default_end: date) -> tuple[date, date]:
    start = a_date(parameters, "start", default_start)
    end = a_date(parameters, "end", default_end)
    if end < start:
        raise ValidationError({"end": f"end={end.isoformat()} is before start={start.isoformat()}"})
    if (end - start).days > 3 * 366:
        raise ValidationError({"end": f"the period {start}–{end} is longer than the 3 years allowed"})
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
        raise Http404(f"{name}: no {what} with id {', '.join(map(str, missing))} among those you may see")


def single_organisation(org_ids: set[int], name: str) -> int:
    if len(org_ids) != 1:
        raise ValidationError({name: "a report covers the sites of one organisation; these belong to several"})
    return next(iter(org_ids))


def registry():
    from . import compliance_report, inspection_report, labels, unit_history

    return {
        "labels": labels,
        "inspection": inspection_report,
        "compliance": compliance_report,
        "unit_history": unit_history,
    }
