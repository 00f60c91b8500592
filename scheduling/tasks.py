"""Periodic work. Each task takes IDs, calls one service and is safe to run twice."""

from __future__ import annotations

import datetime as dt

from celery import shared_task
from django.db import OperationalError

from accounts.models import Organisation
from inventory.models import Site
from inventory.today import today_for

RETRY = {
    "acks_late": True,
    "autoretry_for": (OperationalError, ConnectionError),
    "retry_backoff": 30,
    "retry_backoff_max": 900,
    "retry_jitter": True,
    "max_retries": 5,
}


def _today(today: str | None) -> dt.date | None:
    return dt.date.fromisoformat(today) if today else None


@shared_task(name="scheduling.work_orders_generate", **RETRY)
def work_orders_generate(organisation_id: int, horizon_days: int = 90, today: str | None = None) -> dict:
    from .engine import work_orders_generate as generate

    result = generate(
        organisation=Organisation.objects.get(pk=organisation_id), today=_today(today), horizon_days=horizon_days
    )
    return {
        "created": result.created,
        "moved": result.moved,
        "unchanged": result.unchanged,
        "skipped": result.skipped,
    }


@shared_task(name="scheduling.site_seasons_refresh", **RETRY)
def site_seasons_refresh(site_id: int, today: str | None = None) -> dict:
    from .services import site_seasons_refresh as refresh

    site = Site.objects.get(pk=site_id)
    site = refresh(site=site, today=_today(today) or today_for(site))
    return {"freeze_season_start": str(site.freeze_season_start), "source": site.season_source}


@shared_task(name="scheduling.overdue_escalation_send", **RETRY)
def overdue_escalation_send(organisation_id: int, today: str | None = None) -> int:
    from .services import overdue_escalation_send as send

    organisation = Organisation.objects.get(pk=organisation_id)
    return send(organisation=organisation, today=_today(today) or today_for(organisation))


# Fan-out tasks for the beat schedule: one small task per organisation or site.
@shared_task(name="scheduling.nightly_generation", acks_late=True)
def nightly_generation() -> int:
    ids = list(Organisation.objects.values_list("pk", flat=True))
    for pk in ids:
        work_orders_generate.delay(pk)
    return len(ids)


@shared_task(name="scheduling.nightly_seasons", acks_late=True)
def nightly_seasons() -> int:
    ids = list(Site.objects.values_list("pk", flat=True))
    for pk in ids:
        site_seasons_refresh.delay(pk)
    return len(ids)


@shared_task(name="scheduling.daily_escalation", acks_late=True)
def daily_escalation() -> int:
    ids = list(Organisation.objects.values_list("pk", flat=True))
    for pk in ids:
        overdue_escalation_send.delay(pk)
    return len(ids)
