"""Reads of the point map; every list starts from ``inventory.selectors.sites_visible_to`` (the tenancy rule)."""

from __future__ import annotations

from django.core.exceptions import PermissionDenied
from django.db.models import QuerySet
from django.http import Http404

from accounts.models import User
from inventory.models import Site
from inventory.selectors import sites_managed_by, sites_visible_to

from .models import Point, TrendDay, TrendImportJob


def points_visible_to(*, user: User, site: Site | None = None, ahu_id: int | None = None) -> QuerySet[Point]:
    """Points of the units on the sites the person may see (optionally one site or one unit)."""
    points = Point.objects.filter(ahu__building__site__in=sites_visible_to(user=user))
    if site is not None:
        points = points.filter(ahu__building__site=site)
    if ahu_id is not None:
        points = points.filter(ahu_id=ahu_id)
    return points.select_related("ahu__building__site", "component").order_by(
        "ahu__building__site__name", "ahu__tag", "name"
    )


def point_for(*, user: User, id: int, write: bool = False) -> Point:
    """One point: ``Http404`` if the person may not see it, ``PermissionDenied`` if they may see but not change it."""
    point = points_visible_to(user=user).filter(pk=id).first()
    if point is None:
        raise Http404("No such point, or not one you may see.")
    if write and not sites_managed_by(user=user).filter(pk=point.ahu.building.site_id).exists():
        raise PermissionDenied("Only a supervisor or administrator of the organisation may change its points.")
    return point


def site_for(*, user: User, id: int, write: bool = False) -> Site:
    """A site for the point map and trends: not found unless visible; forbidden to change unless managed."""
    site = sites_visible_to(user=user).filter(pk=id).first()
    if site is None:
        raise Http404("No such site, or not one you may see.")
    if write and not sites_managed_by(user=user).filter(pk=site.pk).exists():
        raise PermissionDenied("Only a supervisor or administrator of the organisation may change this site.")
    return site


def trend_days_for(*, point: Point, since=None, until=None) -> QuerySet[TrendDay]:
    """A point's day buckets in time order (the point already came through ``point_for``)."""
    days = TrendDay.objects.filter(point=point)
    if since is not None:
        days = days.filter(day__gte=since)
    if until is not None:
        days = days.filter(day__lte=until)
    return days.order_by("day")


def trend_import_job_for(*, user: User, public_id) -> TrendImportJob:
    """A trend import job on a site the person manages; any other (or none) is not found."""
    job = TrendImportJob.objects.filter(public_id=public_id, site__in=sites_managed_by(user=user)).first()
    if job is None:
        raise Http404("No such trend import job, or not one you may see.")
    return job


def trend_import_jobs_for(*, user: User, site: Site, limit: int = 10) -> list[TrendImportJob]:
    """A managed site's latest trend import jobs, newest first (what the point map page shows of them)."""
    return list(TrendImportJob.objects.filter(site=site, site__in=sites_managed_by(user=user)).defer("source")[:limit])
