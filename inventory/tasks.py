"""Celery tasks: take an id, call the service of the same name."""

from celery import shared_task

from . import import_jobs


@shared_task(name="inventory.import_job_run", acks_late=True)
def import_job_run(job_id: int) -> str:
    return import_jobs.import_job_run(job_id=job_id).status
