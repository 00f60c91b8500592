"""What the scheduling API's views read from a request before they call a service: the caller's organisation,
the work order its address names (seen, or managed), and the parameters of the polled reads (today, board), which
are the keys of their kept answers (``accounts.answers``)."""

from __future__ import annotations

import datetime as dt

from django.core.exceptions import PermissionDenied as DjangoPermissionDenied
from django.core.exceptions import ValidationError
from django.http import HttpRequest
from drf_spectacular.utils import OpenApiParameter
from rest_framework.exceptions import PermissionDenied

from accounts.answers import Polled, kept
from accounts.changes import Scope
from accounts.inputs import FieldErrors, check_integer, check_number, date_problem
from accounts.models import Membership, Role, User
from accounts.selectors import MANAGING_ROLES
from inventory.today import time_zone_for, today_for

from .models import WorkOrder
from .selectors import BOARD_LIMIT_MAX, BOARD_SECTIONS, work_order_for


def caller_organisation(user, *, managing: bool = False):
    """The caller's first organisation (one they manage, with ``managing``), or None."""
    roles = list(MANAGING_ROLES) if managing else list(Role.values)
    m = Membership.objects.filter(user=user, role__in=roles).select_related("organisation").order_by("id").first()
    return m.organisation if m else None


def work_order_seen(request, public_id) -> WorkOrder:
    """The work order named in the address, if the caller may see it (404 otherwise)."""
    return work_order_for(user=request.user, public_id=public_id)


def work_order_managed(request, public_id, *, action: str) -> WorkOrder:
    """The work order if the person manages it: 404 when they cannot see it, 403 when they may only look."""
    try:
        return work_order_for(user=request.user, public_id=public_id, write=True)
    except DjangoPermissionDenied:
        raise PermissionDenied(f"Only a supervisor or admin of the organisation may {action}.") from None


# The polled reads kept by accounts.answers, each with what its answer depends on (accounts.changes.Scope): a
# technician's today shows their own work orders only, so another's synced form or visit leaves it kept; the
# board shows every work order of the organisation.
TODAY = Polled("today", Scope.OWN_WORK)
BOARD = Polled("board", Scope.ORGANISATION_WORK)

CONDITIONAL = [
    OpenApiParameter(
        "If-None-Match",
        str,
        OpenApiParameter.HEADER,
        description="The ETag of an earlier answer; 304 with no body while the answer is the same.",
    )
]


def kept_zone(request: HttpRequest, user: User) -> str | None:
    """The zone the caller's day is read on (``inventory.today``), kept with the answers: no query on a repeat."""
    zone: str | None = kept(request, ("time_zone", user.pk), lambda: time_zone_for(user))
    return zone


def today_params(request, user) -> tuple[dt.date, tuple[float, float] | None]:
    """(day, start) of a today request; the answer depends on nothing else but the caller. The day defaults
    to today where the caller's sites are (their time zone kept with the answers: no query on a repeat)."""
    query = request.GET
    day = date_param(query, "day")
    if day is None:
        day = today_for(kept_zone(request, user))
    start = None
    if query.get("lat") and query.get("lon"):
        # 'nan' or 'inf' would route nowhere and make the answer no JSON: refused with the range.
        checked = FieldErrors()
        lat = check_number(query["lat"], key="lat", label="Latitude", minimum=-90, maximum=90, unit="°", errors=checked)
        lon = check_number(
            query["lon"], key="lon", label="Longitude", minimum=-180, maximum=180, unit="°", errors=checked
        )
        checked.raise_if_any()
        start = (lat, lon)
    return day, start


def date_param(query, name: str) -> dt.date | None:
    raw = query.get(name)
    if not raw:
        return None
    try:
        return dt.date.fromisoformat(raw)
    except ValueError:
        raise ValidationError({name: [f"{name}={raw!r} is not a date as YYYY-MM-DD"]}) from None


def int_param(query, name: str, *, default: int, low: int, high: int) -> int:
    raw = query.get(name)
    if raw in (None, ""):
        return default
    errors = FieldErrors()
    value = check_integer(raw, key=name, label=name.capitalize(), minimum=low, maximum=high, errors=errors)
    errors.raise_if_any()
    return default if value is None else value


def board_params(request, user) -> tuple[dt.date, dt.date, int, int, str | None]:
    """(week start, today, limit, offset, section) of a board request; with the caller, all it depends on.
    Today is the caller's, as on the today answer (the board page reads the organisation's: the same zone for
    a supervisor of one organisation)."""
    query = request.GET
    today = today_for(kept_zone(request, user))
    week = date_param(query, "week") or today
    problem = date_problem(week, label="week", today=today)
    if problem is not None:
        raise ValidationError({"week": [problem]})
    week = week - dt.timedelta(days=week.weekday())
    limit = int_param(query, "limit", default=100, low=0, high=BOARD_LIMIT_MAX)
    offset = int_param(query, "offset", default=0, low=0, high=10**6)
    section = query.get("section") or None
    if section is not None and section not in BOARD_SECTIONS:
        allowed = ", ".join(BOARD_SECTIONS)
        raise ValidationError({"section": [f"section={section!r} is not one of {allowed}"]})
    return week, today, limit, offset, section
