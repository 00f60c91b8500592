"""Plan the organisation's preventive work now, from the board: the due-date engine run on demand.

Beat runs it every night where a worker runs; a contractor who has just added a customer's units or changed a
rule wants the visits at once, without a command line.
"""

from __future__ import annotations

import datetime as dt

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.db.models import Max
from django.shortcuts import redirect
from django.urls import reverse
from django.utils.html import format_html
from django.views.decorators.http import require_POST

from accounts.clock import local_date_of
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder

from .staff import managed_organisation

PLAN_DAYS = 90
NAMED_VISITS = 10  # the new visits named in the message; the rest are counted


def plan_words(result) -> str:
    """What a run did, in a sentence: new visits and their tasks, visits moved, or that nothing was due."""
    if not result.created and not result.moved:
        return f"Work planned for the next {PLAN_DAYS} days: nothing new was due; the board already holds it all."
    parts = []
    if result.work_orders_created:
        visits = "visit" if result.work_orders_created == 1 else "visits"
        tasks = "task" if result.created == 1 else "tasks"
        parts.append(f"{result.work_orders_created} new {visits} ({result.created} {tasks})")
    elif result.created:
        parts.append(f"{result.created} {'task' if result.created == 1 else 'tasks'} added to visits already planned")
    if result.moved:
        parts.append(f"{result.moved} {'task' if result.moved == 1 else 'tasks'} moved to a new due date")
    return f"Work planned for the next {PLAN_DAYS} days: {' and '.join(parts)}."


def new_visits_words(visits: list[WorkOrder]) -> str:
    """Which visits a run made, earliest first: "AHU-02 (South block) — Quarterly service, due 12 Mar 2025; ..."
    up to NAMED_VISITS, then "and N more"."""
    named = "; ".join(
        f"{wo.ahu.display_name} — {wo.title}, due {local_date_of(wo.due_date)}" for wo in visits[:NAMED_VISITS]
    )
    more = len(visits) - NAMED_VISITS
    return f"New: {named}" + (f"; and {more} more." if more > 0 else ".")


def _made_since(organisation, last_pk: int) -> list[WorkOrder]:
    """The organisation's preventive visits with an id above ``last_pk``: the ones this run made."""
    return list(
        WorkOrder.objects.filter(organisation=organisation, kind=WorkOrder.Kind.PREVENTIVE, pk__gt=last_pk)
        .select_related("ahu__building")
        .order_by("due_date", "ahu__building__name", "ahu__tag", "pk")
    )


@login_required
@require_POST
def plan_now(request):
    organisation = managed_organisation(request)
    last_pk = WorkOrder.objects.aggregate(m=Max("pk"))["m"] or 0
    result = work_orders_generate(organisation=organisation, horizon_days=PLAN_DAYS)
    messages.success(request, plan_words(result))
    made = _made_since(organisation, last_pk) if result.work_orders_created else []
    if made:
        messages.success(request, new_visits_words(made))
        first = made[0].scheduled_for or made[0].due_date
        monday = first - dt.timedelta(days=first.weekday())
        messages.success(
            request,
            format_html(
                '<a href="{}?week={}">Open the board at the week of the first: {}</a>',
                reverse("frontend:board"),
                monday.isoformat(),
                local_date_of(monday),
            ),
        )
    for line in result.skipped[:20]:
        messages.warning(request, f"Left out: {line}")
    if len(result.skipped) > 20:
        messages.warning(request, f"… and {len(result.skipped) - 20} more left out; the board lists them all.")
    week = request.POST.get("week", "")
    back = reverse("frontend:board")
    return redirect(f"{back}?week={week}" if week[:4].isdigit() and len(week) == 10 else back)
