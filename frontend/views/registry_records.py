"""The registry records a page names in its address: one the person manages → the record; one they only see →
403 with the reason; any other → 404."""

from __future__ import annotations

from django.core.exceptions import PermissionDenied
from django.http import Http404

from inventory.models import Building, Component, Site
from inventory.selectors import components_visible_to, sites_managed_by, sites_visible_to

from .staff import managed_ahus

REFUSED = "Only a supervisor or administrator of the organisation may change the registry."


# ---------------------------------------------------------------------------
# Records named in the address: managed → the record; visible only → 403; otherwise → 404.
# ---------------------------------------------------------------------------
def managed_site(request, pk) -> Site:
    site = sites_managed_by(user=request.user).filter(pk=pk).first()
    if site is None:
        if sites_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such site that you manage.")
    return site


def managed_buildings(request):
    return Building.objects.filter(site__in=sites_managed_by(user=request.user)).select_related("site")


def managed_building(request, pk) -> Building:
    building = managed_buildings(request).filter(pk=pk).first()
    if building is None:
        if Building.objects.filter(site__in=sites_visible_to(user=request.user), pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such building that you manage.")
    return building


def managed_component(request, pk) -> Component:
    component = Component.objects.filter(ahu__in=managed_ahus(request), pk=pk).select_related("ahu__building").first()
    if component is None:
        if components_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such component that you manage.")
    return component
