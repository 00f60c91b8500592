"""Plan the organisation's preventive work now, from the board: the due-date engine run on demand.

Beat runs it every night where a worker runs; a contractor who has just added a customer's units or changed a
rule wants the visits at once, without a command line.
"""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.shortcuts import redirect
from django.urls import reverse
from django.views.decorators.http import require_POST

from scheduling.engine import work_orders_generate

from .supervisor import _organisation

PLAN_DAYS = 90


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


@login_required
@require_POST
def plan_now(request):
    organisation = _organisation(request)
    result = work_orders_generate(organisation=organisation, horizon_days=PLAN_DAYS)
    messages.success(request, plan_words(result))
    for line in result.skipped[:20]:
        messages.warning(request, f"Left out: {line}")
    if len(result.skipped) > 20:
        messages.warning(request, f"… and {len(result.skipped) - 20} more left out; the board lists them all.")
    week = request.POST.get("week", "")
    back = reverse("frontend:board")
    return redirect(f"{back}?week={week}" if week[:4].isdigit() and len(week) == 10 else back)
