"""A unit's trends with its fault windows, and one fault's evidence: the unit's charts up to the day it was last
seen, its windows shaded, its text, consequence and corrective work.

Reads come through ``automation.fault_selectors`` (the unit through the registry's ``managed_ahu``, the fault through
``fault_for``). Values are stored SI and shown in the person's units through ``engineering.units``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo

from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.shortcuts import render
from django.utils.safestring import mark_safe
from django.views.decorators.http import require_GET

from accounts.inputs import EARLIEST_DATE, day_refusal, parse_day
from accounts.selectors import primary_role
from automation.fault_models import Fault
from automation.fault_selectors import fault_for, faults_visible_to, unit_trend_view
from automation.oa_agreement import oa_disagreement
from automation.vocabulary import UNIT_QUANTITY, PointUnit, point_class_label
from engineering import formatting as fmt
from engineering.faults.freeze import G36_FREEZE_STAGES, stage_line_words, stage_lines
from engineering.units import to_display, unit_label
from inventory.today import today_for

from ..trend_charts import Band, ChartLine, trend_chart
from .automation_faults import DEFAULT_DAYS, MANAGING, fault_row
from .staff import managed_ahu

MAX_DAYS = 31

# Chart groups: which point units go on one chart, in page order.
GROUPS = (
    ("temperatures", "Temperatures", (PointUnit.DEG_C,)),
    ("pressures", "Pressures", (PointUnit.PA,)),
    ("commands", "Commands, positions and speeds", (PointUnit.PERCENT, PointUnit.UNITLESS)),
    ("airflow", "Airflow", (PointUnit.M3_PER_SEC,)),
    ("co2", "CO₂", (PointUnit.PPM,)),
)
QUANTITY = UNIT_QUANTITY


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


def point_address(point) -> str:
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
        asked = parse_day(raw_start)
        window = f"from {EARLIEST_DATE.isoformat()} to {today.isoformat()}"
        if asked is None:
            problems.append(f"{day_refusal(raw_start[:40], label='From', allowed=window)}.")
        elif asked < EARLIEST_DATE or asked > today:
            problems.append(f"From: {raw_start[:20]!r} is not allowed; allowed: {window}.")
        else:
            start = asked
    if start + dt.timedelta(days=days - 1) > today:  # no trends come from days not yet begun: end the stretch today
        days = (today - start).days + 1
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
        plotted = any(line.samples for line in chart_lines)
        out.append({"key": key, "title": title, "svg": mark_safe(svg), "plotted": plotted})  # built with escape()
    # The charts with samples first, side by side at a desk; the groups without any in this stretch after them.
    return sorted(out, key=lambda c: not c["plotted"])


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
    # The From field keeps a refused day as typed beside its refusal, never the default in its place.
    refused = any(p.startswith("From:") for p in problems)
    start_text = request.GET.get("start", "")[:40] if refused else first.isoformat()
    # So does the Days field: a refused number stays as typed beside its refusal.
    days_refused = any(p.startswith("Days:") for p in problems)
    days_text = request.GET.get("days", "")[:20] if days_refused else str(days)
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
            "fault_row": fault_row(fault, system) if fault else None,
            "oa_note": oa_disagreement(ahu_id=ahu.pk, zone=site.time_zone, fault=fault) if fault else "",
            "start_text": start_text,
            "days_text": days_text,
            "points": [
                {
                    "point": line.point,
                    "words": point_class_words(line.point.brick_class),
                    "address": point_address(line.point),
                    "samples": len(line.samples),
                }
                for line in view.lines
            ],
            "charts": _charts(view, system=system, zone=site.time_zone),
            "windows": view.windows,
            "faults": [fault_row(f, system) for f in faults],
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
    return _trend_page(request, ahu=managed_ahu(request, pk), fault=None)


@login_required
@require_GET
def fault_detail(request, pk: int):
    """One fault's evidence: the unit's trends up to the day it was last seen, its windows shaded."""
    if primary_role(user=request.user) not in MANAGING:
        raise PermissionDenied("Only a supervisor or administrator may open a fault's evidence.")
    fault = fault_for(user=request.user, id=pk)
    return _trend_page(request, ahu=managed_ahu(request, fault.ahu_id), fault=fault)
