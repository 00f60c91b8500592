"""Reads of the registry. ``sites_visible_to`` is THE tenancy rule.

Every view, API endpoint, report and feed gets its sites, units and
components through these selectors, never through a bare ``objects.all()``.
"""

import datetime as dt

from django.conf import settings
from django.db.models import Q, QuerySet
from django.http import Http404
from django.utils import timezone

from accounts.models import Organisation, Role, SiteGrant, User
from accounts.selectors import MANAGING_ROLES

from .models import AHU, Building, Component, ImportJob, Site


def _roles_by_org(user: User) -> dict[str, set[int]]:
    by_role: dict[str, set[int]] = {}
    for org_id, role in user.memberships.values_list("organisation_id", "role"):
        by_role.setdefault(role, set()).add(org_id)
    return by_role


def technician_site_window() -> dt.timedelta:
    """How long finished work keeps a site visible to the technician who did it (``PLENUM_TECHNICIAN_SITE_DAYS``)."""
    return dt.timedelta(days=settings.PLENUM_TECHNICIAN_SITE_DAYS)


# Work-order states by their stored values: the work-order model lives above this app (scheduling), and
# reverse lookups by name keep the import arrow pointing downwards.
_OPEN_WORK = ("planned", "assigned", "in_progress")
_DONE_WORK = ("completed", "verified")


def sites_visible_to(*, user: User, now: dt.datetime | None = None) -> QuerySet[Site]:
    """Sites a person may see.

    - supervisor or admin: every site of their organisation;
    - property manager: only the sites granted to them, inside their organisation;
    - technician: the sites where they have open work assigned, or work they finished within the last
      ``PLENUM_TECHNICIAN_SITE_DAYS`` days; older assignments no longer grant the site. On those sites
      they see colleagues' work too (the unit's history matters on the job);
    - nobody sees a site of an organisation they are not a member of.
    """
    if not getattr(user, "is_authenticated", False):
        return Site.objects.none()
    by_role = _roles_by_org(user)
    condition = Q(pk__in=[])
    managed = set().union(*(by_role.get(r, set()) for r in MANAGING_ROLES))
    if managed:
        condition |= Q(organisation_id__in=managed)
    if Role.PROPERTY_MANAGER in by_role:
        granted = SiteGrant.objects.filter(user=user, site__organisation_id__in=by_role[Role.PROPERTY_MANAGER]).values(
            "site_id"
        )
        condition |= Q(pk__in=granted)
    if Role.TECHNICIAN in by_role:
        since = (now or timezone.now()) - technician_site_window()
        work = "buildings__ahus__work_orders__"
        # Finished work counts from its last change on the server (the phone's clock is never trusted).
        recent = Q(**{f"{work}state__in": _OPEN_WORK}) | Q(
            **{f"{work}state__in": _DONE_WORK, f"{work}updated_at__gte": since}
        )
        assigned = Site.objects.filter(
            Q(organisation_id__in=by_role[Role.TECHNICIAN], **{f"{work}assignee": user}) & recent
        ).values("pk")
        condition |= Q(pk__in=assigned)
    return Site.objects.filter(condition)


def site_is_visible(*, user: User, site_id: int) -> bool:
    return sites_visible_to(user=user).filter(pk=site_id).exists()


def sites_managed_by(*, user: User) -> QuerySet[Site]:
    """Sites whose registry and work the person may change (supervisor/admin)."""
    if not getattr(user, "is_authenticated", False):
        return Site.objects.none()
    orgs = user.memberships.filter(role__in=MANAGING_ROLES).values("organisation_id")
    return Site.objects.filter(organisation_id__in=orgs)


def organisations_managed_by(*, user: User) -> QuerySet[Organisation]:
    """Organisations whose registry the person may change, import and export (supervisor/admin)."""
    if not getattr(user, "is_authenticated", False):
        return Organisation.objects.none()
    return Organisation.objects.filter(memberships__user=user, memberships__role__in=MANAGING_ROLES).distinct()


def import_job_for(*, user: User, public_id) -> ImportJob:
    """A registry import job of an organisation the person manages; any other (or none) is not found."""
    job = ImportJob.objects.filter(
        public_id=public_id, organisation__in=organisations_managed_by(user=user).values("pk")
    ).first()
    if job is None:
        raise Http404("No such import job, or not one you may see.")
    return job


def buildings_visible_to(*, user: User) -> QuerySet[Building]:
    return Building.objects.filter(site__in=sites_visible_to(user=user)).select_related("site")


def ahus_visible_to(*, user: User) -> QuerySet[AHU]:
    return AHU.objects.filter(building__site__in=sites_visible_to(user=user)).select_related("building__site")


def components_visible_to(*, user: User) -> QuerySet[Component]:
    return Component.objects.filter(ahu__building__site__in=sites_visible_to(user=user)).select_related(
        "ahu__building__site"
    )


def component_tree(*, ahu: AHU) -> list[dict]:
    """The unit's components as nested dicts in airstream order, in two queries at most."""
    nodes = list(ahu.components.all().order_by("position", "id"))
    by_parent: dict[int | None, list[Component]] = {}
    for node in nodes:
        by_parent.setdefault(node.parent_id, []).append(node)

    def build(parent_id):
        return [{"component": n, "children": build(n.pk)} for n in by_parent.get(parent_id, [])]

    return build(None)


def label_lookup(*, user: User, code: str) -> AHU | Component | None:
    """The visible unit or component behind a label code, or None."""
    code = code.strip().upper()
    if code.startswith("U"):
        return ahus_visible_to(user=user).filter(label_code=code).first()
    if code.startswith("C"):
        return components_visible_to(user=user).filter(label_code=code).first()
    return None


def unit_has_component(*, ahu: AHU, kind: str, **spec_filters) -> bool:
    for comp in ahu.components.all():
        if comp.kind == kind and all(comp.specs.get(k) == v for k, v in spec_filters.items()):
            return True
    return False
