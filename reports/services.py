"""Writes: ask for a report, render it. Rendering runs in a Celery task (in-process without a broker)."""

from __future__ import annotations

import logging
from typing import Any

from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction
from django.utils import timezone

from accounts.models import User

from .documents import registry
from .models import Report
from .rendering import pdf_render

logger = logging.getLogger(__name__)

# Archival PDF/A is offered where the record is kept for years (a unit's history by its insurer too).
PDFA_KINDS = {Report.Kind.INSPECTION, Report.Kind.COMPLIANCE, Report.Kind.UNIT_HISTORY}


@transaction.atomic
def report_request(*, user: User, kind: str, parameters: dict[str, Any] | None = None, pdfa: bool = False) -> Report:
    """Check the inputs against what ``user`` may see, store the request and queue its rendering.

    Every site, unit, component and work order named in ``parameters`` must be
    visible to ``user`` (``inventory.selectors``); one that is not — another
    organisation's site, say — raises ``Http404`` naming it. Bad inputs raise
    ``ValidationError`` naming the field. The render task is queued after commit. The same request made again
    while the first is still waiting or being made returns that report (``repeated`` set), not a second row.
    """
    documents = registry()
    if kind not in documents:
        raise ValidationError({"kind": f"kind={kind!r}: allowed are {', '.join(sorted(documents))}"})
    if not isinstance(parameters, dict | None):
        raise ValidationError({"parameters": "parameters must be an object"})
    if pdfa and kind not in PDFA_KINDS:
        raise ValidationError(
            {"pdfa": f"PDF/A is offered for {', '.join(sorted(PDFA_KINDS))} reports, not for kind={kind!r}"}
        )
    requested_at = timezone.now().replace(microsecond=0)
    prepared = documents[kind].prepare(user=user, parameters=dict(parameters or {}), requested_at=requested_at)
    same = _same_request(user=user, kind=kind, parameters=prepared.parameters, pdfa=pdfa)
    if same is not None:
        same.repeated = True
        return same
    report = Report.objects.create(
        organisation_id=prepared.organisation_id,
        kind=kind,
        parameters=prepared.parameters,
        site_ids=prepared.site_ids,
        requested_by=user,
        pdfa=pdfa,
        created_at=requested_at,
    )
    report_id = report.pk
    transaction.on_commit(lambda: _enqueue(report_id))
    return report


def _same_request(*, user: User, kind: str, parameters: dict[str, Any], pdfa: bool) -> Report | None:
    """The person's identical request (kind, checked parameters, PDF/A) still waiting or being made: asking
    twice gives one report, not two rows of the same record. A finished one is not reused (the records may
    have changed since); the pages also send a form only once per tap (app.js)."""
    waiting = (
        Report.objects.select_for_update()
        .filter(requested_by=user, kind=kind, pdfa=pdfa, status__in=[Report.Status.QUEUED, Report.Status.RUNNING])
        .order_by("-created_at")
    )
    return next((r for r in waiting if r.parameters == parameters), None)


def _enqueue(report_id: int) -> None:
    from .tasks import report_render as report_render_task

    report_render_task.delay(report_id)


def report_render(*, report_id: int) -> Report:
    """Render a queued report and store the PDF with its checksum. Idempotent: a done report is left alone.

    A failure is recorded on the report (status ``failed`` and the error) rather than lost.
    """
    with transaction.atomic():
        report = Report.objects.select_for_update().get(pk=report_id)
        if report.status == Report.Status.DONE:
            return report
        report.status = Report.Status.RUNNING
        report.error = ""
        report.save(update_fields=["status", "error"])
    try:
        built = registry()[report.kind].build(report=report)
        pdf = pdf_render(html=built.html, identifier=f"{report.kind}:{report.public_id}", pdfa=report.pdfa)
    except Exception as exc:  # a render failure of any kind must end up on the report, not vanish in a worker
        logger.exception("report %s failed to render", report.public_id)
        report.status = Report.Status.FAILED
        report.error = f"{type(exc).__name__}: {exc}"[:2000]
        report.finished_at = timezone.now()
        report.save(update_fields=["status", "error", "finished_at"])
        return report
    with transaction.atomic():
        if report.file:
            report.file.delete(save=False)
        report.file.save(report.filename, ContentFile(pdf.content), save=False)
        report.sha256 = pdf.sha256
        report.size_bytes = len(pdf.content)
        report.page_count = pdf.page_count
        report.status = Report.Status.DONE
        report.finished_at = timezone.now()
        report.save(update_fields=["file", "sha256", "size_bytes", "page_count", "status", "finished_at"])
    return report
