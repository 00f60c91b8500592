"""The technician's "Start visit" on a work order's page: the visit moves from assigned to in progress
(``scheduling.services.work_order_start``, the move the API's transition makes for the technician's own work) before
the form is sent. It needs the server: offline the phone hides the button and says so (checklist.js); the form sent
later marks the visit started and done on its own.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.shortcuts import redirect
from django.views.decorators.http import require_POST

from inventory.display import site_time_text
from scheduling.models import WorkOrder
from scheduling.selectors import work_order_for
from scheduling.services import WorkOrderConflict, work_order_start

from .staff import changed_meanwhile, version_seen


def may_start(*, work_order: WorkOrder, user) -> bool:
    """Whether the page offers "Start visit": the technician's own assigned visit, not yet started."""
    return work_order.state == WorkOrder.State.ASSIGNED and work_order.assignee_id == user.pk


@login_required
@require_POST
def start_visit(request, public_id):
    wo = work_order_for(user=request.user, public_id=public_id)
    if wo.assignee_id != request.user.pk:
        raise PermissionDenied("Only the technician the visit is assigned to starts it.")
    if not may_start(work_order=wo, user=request.user):
        messages.error(
            request,
            f"{wo.ahu.display_name} — {wo.title} is {wo.get_state_display().lower()}: only an assigned visit not yet "
            "started can be started.",
        )
        return redirect("frontend:checklist", public_id=wo.public_id)
    try:
        seen = version_seen(work_order=wo, raw=request.POST.get("version"))
        work_order_start(work_order=wo, by=request.user, expected_version=seen)
    except WorkOrderConflict:
        messages.error(request, changed_meanwhile(wo))
    except ValidationError as exc:
        messages.error(request, f"{wo.ahu.display_name} — {wo.title}: {' '.join(exc.messages)}")
    else:
        when = site_time_text(wo.started_at, wo.ahu.building.site)
        messages.success(request, f"{wo.ahu.display_name} — {wo.title}: visit started {when}.")
    return redirect("frontend:checklist", public_id=wo.public_id)
