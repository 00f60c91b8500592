"""The mixed day's setup (not timed): the organisations of the day, and each one's reads and writers' material."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

from .generate import OrgSummary, Portfolio
from .scenarios import WrongOutcome, sync_forms_prepare, today_work_assign, url

SETUP_TIMEOUT_S = 130  # gunicorn's worker timeout (bench.load.Server) is 120 s


@dataclass
class DayOrg:
    """What the readers and writers of one organisation use."""

    summary: OrgSummary
    reads: dict[str, list[tuple[str, str | None, str | None]]]  # kind -> (path, token, cookie) per reader
    forms: list[tuple[str, dict]] = field(default_factory=list)  # (technician token, form), taken in order
    assign: list[dict] = field(default_factory=list)  # {"id", "version", "day", "turn"} per visit
    assign_techs: list[str] = field(default_factory=list)
    supervisor_token: str = ""
    meters: list[dict] = field(default_factory=list)  # {"label", "hours", "at"}: the reading a line runs through
    meter_token: str = ""


def far_weekday(day: dt.date) -> dt.date:
    while day.weekday() >= 5:  # Saturday, Sunday: no capacity (scheduling.selectors.capacity_on)
        day += dt.timedelta(days=1)
    return day


def organisations_for_day(*, portfolio: Portfolio, extra: int, years: int) -> list[OrgSummary]:
    """The main and the other organisation, plus ``extra`` more of a tenth of the main one's units each, every
    one with its preventive work generated and today's visits given to its technicians."""
    from accounts.models import Organisation
    from scheduling.engine import work_orders_generate
    from scheduling.models import WorkOrder

    from .generate import organisations_add

    orgs = [portfolio.main, portfolio.other]
    if extra:
        units = max(5, len(portfolio.main.ahu_ids) // 10)
        orgs += organisations_add(
            count=extra, sites=max(1, units // 10), ahus=units, today=portfolio.today, years=years
        )
    for org in orgs:
        has_open = WorkOrder.objects.filter(organisation_id=org.organisation_id, state__in=WorkOrder.OPEN_STATES)
        if not has_open.exists():
            work_orders_generate(organisation=Organisation.objects.get(pk=org.organisation_id), today=portfolio.today)
        if not WorkOrder.objects.filter(organisation_id=org.organisation_id, scheduled_for=portfolio.today).exists():
            today_work_assign(portfolio=portfolio, org=org)
    return orgs


def session_cookie(username: str) -> str:
    """A signed-in browser's session cookie for ``username`` (the dashboard is a page, not an API)."""
    from django.conf import settings
    from django.test import Client

    from accounts.models import User

    client = Client()
    client.force_login(User.objects.get(username=username))
    return f"{settings.SESSION_COOKIE_NAME}={client.cookies[settings.SESSION_COOKIE_NAME].value}"


def meters_prepare(*, org: OrgSummary, user, skip: set[int], count: int = 20) -> list[dict]:
    """Up to ``count`` units of ``org`` whose run-hour meter ``user`` (the meter writer) reads, each with its latest
    reading (``{"label", "hours", "at"}``).

    Only units the person may see (``inventory.selectors.ahus_visible_to``): a technician sees the sites of their
    own work only, so any other unit is refused ("not a unit you can see"). Chosen before the passes, their
    visibility holds through them: it comes from work the writers do not take away (the history, today's visits,
    the forms' copies, which the sync writer completes). None a form is for (``skip``): a form stores its unit's
    reading as it was when the form was made."""
    from inventory.selectors import ahus_visible_to
    from scheduling.models import MeterReading

    units = dict(
        ahus_visible_to(user=user)
        .filter(building__site__organisation_id=org.organisation_id)
        .exclude(pk__in=skip)
        .order_by("-pk")
        .values_list("pk", "label_code")[:count]
    )
    latest: dict[int, tuple[float, dt.datetime]] = {}
    for ahu_id, hours, at in (
        MeterReading.objects.filter(ahu_id__in=units, component__isnull=True)
        .order_by("ahu_id", "taken_at")
        .values_list("ahu_id", "hours", "taken_at")
    ):
        latest[ahu_id] = (hours, at)
    return [{"label": units[a], "hours": h, "at": at} for a, (h, at) in latest.items()]


def day_prepare(*, portfolio: Portfolio, port: int, orgs: list[OrgSummary], forms: int) -> list[DayOrg]:
    """Reads, and the writers' material, for each organisation: ``forms`` sync forms in all (shared evenly),
    visits to move between technicians, and units whose run-hour meters are read."""
    from accounts.models import User
    from scheduling.models import WorkOrder
    from scheduling.selectors import assignment_check

    from .load import get_json, request

    today_path = url("scheduling_api:today") + f"?day={portfolio.today.isoformat()}"
    board_path = url("scheduling_api:board") + f"?week={portfolio.today.isoformat()}"
    dashboard_path = url("frontend:dashboard")
    copies_due = portfolio.today + dt.timedelta(days=300)  # off today's lists and the board's week
    per_org = math.ceil(forms / len(orgs))
    out = []
    for n, org in enumerate(orgs):
        techs = [org.tokens[t] for t in org.technicians]
        sup = org.tokens[org.supervisor]
        cookie = session_cookie(org.property_manager)
        day_org = DayOrg(
            summary=org,
            reads={
                "today": [(today_path, t, None) for t in techs],
                "board": [(board_path, sup, None)],
                "dashboard": [(dashboard_path, None, cookie)],
            },
            supervisor_token=sup,
            meter_token=org.tokens[org.technicians[0]],
            assign_techs=list(org.technicians),
        )
        # One look at each read, so the passes measure real answers, not errors or a sign-in page. Untimed, and
        # given as long as gunicorn gives a worker: the first answer of a large organisation is built cold.
        get_json(port, today_path, token=techs[0], timeout=SETUP_TIMEOUT_S)
        get_json(port, board_path, token=sup, timeout=SETUP_TIMEOUT_S)
        status, body, _ = request("GET", port, dashboard_path, cookie=cookie, timeout=SETUP_TIMEOUT_S)
        if status != 200 or b"<html" not in body[:500].lower():
            raise WrongOutcome(f"{org.slug}: the property manager's dashboard answered {status}: {body[:200]!r}")
        day_org.forms = sync_forms_prepare(
            portfolio=portfolio, port=port, count=per_org, tag=f"day{n}", org=org, due_date=copies_due
        )
        synced_units = set(
            WorkOrder.objects.filter(public_id__in=[f["work_order"] for _, f in day_org.forms]).values_list(
                "ahu_id", flat=True
            )
        )
        # Visits to move: open, unassigned, planned for no day (not the forms' copies); each gets a weekday of
        # its own from 150 days ahead (past the generated horizon), so a technician holds one a day at most.
        tech_users = list(User.objects.filter(username__in=org.technicians).order_by("username"))
        candidates = (
            WorkOrder.objects.filter(
                organisation_id=org.organisation_id,
                state=WorkOrder.State.PLANNED,
                assignee__isnull=True,
                scheduled_for__isnull=True,
                approval=WorkOrder.Approval.NOT_NEEDED,
            )
            .select_related("ahu__building__site", "organisation")
            .order_by("-due_date", "pk")[:40]
        )
        day = far_weekday(portfolio.today + dt.timedelta(days=150))
        for wo in candidates:
            if len(day_org.assign) >= max(2, len(tech_users)):
                break
            if assignment_check(work_order=wo, technician=tech_users[0], day=day).over:
                continue  # this visit alone would fill a day: a deliberate 409 is not what is measured
            day_org.assign.append({"id": str(wo.public_id), "version": wo.version, "day": day, "turn": 0})
            day = far_weekday(day + dt.timedelta(days=1))
        meter_user = User.objects.get(username=org.technicians[0])  # the owner of ``meter_token``
        day_org.meters = meters_prepare(org=org, user=meter_user, skip=synced_units)
        out.append(day_org)
    # A tiny organisation may lack a meter of its own or a visit to move: its writes go to the others.
    for kind, has in (("forms", "forms"), ("visits to move", "assign"), ("meters", "meters")):
        if not any(getattr(o, has) for o in out):
            raise WrongOutcome(f"mixed day: no organisation has {kind} to write with")
    return out
