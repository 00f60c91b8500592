"""Trend samples: the CSV import in the two layouts automation systems export, storing and purging day buckets.

Cells: ``trend_cells``; rows: ``trend_files``; day buckets: ``trend_store``; here the import, its jobs, retention.

Layouts (the first row is the header; any interval, gaps allowed: an empty cell is no sample):

- ``wide``: one row per timestamp, the first column the time, then a column per point
  (``timestamp,AHU1.SAT,AHU1.FILT-DP`` / ``2026-01-05 08:00,16.8,142``);
- ``long``: one row per timestamp, point and value, columns ``timestamp``, ``point``, ``value``.

A point is named as the automation system names it (``Point.name``); where two units of the site have a point
of that name, ``<unit label code>/<point name>`` says which (``U7KQ2MP/AHU-02.OAT``; the label code is unique, a
unit's tag need not be), and ``<unit tag>/<point name>`` still works where the tag tells the units apart.
``point_headers`` gives the exact header of every point of a site, for the point map page and the Brick model.
A time without a zone is the site's (``accounts.inputs.check_reading_time``: not before 2000, not in the
future); in the hour that a clock change repeats, the first pass of a time is read as the earlier hour and the
second pass as the later one, and the result counts those rows (``TrendImportResult.words`` says so). Values
are numbers in the units the importer states for the file (``units``: ``si``, the point's SI unit — °C, Pa, m³/s;
or ``us`` — °F, in. w.c., cfm), converted to SI by the point's class through ``engineering.units.from_display``
and then held to a plausible range (``vocabulary.plausible_range``); percent, ppm and on/off points read the same
in both. On/off points take 1/0, on/off, true/false or active/inactive.

All or nothing, like the registry's CSV import (``inventory.csv_io``): every bad row or cell is listed with its
line, column, value and what is allowed, and then nothing is stored. A sample at a time already stored for the
point replaces it, so importing the same file twice changes nothing.
"""

from __future__ import annotations

import datetime as dt
import logging
from collections.abc import Callable
from typing import Any

from django.db import transaction
from django.utils import timezone

from accounts.models import User
from engineering.units import UnitSystem
from inventory.csv_io import ImportFailed, control_character_errors, data_rows
from inventory.models import Site

from .models import TrendDay, TrendImportJob, trend_retention
from .trend_cells import (
    LAYOUTS,
    UNIT_SYSTEMS,
    UNITS_UNCHANGED,
    plausible_words,
    point_headers,
    time_words,
    trend_request_check,
    units_choice_label,
    units_problem,
    units_words,
)
from .trend_files import trend_file_read
from .trend_store import Samples, TrendImportResult, trend_samples, trend_samples_store

# The import's names, read here by the pages, the API, the poller and the Brick model.
__all__ = [
    "BACKGROUND_ROWS",
    "FINISHED",
    "LAYOUTS",
    "UNITS_UNCHANGED",
    "UNIT_SYSTEMS",
    "Samples",
    "TrendImportResult",
    "plausible_words",
    "point_headers",
    "time_words",
    "trend_import",
    "trend_import_job_create",
    "trend_import_job_run",
    "trend_import_runs_in_background",
    "trend_purge",
    "trend_samples",
    "trend_samples_store",
    "units_choice_label",
    "units_problem",
    "units_words",
]

logger = logging.getLogger(__name__)

# A file of this many rows or more goes to a background job (a web worker is killed after about 30 s).
BACKGROUND_ROWS = 20_000


def trend_import(
    *,
    site: Site,
    text: str,
    layout: str,
    units: str = UnitSystem.SI,
    by: User | None = None,
    now: dt.datetime | None = None,
    progress: Callable[[int, int], None] | None = None,
    finish: Callable[[TrendImportResult], None] | None = None,
) -> TrendImportResult:
    """Import a trend CSV of ``layout`` for ``site``'s points, its values in ``units`` (``si`` or ``us``; the
    importer states them, pages and the API ask): every value or none.

    Raises ``ImportFailed`` listing every bad row and cell. ``finish(result)`` runs inside the write's
    transaction (a job records its outcome with the values it stored, or neither)."""
    trend_request_check(layout, units, text)
    samples, result = trend_file_read(site=site, text=text, layout=layout, units=units, now=now, progress=progress)
    with transaction.atomic():
        trend_samples_store(samples, result)
        if by is not None:
            from accounts.services import audit_record

            audit_record(
                actor=by,
                obj=site,
                action="trend_import",
                organisation=site.organisation,
                changes={"layout": layout, "units": units, **result.as_dict()},
            )
        if finish is not None:
            finish(result)
    return result


# ---------------------------------------------------------------------------
# Background jobs and retention
# ---------------------------------------------------------------------------
FINISHED = {TrendImportJob.Status.DONE, TrendImportJob.Status.REFUSED, TrendImportJob.Status.FAILED}


def trend_import_runs_in_background(*, text: str) -> bool:
    return data_rows(text, at_most=BACKGROUND_ROWS) >= BACKGROUND_ROWS


@transaction.atomic
def trend_import_job_create(
    *, site: Site, text: str, layout: str, units: str = UnitSystem.SI, by: User | None, file_name: str = ""
) -> TrendImportJob:
    """Store the file as a queued job, with the units of its values, and queue its run after commit (the caller
    checked ``by`` manages ``site``)."""
    trend_request_check(layout, units, text)
    # The file is stored before it is checked, and PostgreSQL cannot store NUL in text: refused at once.
    refused = control_character_errors(text)
    if refused:
        raise ImportFailed(refused)
    job = TrendImportJob.objects.create(
        organisation=site.organisation,
        site=site,
        layout=layout,
        units=units,
        requested_by=by if getattr(by, "is_authenticated", False) else None,
        file_name=file_name[:200],
        source=text,
        rows_total=data_rows(text),
    )
    job_id = job.pk
    transaction.on_commit(lambda: _enqueue(job_id))
    return job


def _enqueue(job_id: int) -> None:
    from .tasks import trend_import_job_run as task

    task.delay(job_id)


def trend_import_job_run(*, job_id: int) -> TrendImportJob:
    """Check every row of the job's file, then store every value or none. A finished job is left as it is."""
    job = TrendImportJob.objects.select_related("site__organisation", "requested_by").get(pk=job_id)
    if job.status in FINISHED:
        return job
    TrendImportJob.objects.filter(pk=job_id).update(status=TrendImportJob.Status.CHECKING)

    def finish(result: TrendImportResult) -> None:
        _finished(
            job_id,
            status=TrendImportJob.Status.DONE,
            values_stored=result.values,
            detail=result.words(),
        )

    try:
        trend_import(
            site=job.site, text=job.source, layout=job.layout, units=job.units, by=job.requested_by, finish=finish
        )
    except ImportFailed as exc:
        _finished(
            job_id, status=TrendImportJob.Status.REFUSED, errors=[e.as_dict() for e in exc.errors], detail=str(exc)
        )
    except Exception:  # whatever went wrong must end up on the job, not vanish in a worker
        logger.exception("trend import job %s failed", job.public_id)
        _finished(
            job_id,
            status=TrendImportJob.Status.FAILED,
            detail="the import stopped on an unexpected error; nothing was imported. Try again or ask an admin.",
        )
    return TrendImportJob.objects.get(pk=job_id)


def _finished(job_id: int, *, status: str, **fields: Any) -> None:
    TrendImportJob.objects.filter(pk=job_id).update(status=status, source="", finished_at=timezone.now(), **fields)


@transaction.atomic
def trend_purge(*, now: dt.datetime | None = None) -> int:
    """Delete day buckets older than ``PLENUM_TREND_RETENTION_DAYS``; returns how many were deleted."""
    # A UTC date on purpose: buckets are UTC days (TrendDay.day), whatever the site's zone.
    cutoff = ((now or timezone.now()) - trend_retention()).date()
    deleted, _ = TrendDay.objects.filter(day__lt=cutoff).delete()
    return deleted
