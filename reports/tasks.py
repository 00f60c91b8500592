"""Celery tasks: take an id, call the service of the same name."""

from celery import shared_task

from . import services


@shared_task(name="reports.report_render", acks_late=True)
def report_render(report_id: int) -> str:
    report = services.report_render(report_id=report_id)
    return report.status
