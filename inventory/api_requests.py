"""What the registry's API views read from a request before they call a service: the caller's right to change a
site's registry, the organisation a new site or an import goes into, a list's filters and a CSV kind named in the
address."""

from django.core.exceptions import PermissionDenied
from django.http import Http404
from drf_spectacular.utils import OpenApiParameter
from rest_framework import serializers

from accounts.models import Organisation

from . import csv_io, selectors


def require_manages(*, user, site_id: int) -> None:
    """Refuse (403) a change of a site's registry by anyone but a supervisor or admin of its organisation."""
    if not selectors.sites_managed_by(user=user).filter(pk=site_id).exists():
        raise PermissionDenied("Only a supervisor or admin of the site's organisation may change it.")


def filtered(filterset_class, request, queryset):
    """``queryset`` narrowed by the request's filters; a filter value refused is a 400 naming it."""
    filterset = filterset_class(request.query_params, queryset=queryset, request=request)
    if not filterset.is_valid():
        raise serializers.ValidationError(filterset.errors)
    return filterset.qs


def managed_organisation(*, user, slug: str | None) -> Organisation:
    """The organisation a new site or an import goes into: the named one, or the only one the person manages."""
    orgs = selectors.organisations_managed_by(user=user)
    if slug:
        org = orgs.filter(slug=slug).first()
        if org is None:
            raise PermissionDenied(f"organisation={slug!r} is not an organisation whose registry you manage.")
        return org
    orgs = list(orgs)
    if len(orgs) == 1:
        return orgs[0]
    if not orgs:
        raise PermissionDenied("Only a supervisor or admin may add to the registry.")
    raise serializers.ValidationError(
        {"organisation": [f"you manage several organisations; name one of {', '.join(o.slug for o in orgs)}"]}
    )


KIND_PARAMETER = OpenApiParameter(
    "kind", str, location=OpenApiParameter.PATH, enum=list(csv_io.KINDS), description="what the file holds"
)


def kind_check(kind: str) -> None:
    """A CSV kind named in the address that is not one of the registry's is a 404."""
    if kind not in csv_io.KINDS:
        raise Http404(f"kind={kind!r} is not one of {', '.join(csv_io.KINDS)}")
