"""Celery tasks of the trend judging: take ids and days, call the service of the same name; safe to run twice.

Imported by ``AutomationConfig.ready`` so the worker registers them (``automation.tasks`` holds the import and
polling tasks)."""

import datetime as dt

from celery import shared_task
from django.db import OperationalError

RETRY = {
    "acks_late": True,
    "autoretry_for": (OperationalError, ConnectionError),
    "retry_backoff": 30,
    "retry_backoff_max": 900,
    "retry_jitter": True,
    "max_retries": 5,
}


@shared_task(name="automation.trends_judge_nightly", **RETRY)
def trends_judge_nightly() -> int:
    """Queue yesterday's judging for every site with mapped points; returns how many sites."""
    from .judging import sites_with_points

    ids = sites_with_points()
    for site_id in ids:
        trends_judge_yesterday.delay(site_id)
    return len(ids)


@shared_task(name="automation.trends_judge_yesterday", **RETRY)
def trends_judge_yesterday(site_id: int) -> int:
    """Judge the site's local yesterday; returns the number of faults opened."""
    from inventory.models import Site

    from .judging import trends_judge_yesterday as judge

    site = Site.objects.filter(pk=site_id).first()
    if site is None:
        return 0
    return len(judge(site=site).opened)


@shared_task(name="automation.trends_judge", **RETRY)
def trends_judge(site_id: int, start: str, end: str) -> int:
    """Judge the site's local days ``start``–``end`` (ISO dates); returns the number of faults opened."""
    from inventory.models import Site

    from .judging import trends_judge as judge

    site = Site.objects.get(pk=site_id)
    return len(judge(site=site, start=dt.date.fromisoformat(start), end=dt.date.fromisoformat(end)).opened)
