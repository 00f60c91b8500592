"""Registry CSV imports in the background: start a job, run it (a Celery task), read its progress.

A file of ``BACKGROUND_ROWS`` rows or more is not imported inside the request (a web
worker is killed after its timeout, 30 s by default in gunicorn) but stored as an
``ImportJob`` and imported by a Celery task: in a worker when a broker is configured,
in-process after the request's commit when none is (as report rendering runs). The job
is as strict as the import in the request: every bad row is listed and then nothing is
imported. The job's outcome is written in the same transaction as the rows it imported,
so a worker killed mid-way leaves nothing half-made and the redelivered task runs it again.
"""

from __future__ import annotations

import io
import logging

from django.db import transaction
from django.utils import timezone

from accounts.models import Organisation, User

from . import csv_io
from .models import ImportJob

logger = logging.getLogger(__name__)

BACKGROUND_ROWS = 10_000
FINISHED = {ImportJob.Status.DONE, ImportJob.Status.REFUSED, ImportJob.Status.FAILED}


def import_runs_in_background(*, text: str) -> bool:
    """Whether a file this long goes to a background job rather than the request."""
    return csv_io.data_rows(text, at_most=BACKGROUND_ROWS) >= BACKGROUND_ROWS


@transaction.atomic
def import_job_create(
    *, organisation: Organisation, kind: str, text: str, by: User | None, dry_run: bool = False, file_name: str = ""
) -> ImportJob:
    """Store the file as a queued job for ``organisation`` and queue its run after commit.

    ``by`` must manage ``organisation`` (the caller checks); ``kind`` is one of ``csv_io.KINDS``.
    A file with NUL or other control characters in its cells raises ``csv_io.ImportFailed`` at once
    (naming each cell), since the database may not store such text.
    """
    if kind not in csv_io.KINDS:
        raise ValueError(f"kind={kind!r} is not one of {', '.join(csv_io.KINDS)}")
    refused = csv_io.control_character_errors(text)
    if refused:
        raise csv_io.ImportFailed(refused)
    file_name = csv_io.CONTROL_CHARACTERS.sub("", file_name)
    job = ImportJob.objects.create(
        organisation=organisation,
        kind=kind,
        dry_run=dry_run,
        requested_by=by if getattr(by, "is_authenticated", False) else None,
        file_name=file_name[:200],
        source=text,
        rows_total=csv_io.data_rows(text),
    )
    job_id = job.pk
    transaction.on_commit(lambda: _enqueue(job_id))
    return job


def _enqueue(job_id: int) -> None:
    from .tasks import import_job_run as import_job_run_task

    import_job_run_task.delay(job_id)


def import_job_run(*, job_id: int) -> ImportJob:
    """Check every row of the job's file, then import them all or none; progress is saved as rows are checked.

    Idempotent: a finished job is left as it is.
    """
    job = ImportJob.objects.select_related("organisation").get(pk=job_id)
    if job.status in FINISHED:
        return job
    ImportJob.objects.filter(pk=job_id).update(status=ImportJob.Status.CHECKING, rows_done=0)

    def progress(done: int, total: int) -> None:
        # Outside the write's transaction, so whoever polls sees the rows move.
        ImportJob.objects.filter(pk=job_id).update(rows_done=done, rows_total=total)

    def finish(result: csv_io.ImportResult) -> None:
        _finished(
            job_id,
            status=ImportJob.Status.DONE,
            created=result.created,
            updated=result.updated,
            detail=("checked, nothing saved (dry run): " if result.dry_run else "imported: ")
            + f"{result.created} new, {result.updated} updated",
        )

    try:
        csv_io.registry_import(
            kind=job.kind,
            source=io.StringIO(job.source, newline=""),
            organisation=job.organisation,
            dry_run=job.dry_run,
            progress=progress,
            finish=finish,
        )
    except csv_io.ImportFailed as exc:
        _finished(job_id, status=ImportJob.Status.REFUSED, errors=[e.as_dict() for e in exc.errors], detail=str(exc))
    except Exception:  # whatever went wrong must end up on the job, not vanish in a worker
        logger.exception("registry import job %s failed", job.public_id)
        _finished(
            job_id,
            status=ImportJob.Status.FAILED,
            detail="the import stopped on an unexpected error; nothing was imported. Try again or ask an admin.",
        )
    return ImportJob.objects.get(pk=job_id)


def _finished(job_id: int, *, status: str, **fields) -> None:
    total = ImportJob.objects.filter(pk=job_id).values_list("rows_total", "rows_done").first() or (0, 0)
    done = max(total) if status == ImportJob.Status.DONE else total[1]
    ImportJob.objects.filter(pk=job_id).update(
        status=status, source="", rows_done=done, finished_at=timezone.now(), **fields
    )
