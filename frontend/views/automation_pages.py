"""Pages of what the building automation system's trends say: a unit's trends with its fault windows, the
supervisor's faults across the portfolio, a property manager's fault summary, and a site's point map files.

Reads come through ``automation.fault_selectors`` and ``automation.selectors`` (every list from
``sites_visible_to``); the one write, a trend CSV for a site, goes to the API's own service
(``automation.trends.trend_import``, or its background job for a large file): every row or none.
Values are stored SI and shown in the person's units through ``engineering.units``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.utils.safestring import mark_safe
from django.views.decorators.http import require_GET, require_http_methods

from accounts.models import Role
from accounts.selectors import primary_role
from automation import trends
from automation.fault_models import Fault
from automation.fault_selectors import fault_for, faults_visible_to, unit_trend_view
from automation.judging import fault_reason
from automation.models import TrendImportJob
from automation.selectors import points_visible_to, site_for, trend_import_jobs_for
from automation.vocabulary import UNIT_QUANTITY, PointUnit, point_class_label
from engineering import formatting as fmt
from engineering.faults.consequences import consequence_text
from engineering.faults.freeze import FREEZE_RISK, G36_FREEZE_STAGES, stage_line_words, stage_lines
from engineering.units import to_display, unit_label
from inspections.freeze import freeze_readiness_for
from inventory import csv_io
from inventory.selectors import sites_managed_by, sites_visible_to
from inventory.today import today_for

from ..trend_charts import Band, ChartLine, trend_chart
from .supervisor import _ahu

MANAGING = {Role.SUPERVISOR, Role.ADMIN}
DEFAULT_DAYS = 7
MAX_DAYS = 31
MAX_UPLOAD_BYTES = 20 * 1024 * 1024
CLOSED_SHOWN = 50

# Chart groups: which point units go on one chart, in page order.
GROUPS = (
    ("temperatures", "Temperatures", (PointUnit.DEG_C,)),
    ("pressures", "Pressures", (PointUnit.PA,)),
    ("commands", "Commands, positions and speeds", (PointUnit.PERCENT, PointUnit.UNITLESS)),
    ("airflow", "Airflow", (PointUnit.M3_PER_SEC,)),
    ("co2", "CO₂", (PointUnit.PPM,)),
)
QUANTITY = UNIT_QUANTITY
JOB_ERRORS_SHOWN = 200


def _role(request) -> str | None:
    return primary_role(user=request.user)


def point_class_words(brick_class: str) -> str:
    """A Brick class in plain words ("Supply air temperature sensor"), the class name itself if unknown."""
    return point_class_label(brick_class)


def _shown(value: float, unit: str, system: str) -> float:
    """A stored sample in the person's units: SI quantities converted, percent points (fractions) as %, on/off
    as 0 or 100 % so it sits on the commands chart."""
    if unit in QUANTITY:
        return to_display(value=value, quantity=QUANTITY[unit], system=system)
    if unit in (PointUnit.PERCENT, PointUnit.UNITLESS):
        return value * 100.0
    return value


def _unit_words(units: tuple[str, ...], system: str) -> str:
    unit = units[0]
    if unit in QUANTITY:
        return unit_label(quantity=QUANTITY[unit], system=system)
    if unit == PointUnit.PERCENT:
        return "%; on/off as 0 or 100"
    return PointUnit(unit).label


def _address(point) -> str:
    if point.bacnet_device_instance is None:
        return ""
    return f"device {point.bacnet_device_instance}, {point.bacnet_object_type} {point.bacnet_object_instance}"


def _stretch(request, *, zone: str, fault: Fault | None) -> tuple[dt.date, int, list[str]]:
    """The first day and number of days asked for (``start``, ``days``), on the site's clock; by default the
    last seven days up to today (or, for a fault, up to the day it was last seen). Bad values are named and
    the default shown instead."""
    tz = zoneinfo.ZoneInfo(zone)
    today = today_for(zone)
    problems = []
    raw_days = request.GET.get("days", "")
    days = DEFAULT_DAYS
    if raw_days:
        try:
            days = int(raw_days)
        except ValueError:
            days = 0
        if not 1 <= days <= MAX_DAYS:
            problems.append(f"Days: {raw_days[:20]!r} is not allowed; allowed: a whole number from 1 to {MAX_DAYS}.")
            days = DEFAULT_DAYS
    last = today
    if fault is not None:
        last = min(today, fault.last_seen_at.astimezone(tz).date())
    start = last - dt.timedelta(days=days - 1)
    raw_start = request.GET.get("start", "")
    if raw_start:
        try:
            asked = dt.date.fromisoformat(raw_start)
        except ValueError:
            asked = None
        allowed = f"allowed: a date as YYYY-MM-DD from 2000-01-01 to {today.isoformat()}."
        if asked is None:
            problems.append(f"From: {raw_start[:20]!r} is not a date; {allowed}")
        elif asked < dt.date(2000, 1, 1) or asked > today:
            problems.append(f"From: {raw_start[:20]!r} is outside the days with trends; {allowed}")
        else:
            start = asked
    return start, days, problems


# A point's quantity in a few words, after its part's name on a chart's legend ("Cooling coil valve",
# "Final filters pressure drop"); a class not here is named by its own words without "sensor".
SHORT_QUANTITY = {
    "Filter_Differential_Pressure_Sensor": "pressure drop",
    "Fan_Speed_Command": "speed",
    "Fan_Status": "running",
    "Damper_Position_Command": "position",
    "Damper_Position_Sensor": "position feedback",
    "Valve_Position_Command": "valve",
    "Preheat_Supply_Air_Temperature_Sensor": "leaving air",
    "Freeze_Status": "frost thermostat",
}


def point_short_name(point) -> str:
    """A point as a chart's legend names it, short enough for a phone: the part it belongs to and its quantity
    where the class belongs to a part (the cooling and heating coil valves are told apart), else the class's
    words without "sensor" ("Supply air temperature")."""
    quantity = SHORT_QUANTITY.get(point.brick_class)
    if point.component_id and quantity:
        return f"{point.component.name} {quantity}"
    words = point_class_words(point.brick_class)
    return words.removesuffix(" sensor") if words.endswith(" sensor") else words


def freeze_limits(system: str) -> list[tuple[float, str]]:
    """The freeze stages' temperatures as a chart's limit lines in ``system``'s units, from the stages the rule
    judges with (``engineering.faults.freeze``): one line per temperature naming every stage judged below it."""
    out = []
    for below_c, stages in stage_lines(G36_FREEZE_STAGES):
        shown = to_display(value=below_c, quantity="temperature", system=system)
        words = stage_line_words(fmt.quantity_text(below_c, quantity="temperature", system=system), stages)
        out.append((shown, words))
    return out


def _charts(view, *, system: str, zone: str) -> list[dict]:
    bands = [Band(start=w["start"], end=w["end"], title=w["title"]) for w in view.windows]
    freeze = any(w["code"] == Fault.FREEZE for w in view.windows)
    out = []
    for key, title, units in GROUPS:
        lines = [line for line in view.lines if line.point.unit in units]
        if not lines:
            continue
        limits = freeze_limits(system) if key == "temperatures" and freeze else []
        chart_lines = [
            ChartLine(
                label=point_short_name(line.point),
                samples=[(t, _shown(v, line.point.unit, system)) for t, v in line.samples],
            )
            for line in lines
        ]
        svg = trend_chart(
            title=title,
            unit=_unit_words(units, system),
            lines=chart_lines,
            start=view.start,
            end=view.end,
            zone=zone,
            bands=bands,
            limits=limits,
        )
        out.append({"key": key, "title": title, "svg": mark_safe(svg)})  # built with escape()
    return out


def distinct_windows(windows: list[dict]) -> list[dict]:
    """The evidence windows once each: a freeze run reaching three stages is one window of one fault."""
    seen: set[tuple] = set()
    out = []
    for w in windows:
        key = (w["fault"], w["start"], w["end"])
        if key not in seen:
            seen.add(key)
            out.append(w)
    return out


def _trend_page(request, *, ahu, fault: Fault | None):
    site = ahu.building.site
    system = request.user.unit_system
    first, days, problems = _stretch(request, zone=site.time_zone, fault=fault)
    tz = zoneinfo.ZoneInfo(site.time_zone)
    start = dt.datetime.combine(first, dt.time(), tzinfo=tz)
    end = dt.datetime.combine(first + dt.timedelta(days=days), dt.time(), tzinfo=tz)
    view = unit_trend_view(ahu=ahu, start=start, end=end)
    view.windows[:] = distinct_windows(view.windows)
    faults = list(faults_visible_to(user=request.user, ahu_id=ahu.pk, open_only=False)[:20])
    return render(
        request,
        "frontend/automation/unit_trends.html",
        {
            "ahu": ahu,
            "site": site,
            "fault": fault,
            "fault_row": _fault_row(fault, system) if fault else None,
            "points": [
                {
                    "point": line.point,
                    "words": point_class_words(line.point.brick_class),
                    "address": _address(line.point),
                    "samples": len(line.samples),
                }
                for line in view.lines
            ],
            "charts": _charts(view, system=system, zone=site.time_zone),
            "windows": view.windows,
            "faults": [_fault_row(f, system) for f in faults],
            "first": first,
            "last": first + dt.timedelta(days=days - 1),
            "days": days,
            "max_days": MAX_DAYS,
            "problems": problems,
        },
        status=400 if problems else 200,
    )


@login_required
@require_GET
def unit_trends(request, pk: int):
    """A unit's points and trend charts over a stretch with its fault windows (supervisors, administrators)."""
    return _trend_page(request, ahu=_ahu(request, pk), fault=None)


@login_required
@require_GET
def fault_detail(request, pk: int):
    """One fault's evidence: the unit's trends up to the day it was last seen, its windows shaded."""
    if _role(request) not in MANAGING:
        raise PermissionDenied("Only a supervisor or administrator may open a fault's evidence.")
    fault = fault_for(user=request.user, id=pk)
    return _trend_page(request, ahu=_ahu(request, fault.ahu_id), fault=fault)


def _consequence_words(fault: Fault, system: str) -> str:
    """The fault's consequence in the reader's units; where the trends gave no number, what the rule's fault
    risks (a freeze event: coil freeze damage)."""
    if fault.code == Fault.FREEZE:
        return FREEZE_RISK
    return consequence_text(fault.code, fault.consequence, system)


def _fault_row(fault: Fault, system: str) -> dict:
    wo = fault.corrective_work_order
    return {
        "fault": fault,
        "share": None if fault.share is None else round(fault.share * 100),
        "consequence": _consequence_words(fault, system),
        "reason": fault_reason(fault, system),
        "work": wo,
        "work_words": wo.state_words if wo else "",
        "work_url": (
            f"{reverse('frontend:corrective')}#wo-{wo.public_id}"
            if wo is not None and wo.approval == wo.Approval.PENDING
            else (reverse("frontend:checklist", kwargs={"public_id": wo.public_id}) if wo else "")
        ),
    }


@login_required
@require_GET
def faults(request):
    """Supervisors and administrators: the active faults of every site they see (filter by site), closed ones
    folded away. A property manager: a summary of their own sites. Anyone else: forbidden."""
    role = _role(request)
    if role == Role.PROPERTY_MANAGER:
        return _manager_summary(request)
    if role not in MANAGING:
        raise PermissionDenied("Only a supervisor, administrator or property manager may open the faults.")
    system = request.user.unit_system
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    raw = request.GET.get("site", "")
    chosen = next((s for s in sites if str(s.pk) == raw), None) if raw else None
    # An unknown filter value is named at the field (400), not answered with a bare "not found", and lists nothing.
    problem = (
        f"Site: {raw[:20]!r} is not one of the sites you may see; choose one of the list." if raw and not chosen else ""
    )
    active, closed, closed_total = [], [], 0
    if not problem:
        active = [_fault_row(f, system) for f in faults_visible_to(user=request.user, site=chosen)]
        closed_qs = faults_visible_to(user=request.user, site=chosen, open_only=False).filter(state=Fault.State.CLOSED)
        closed = [_fault_row(f, system) for f in closed_qs[:CLOSED_SHOWN]]
        closed_total = closed_qs.count()
    return render(
        request,
        "frontend/automation/faults.html",
        {
            "sites": sites,
            "chosen": chosen,
            "active": active,
            "closed": closed,
            "closed_total": closed_total,
            "managed_sites": list(sites_managed_by(user=request.user).order_by("name")),
            "site_problem": problem,
        },
        status=400 if problem else 200,
    )


def _manager_summary(request):
    """Her sites' active faults counted per site, then each one in plain words: the unit, what was found, since
    when, what the service company does about it and her finding's page (its evidence in words); the freeze events
    that keep a unit from being ready. The evidence charts stay the supervisors'."""
    sites = list(sites_visible_to(user=request.user).order_by("name"))
    counts: dict[int, int] = defaultdict(int)
    active = []
    for f in faults_visible_to(user=request.user):
        counts[f.ahu.building.site_id] += 1
        wo = f.corrective_work_order
        active.append(
            {
                "fault": f,
                "site": f.ahu.building.site,
                "work_words": wo.state_words if wo else "no work yet",
                "finding_url": reverse("frontend:manager_finding", kwargs={"pk": f.finding_id}) if f.finding_id else "",
            }
        )
    active.sort(key=lambda r: (r["site"].name, r["fault"].ahu.tag, r["fault"].first_seen_at))
    readiness = {r.unit.pk: r for r in freeze_readiness_for(user=request.user, as_of=timezone.now())}
    freeze = []
    for f in faults_visible_to(user=request.user, open_only=False).filter(code=Fault.FREEZE):
        r = readiness.get(f.ahu_id)
        if r is not None and r.ready:
            continue
        if f.state == Fault.State.CLOSED and r is None:
            continue
        freeze.append(
            {
                "fault": f,
                "readiness": r,
                "work_words": f.corrective_work_order.state_words if f.corrective_work_order else "",
            }
        )
    return render(
        request,
        "frontend/automation/manager_faults.html",
        {"rows": [{"site": s, "active": counts.get(s.pk, 0)} for s in sites], "active": active, "freeze": freeze},
    )


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
                "address": _address(point),
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
