"""Who may see and change inspections, findings, photos and the work they belong to: the access functions.

Tenancy always goes through inventory.selectors; one record named in a URL or a body comes through its access
function (``inspection_for``, ``finding_for``, ``photo_for``), which raises Http404 or PermissionDenied.
"""

from __future__ import annotations

from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import QuerySet
from django.http import Http404

from accounts.models import User
from accounts.selectors import FIELD_ROLES
from inventory.selectors import sites_managed_by, sites_visible_to
from scheduling.models import WorkOrder
from scheduling.selectors import work_order_for
from scheduling.selectors import work_orders_visible_to as scheduling_work_orders_visible_to

from ..models import Finding, Inspection, Photo

SUBMITTING_ROLES = FIELD_ROLES


def work_orders_visible_to(*, user: User) -> QuerySet[WorkOrder]:
    """The one visibility rule of work orders (``scheduling.selectors.work_orders_visible_to``)."""
    return scheduling_work_orders_visible_to(user=user)


def was_assigned_to(*, user: User, work_order: WorkOrder) -> bool:
    """Whether the work order is, or ever was, assigned to the person: the current assignee, or named as the
    one it was assigned to or taken from in its audit trail (``work_order_assign`` records both)."""
    if work_order.assignee_id == user.pk:
        return True
    from accounts.models import AuditEvent

    events = AuditEvent.objects.filter(
        object_type=WorkOrder._meta.label_lower, object_id=str(work_order.pk), action="assign"
    ).values_list("changes", flat=True)
    return any(isinstance(c, dict) and user.pk in (c.get("from"), c.get("to")) for c in events)


def work_order_for_sync(*, user: User, public_id) -> WorkOrder | None:
    """The work order a form or photo names, if the sender may add to it; else None (an unknown work order).

    The read rule first (``scheduling.selectors.work_order_for``): what the person sees, they may send for.
    One exception, wider on purpose: a work order that was assigned to this person and since reassigned or
    cancelled no longer grants them its site, but their finished form must still be stored (and flagged),
    never dropped. Any other work order of the organisation (another site's, never theirs) is unknown to
    them, with the same answer as one that does not exist. Only people who do the work (not property
    managers) send, see :func:`work_order_for_field_work`.
    """
    orgs = user.memberships.filter(role__in=SUBMITTING_ROLES).values("organisation_id")
    try:
        wo = (
            WorkOrder.objects.filter(public_id=public_id, organisation_id__in=orgs)
            .select_related("ahu__building__site", "assignee")
            .first()
        )
    except (ValueError, TypeError, ValidationError):
        return None  # not a UUID: the same answer as an unknown one
    if wo is None:
        return None
    try:
        work_order_for(user=user, public_id=wo.public_id)
    except Http404:
        if not was_assigned_to(user=user, work_order=wo):
            return None
    return wo


def work_orders_for_sync(*, user: User, public_ids) -> dict:
    """``work_order_for_sync`` for every work order of a batch at once: {public id: work order} of those the
    sender may add to (the same rule, word for word); the others are left out, as unknown ones.

    A fixed number of queries whatever the batch's size: the candidates of the sender's organisations with
    their unit, site, assignee, tasks and the unit's components, then which of them the sender sees. Only a
    work order the sender does not see asks its own question (was it ever theirs)."""
    ids = set(public_ids)
    if not ids:
        return {}
    orgs = user.memberships.filter(role__in=SUBMITTING_ROLES).values("organisation_id")
    rows = list(
        WorkOrder.objects.filter(public_id__in=ids, organisation_id__in=orgs)
        .select_related("ahu__building__site__organisation", "assignee")  # the organisation: for proposed work
        .prefetch_related("tasks", "ahu__components")
    )
    if not rows:
        return {}
    seen = set(
        work_orders_visible_to(user=user)
        .prefetch_related(None)
        .filter(pk__in=[wo.pk for wo in rows])
        .values_list("pk", flat=True)
    )
    return {wo.public_id: wo for wo in rows if wo.pk in seen or was_assigned_to(user=user, work_order=wo)}


def does_field_work_anywhere(*, user: User) -> bool:
    """Whether the person sends forms and photos for any organisation (property managers only read)."""
    return getattr(user, "is_authenticated", False) and user.memberships.filter(role__in=FIELD_ROLES).exists()


def submission_allowed(*, user: User, work_order: WorkOrder) -> bool:
    """Whether the person fills forms for the work order's organisation (property managers only read)."""
    return user.memberships.filter(role__in=SUBMITTING_ROLES, organisation_id=work_order.organisation_id).exists()


def amendment_allowed(*, user: User, inspection: Inspection) -> bool:
    """The technician who signed the inspection, or a supervisor of its site, may amend it."""
    if user.pk == inspection.technician_id:
        return True
    return sites_managed_by(user=user).filter(pk=inspection.ahu.building.site_id).exists()


def inspection_status(*, inspection: Inspection) -> str:
    """What a stored form is now: "verified", "flagged" while a flag is unresolved, else "stored".

    The sync answer keeps the status the phone was first given; this is the status today.
    """
    if inspection.verified_at is not None:
        return "verified"
    if inspection.flag_open:
        return "flagged"
    return "stored"


def inspections_visible_to(*, user: User) -> QuerySet[Inspection]:
    """Inspections on the sites the person sees: the rule of their work orders, so a work order, its forms,
    photos and reports are seen together or not at all."""
    return Inspection.objects.filter(ahu__building__site__in=sites_visible_to(user=user)).select_related(
        "ahu__building__site", "work_order", "technician"
    )


def inspection_for(*, user: User, pk, write: bool = False, queryset: QuerySet[Inspection] | None = None) -> Inspection:
    """THE access function of a stored form: ``Http404`` when the person may not see it, and with ``write``
    (verify, resolve a flag) ``PermissionDenied`` unless they supervise its site. Amending has its own rule
    (the signer too): :func:`amendment_allowed`."""
    qs = queryset if queryset is not None else Inspection.objects.all()
    try:
        inspection = qs.filter(pk__in=inspections_visible_to(user=user).values("pk")).filter(pk=pk).first()
    except (ValueError, TypeError, ValidationError):
        inspection = None
    if inspection is None:
        raise Http404("No such inspection that you may see.")
    if write and not sites_managed_by(user=user).filter(pk=inspection.ahu.building.site_id).exists():
        raise PermissionDenied("Only a supervisor or admin of the site's organisation may do this to a signed form.")
    return inspection


def flagged_forms_for(*, user: User) -> QuerySet[Inspection]:
    """Flagged inspections not yet resolved, on the sites the person supervises."""
    return (
        Inspection.objects.filter(ahu__building__site__in=sites_managed_by(user=user), flag_resolved_at__isnull=True)
        .exclude(flags=[])
        .select_related("ahu__building__site", "work_order", "technician")
        .order_by("received_at", "id")
    )


def findings_visible_to(*, user: User) -> QuerySet[Finding]:
    """Findings on the units of the sites the person sees (the same sites as their work orders)."""
    return Finding.objects.filter(ahu__building__site__in=sites_visible_to(user=user)).select_related(
        "ahu__building__site", "component", "corrective_work_order", "inspection"
    )


def finding_for(*, user: User, pk, write: bool = False) -> Finding:
    """THE access function of a finding: ``Http404`` when not visible; with ``write``, ``PermissionDenied``
    unless the person supervises its site."""
    try:
        finding = findings_visible_to(user=user).filter(pk=pk).first()
    except (ValueError, TypeError, ValidationError):
        finding = None
    if finding is None:
        raise Http404("No such finding that you may see.")
    if write and not sites_managed_by(user=user).filter(pk=finding.ahu.building.site_id).exists():
        raise PermissionDenied("Only a supervisor or admin of the site's organisation may change a finding.")
    return finding


def photo_visible_to(*, user: User, client_uuid) -> Photo | None:
    """The photo if the person sees its work order, else None (see :func:`photo_for`)."""
    try:
        return Photo.objects.filter(
            client_uuid=client_uuid, work_order__ahu__building__site__in=sites_visible_to(user=user)
        ).first()
    except (ValueError, ValidationError):
        return None


def photo_for(*, user: User, client_uuid) -> Photo:
    """THE access function of a photo: visible exactly when its work order is; ``Http404`` otherwise."""
    photo = photo_visible_to(user=user, client_uuid=client_uuid)
    if photo is None:
        raise Http404("No such photo that you may see.")
    return photo


def work_order_for_field_work(*, user: User, public_id) -> WorkOrder:
    """The work order a photo or form is sent for (:func:`work_order_for_sync`): ``Http404`` as
    ``scheduling.selectors.work_order_for`` answers an unknown one when the sender may not add to it and
    cannot see it; ``PermissionDenied`` when they see it but only read (a property manager)."""
    wo = work_order_for_sync(user=user, public_id=public_id)
    if wo is not None:
        return wo
    work_order_for(user=user, public_id=public_id)  # Http404 when not visible either
    raise PermissionDenied("Property managers read work orders; only technicians, supervisors and admins add to them.")
