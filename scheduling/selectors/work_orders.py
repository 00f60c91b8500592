"""Which work orders a person sees or manages, one work order by its id, and what the other reads share (a plan's
window, a person's shape).
"""

from __future__ import annotations

import datetime as dt

from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import Prefetch, Q, QuerySet
from django.http import Http404

from accounts.models import Membership
from accounts.selectors import MANAGING_ROLES
from inventory.selectors import sites_visible_to

from .. import shapes
from ..models import WorkOrder, WorkOrderTask


def _work_order_base() -> QuerySet[WorkOrder]:
    return WorkOrder.objects.select_related("ahu__building__site", "assignee", "component").prefetch_related(
        Prefetch("tasks", queryset=WorkOrderTask.objects.select_related("task", "component"))
    )


def work_orders_visible_to(*, user) -> QuerySet[WorkOrder]:
    """Work orders a person may see: every work order on the sites they see (``sites_visible_to``).

    A technician sees colleagues' work on the sites where they work: the unit's history matters on the job.
    """
    if not getattr(user, "is_authenticated", False):
        return WorkOrder.objects.none()
    return _work_order_base().filter(ahu__building__site__in=sites_visible_to(user=user))


def work_orders_managed_by(*, user) -> QuerySet[WorkOrder]:
    """Work orders the person may assign, approve, verify and cancel (supervisor/admin of the organisation)."""
    orgs = Membership.objects.filter(user=user, role__in=MANAGING_ROLES).values("organisation_id")
    return _work_order_base().filter(organisation_id__in=orgs)


def work_order_for(*, user, public_id, write: bool = False) -> WorkOrder:
    """THE access function of a work order (as Zulip's ``access_message``): every page, API route, report and
    feed that names one work order gets it here.

    Raises ``Http404`` when the person may not see it (another organisation's, a site they do not see, a
    malformed id: one answer, so ids do not leak) and, with ``write``, ``PermissionDenied`` when they may see
    it but not change it (only a supervisor or admin of its organisation may).
    """
    try:
        wo = work_orders_visible_to(user=user).filter(public_id=public_id).first()
    except (ValueError, ValidationError):
        wo = None
    if wo is None:
        raise Http404("No such work order that you may see.")
    if write and not work_orders_managed_by(user=user).filter(pk=wo.pk).exists():
        raise PermissionDenied("Only a supervisor or admin of the organisation may change this work order.")
    return wo


def planned_within(start: dt.date, end: dt.date) -> Q:
    """Work whose day is in [start, end): the day it is planned for, else (no plan) the day it is due."""
    return Q(scheduled_for__gte=start, scheduled_for__lt=end) | Q(
        scheduled_for__isnull=True, due_date__gte=start, due_date__lt=end
    )


def person_of(user) -> dict | None:
    if user is None:
        return None
    return shapes.person_ref(id=user.pk, username=user.username, first_name=user.first_name, last_name=user.last_name)
