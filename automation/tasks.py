"""Celery tasks: take an id, call the service of the same name; safe to run twice."""

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


@shared_task(name="automation.trend_purge", **RETRY)
def trend_purge() -> int:
    from .trends import trend_purge as purge

    return purge()


@shared_task(name="automation.trend_import_job_run", acks_late=True)
def trend_import_job_run(job_id: int) -> str:
    from .trends import trend_import_job_run as run

    return run(job_id=job_id).status


# No retry: the next beat (a minute later) polls whatever is due again.
@shared_task(name="automation.bacnet_poll")
def bacnet_poll(site_id: int | None = None) -> dict[str, int | bool]:
    from .polling import bacnet_poll as poll

    result = poll(site_id=site_id)
    return {
        "off": result.off,
        "devices": result.devices,
        "silent": result.silent,
        "values": result.values,
        "stale": len(result.stale),
    }
