"""What the staff pages share: the organisation a supervisor or administrator manages, its technicians, the units
of its registry, and the check that a work order is still as the page read it.

Pages of the supervisor's desk (``board``, ``supervisor``), the registry, the rules, the planning and the work beyond
the plan reach these through their public names.
"""

from django.core.exceptions import PermissionDenied
from django.http import Http404

from accounts.inputs import INT32_MAX, FieldErrors, check_integer
from accounts.selectors import MANAGING_ROLES, organisations_where, technicians_of
from inventory.models import AHU
from inventory.selectors import ahus_visible_to, sites_managed_by
from scheduling.models import WorkOrder
from scheduling.services.work_orders import WorkOrderConflict


def managed_organisation(request):
    org = organisations_where(user=request.user, roles=MANAGING_ROLES).order_by("pk").first()
    if org is None:
        raise PermissionDenied("Only a supervisor or administrator may open this page.")
    return org


def organisation_technicians(org):
    return technicians_of(organisation=org)


def version_seen(*, work_order: WorkOrder, raw) -> int:
    """The work order's version the page was read at (its hidden ``version`` field).

    A missing or unreadable one ('', 'x', '1.0', '1e309') is refused like a stale one (WorkOrderConflict),
    never read as "skip the check": a page form holds the same line as the API's 409."""
    version = check_integer(raw, key="version", label="Version", errors=FieldErrors(), minimum=1, maximum=INT32_MAX)
    if version is None:
        raise WorkOrderConflict(work_order=work_order, expected_version=0)
    return version


def changed_meanwhile(wo) -> str:
    return f"{wo.ahu.display_name} — {wo.title}: someone changed it meanwhile; here it is as it is now."


def still_as_read(*, work_order: WorkOrder, version: int) -> None:
    """Lock the work order's row; WorkOrderConflict when it moved on since the page read it (for changes the
    work order services do not check themselves, such as verifying its form)."""
    fresh = WorkOrder.objects.select_for_update(of=("self",)).get(pk=work_order.pk)
    if fresh.version != version:
        raise WorkOrderConflict(work_order=fresh, expected_version=version)


def managed_ahus(request):
    return AHU.objects.filter(building__site__in=sites_managed_by(user=request.user)).select_related("building__site")


def managed_ahu(request, pk):
    """A unit of the registry: 404 when the person may not see it, 403 when they see it but do not manage it."""
    ahu = managed_ahus(request).filter(pk=pk).first()
    if ahu is None:
        if ahus_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied("Only a supervisor or administrator of the organisation may change the registry.")
        raise Http404("No such unit that you manage.")
    return ahu
