"""A site's point map: its units and points (Brick class, BACnet address, the header a trend file uses), a trend CSV
import (every row or none; a large file in the background) and the site's Brick model to download.

The one write goes to the API's own service (``automation.trends.trend_import``, or its background job).
"""

from __future__ import annotations

import zoneinfo

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_http_methods

from automation import trends
from automation.models import TrendImportJob
from automation.selectors import points_visible_to, site_for, trend_import_jobs_for
from inventory import csv_io

from .automation_trends import point_address, point_class_words

MAX_UPLOAD_BYTES = 20 * 1024 * 1024


JOB_ERRORS_SHOWN = 200


def _upload_problems(upload) -> dict[str, str]:
    if upload is None:
        return {"file": "File: choose a trend CSV file to import."}
    name = (upload.name or "")[:80]
    if not name.lower().endswith(".csv"):
        return {"file": f"File: {name!r} is not a CSV file; allowed: a .csv file."}
    if upload.size == 0:
        return {"file": f"File: {name!r} is empty; allowed: a CSV file with a header row and rows of values."}
    if upload.size > MAX_UPLOAD_BYTES:
        return {"file": f"File: {name!r} is over {MAX_UPLOAD_BYTES // 1024 // 1024} MB; use the API for it."}
    return {}


@login_required
@require_http_methods(["GET", "POST"])
def site_points(request, pk: int):
    """A site's point map: units and their points (Brick class, BACnet address), a trend CSV import (every row
    or none; each refused row and cell listed) and the site's Brick model to download. Supervisors and
    administrators of the site's organisation."""
    site = site_for(user=request.user, id=pk, write=True)
    errors: list = []
    field_errors: dict[str, str] = {}
    layout = request.POST.get("layout", "wide")
    # The units of the file's values: the person states them, the form offering their own unit system first.
    file_units = request.POST.get("units", "") if request.method == "POST" else request.user.unit_system
    if request.method == "POST":
        upload = request.FILES.get("file")
        if layout not in trends.LAYOUTS:
            field_errors["layout"] = f"Layout: {layout[:20]!r} is not offered; allowed: {', '.join(trends.LAYOUTS)}."
        units_problem = trends.units_problem(file_units)
        if not file_units:
            field_errors["units"] = (
                "Units of the values: choose the units the file's values are in; allowed: "
                + " or ".join(trends.units_choice_label(s) for s in trends.UNIT_SYSTEMS)
                + "."
            )
        elif units_problem:
            field_errors["units"] = f"Units of the values: {file_units[:20]!r} {units_problem}."
        field_errors.update(_upload_problems(upload))
        if not field_errors:
            try:
                text = csv_io.decode_upload(upload.read()).read()
                if trends.trend_import_runs_in_background(text=text):
                    job = trends.trend_import_job_create(
                        site=site,
                        text=text,
                        layout=layout,
                        units=file_units,
                        by=request.user,
                        file_name=upload.name or "",
                    )
                    messages.success(
                        request,
                        "The file is large: it is imported in the background. Its state and, if it is refused, "
                        "every problem are listed under “Trend imports of this site” below; reload to follow it.",
                    )
                    return redirect(
                        reverse("frontend:site_points", kwargs={"pk": site.pk}) + f"?job={job.public_id}#trend-jobs"
                    )
                result = trends.trend_import(site=site, text=text, layout=layout, units=file_units, by=request.user)
            except csv_io.ImportFailed as exc:
                errors = exc.errors
            else:
                messages.success(request, result.words())
                return redirect("frontend:site_points", pk=site.pk)
    units: dict[int, dict] = {}
    points = list(points_visible_to(user=request.user, site=site))
    headers = trends.point_headers(points)
    for point in points:
        entry = units.setdefault(point.ahu_id, {"ahu": point.ahu, "points": []})
        entry["points"].append(
            {
                "point": point,
                "header": headers[point.pk],
                "words": point_class_words(point.brick_class),
                "address": point_address(point),
            }
        )
    return render(
        request,
        "frontend/automation/site_points.html",
        {
            "site": site,
            "units": list(units.values()),
            "errors": errors[:200],
            "errors_total": len(errors),
            "field_errors": field_errors,
            "layout": layout,
            "layouts": trends.LAYOUTS,
            "file_units": file_units,
            "unit_choices": [
                {"value": s, "label": trends.units_choice_label(s), "words": trends.units_words(s)}
                for s in trends.UNIT_SYSTEMS
            ],
            "units_unchanged": trends.UNITS_UNCHANGED,
            "brick_url": reverse("automation_api:site-brick", kwargs={"pk": site.pk}),
            "jobs": _job_rows(request, site),
        },
        status=400 if (errors or field_errors) else 200,
    )


def _job_rows(request, site) -> list[dict]:
    """The site's latest trend import jobs for the point map: state, rows, when (the site's clock), the outcome,
    and a refused job's problems; the one named by ``?job=`` (the upload just started) marked."""
    tz = zoneinfo.ZoneInfo(site.time_zone)
    chosen = request.GET.get("job", "")
    rows = []
    for job in trend_import_jobs_for(user=request.user, site=site):
        errors = job.errors if job.status == TrendImportJob.Status.REFUSED else []
        rows.append(
            {
                "job": job,
                "state": job.get_status_display(),
                "units": trends.units_choice_label(job.units),
                "finished": job.status in trends.FINISHED,
                "created": job.created_at.astimezone(tz),
                "finished_at": job.finished_at.astimezone(tz) if job.finished_at else None,
                "errors": errors[:JOB_ERRORS_SHOWN],
                "errors_total": len(errors),
                "current": str(job.public_id) == chosen,
                "api_url": reverse("automation_api:trend-job", kwargs={"public_id": job.public_id}),
            }
        )
    return rows
