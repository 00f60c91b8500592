"""Retiring a unit: the registry change and what it means for the unit's planned work, in one transaction."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.changes import changes_deferred
from accounts.models import User
from inventory.models import AHU
from inventory.services import ahu_retire

from ..models import WorkOrder
from .work_orders import work_order_cancel


@transaction.atomic
def unit_retire(*, ahu: AHU, by: User | None, reason: str = "") -> int:
    """Retire ``ahu`` and cancel its planned and assigned visits; returns how many were cancelled.

    A visit already under way is not cancelled behind the technician's back: the retirement is refused
    until it is finished or cancelled. Completed and verified work, readings, findings and reports stay.
    The engine plans in-service units only, so no new work is made for it.
    """
    started = list(ahu.work_orders.filter(state=WorkOrder.State.IN_PROGRESS).select_for_update())
    if started:
        names = ", ".join(f"{wo.title} (due {wo.due_date:%d %b %Y})" for wo in started)
        raise ValidationError(
            {"work": [f"{ahu.display_name} has a visit under way: {names}; finish or cancel it first, then retire"]}
        )
    why = f"Unit retired{': ' + reason if reason else ''}"[:300]
    open_work = list(ahu.work_orders.filter(state__in=[WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED]))
    # One move of each version for the whole loop, people before the organisation: a move per visit would lock
    # person, organisation, person… and could deadlock against a sync holding them in the documented order.
    with changes_deferred():
        for wo in open_work:
            work_order_cancel(work_order=wo, by=by, reason=why)
    ahu_retire(ahu=ahu, by=by, reason=reason)
    return len(open_work)
