"""Unit history: every work order, reading and finding of one AHU over a period, with trend charts.

Charts: filter pressure drop at design airflow per filter bank, one line per set
of filters (``inspections.selectors.filter_series``), with the change forecast
(``engineering.filters.filter_forecast``), and the supply-air
temperature's deviation from its set point with the watch and fail bands of
``engineering.controls.supply_temperature_check`` (1 K / 2 K, common practice).

Readings, grouped by visit (its day and time on the site's clock, the technician, the work order): one
row per judgement, not per raw reading. A row names what was checked and on which part, the values it
was judged on in the reader's units (a damper's commanded and measured position together; a filter's
reading with the airflow it was read at and its value at design airflow, so a fail below the final value
reads as what it is), the limit, the verdict and, when it is not ok, the reason. A yes/no answer or a
choice given alike for several parts is one row naming the parts. A reading no judgement used is a row
of its own ("recorded"); the unit's own readings of the visit (run-hours, airflow) stand in its heading.

The document prints landscape on the reader's paper (``reports.rendering.paper_for``): the tables keep
short terms (kinds, states, verdicts) whole and break names between words.
"""

from __future__ import annotations

import re
import zoneinfo
from collections import defaultdict
from datetime import date, datetime, time, timedelta

from django.db.models import Prefetch, Q
from django.utils.html import escape
from django.utils.safestring import mark_safe

from accounts.clock import local_date_of
from engineering.controls import Verdict, damper_position_check, static_pressure_check, supply_temperature_check
from engineering.errors import EngineeringInputError
from engineering.filters import filter_forecast
from engineering.units import to_display, unit_label
from inspections import reasons
from inspections.checklists import TASK_CODES
from inspections.display import derived_rows
from inspections.models import Evaluation, Finding, Inspection, Reading
from inspections.selectors import (
    check_label,
    filter_series_for,
    filter_sources_words,
    findings_seen_on,
    item_labels,
    reason_for,
)
from inspections.services.findings import problem_of
from inventory.models import AHU, ComponentKind
from inventory.selectors import ahus_visible_to
from inventory.today import today_for
from reports import charts
from reports.compliance import filter_outlook
from reports.rendering import html_render, paper_for, svg_data_uri
from scheduling.models import WorkOrder

from . import Built, Prepared, one_id, period, period_text, refuse_missing
from .common import shown, unit_system
from .visit_words import VERDICTS, reading_value


def prepare(*, user, parameters: dict, requested_at: datetime) -> Prepared:
    unit_id = one_id(parameters, "unit")
    row = (
        ahus_visible_to(user=user)
        .filter(pk=unit_id)
        .values_list("building__site_id", "building__site__organisation_id", "building__site__time_zone")
        .first()
    )
    refuse_missing("unit", [unit_id], set() if row is None else {unit_id}, "unit")
    assert row is not None  # refused just above
    today = today_for(row[2], now=requested_at)  # the unit's site's today, not the request's UTC date
    start, end = period(parameters, default_start=today - timedelta(days=365), default_end=today)
    return Prepared(
        parameters={
            "unit": unit_id,
            "start": start.isoformat(),
            "end": end.isoformat(),
            "unit_system": unit_system(parameters, user),
        },
        site_ids=[row[0]],
        organisation_id=row[1],
    )


def _in_period(start: date, end: date, tz: zoneinfo.ZoneInfo) -> tuple[datetime, datetime]:
    """The period as [first moment, moment after the last day) in the site's time zone."""
    lo = datetime.combine(start, time.min, tzinfo=tz)
    hi = datetime.combine(end + timedelta(days=1), time.min, tzinfo=tz)
    return lo, hi


def build(*, report) -> Built:
    p = report.parameters
    system = p["unit_system"]
    start, end = date.fromisoformat(p["start"]), date.fromisoformat(p["end"])
    ahu = AHU.objects.select_related("building__site__organisation").get(pk=p["unit"])
    lo, hi = _in_period(start, end, zoneinfo.ZoneInfo(ahu.building.site.time_zone))
    orders = list(
        WorkOrder.objects.filter(ahu=ahu)
        .filter(Q(due_date__range=(start, end)) | Q(completed_at__gte=lo, completed_at__lt=hi))
        .select_related("assignee")
        .prefetch_related("tasks__task")
        .order_by("due_date", "pk")
    )
    # All inspections up to the period's end: earlier ones feed the filter forecast, only those inside are listed.
    inspections = list(
        Inspection.objects.filter(ahu=ahu, finished_at__lt=hi)
        .select_related("technician", "work_order")
        .prefetch_related(
            Prefetch(
                "readings",
                queryset=Reading.objects.select_related("item__template", "component").order_by(
                    "item__template__code", "item__position", "component__position", "pk"
                ),
            ),
            Prefetch("evaluations", queryset=Evaluation.objects.select_related("component").order_by("pk")),
        )
        .order_by("finished_at", "pk")
    )
    listed = [i for i in inspections if i.finished_at >= lo]
    findings = list(
        # Seen in the period: first seen in it, or first seen before and seen again in it.
        Finding.objects.filter(ahu=ahu, opened_at__lt=hi)
        .filter(Q(opened_at__gte=lo) | Q(last_seen_at__gte=lo))
        .exclude(close_cause=Finding.CloseCause.MERGED)  # merged into the earlier finding listed beside it
        .select_related("component", "corrective_work_order", "evaluation", "latest_evaluation")
        .order_by("opened_at", "pk")
    )
    for finding in findings:
        finding.reason_display = keep_units(reason_for(evaluation=finding, unit_system=system))
    tz = zoneinfo.ZoneInfo(ahu.building.site.time_zone)
    labels = item_labels(api_keys={e.item_key for i in listed for e in i.evaluations.all()})
    seen = findings_seen_on(inspections=listed)
    visits = [_visit(insp, system=system, labels=labels, tz=tz, findings=seen.get(insp.pk, [])) for insp in listed]
    reading_count = sum(len(insp.readings.all()) for insp in listed)
    # The history's last day: its end, or the day it was asked for when that is earlier (the site's day).
    last_day = min(end, today_for(ahu.building.site, now=report.created_at))
    filter_charts = _filter_charts(ahu=ahu, lo=lo, hi=hi, system=system, today=last_day, tz=tz)
    supply_chart = _supply_chart(inspections=listed, system=system, tz=tz)
    title = f"Unit history — {ahu.tag}, {ahu.building.site.name}, {period_text(p)}"
    html = html_render(
        template="reports/unit_history.html",
        context={
            "ahu": ahu,
            "site": ahu.building.site,
            "organisation": ahu.building.site.organisation,
            "start": start,
            "end": end,
            "orders": orders,
            "inspections": listed,
            "visits": visits,
            "reading_count": reading_count,
            "findings": findings,
            "filter_charts": filter_charts,
            # Two charts to a row: each filter bank's, then the supply air's.
            "chart_cells": [{"kind": "filter", "chart": fc} for fc in filter_charts]
            + ([] if filter_charts else [{"kind": "no_filters"}])
            + [{"kind": "supply"}],
            "supply_chart": supply_chart,
            "design_airflow": shown(ahu.design_supply_airflow_m3s, "airflow", system),
            "setpoint": shown(ahu.supply_air_setpoint_c, "temperature", system),
        },
        title=title,
        paper=paper_for(system),
        generated_at=report.created_at,
        zone=ahu.building.site.time_zone,
        subject=f"History of {ahu.tag}",
    )
    return Built(html=html, title=title)


# The unit's own readings of a visit, said in its heading (the items' labels are a question for the phone).
VISIT_WORDS = {
    "run_hours": "run-hours",
    "supply_airflow": "supply airflow",
    "supply_fan_speed": "supply fan speed",
    "general_notes": "notes",
}
# Per check over several readings: the derived values a row shows as its values, then as its limit
# (labels and units from ``inspections.display.derived_rows``).
VALUE_KEYS = {
    "oa_fraction_temperature": ("oa_fraction", "uncertainty", "outdoor_airflow_m3s"),
    "oa_fraction_co2": ("oa_fraction", "uncertainty", "outdoor_airflow_m3s"),
    "full_oa_airflow": ("outdoor_airflow_m3s", "supply_airflow_m3s", "airflow_uncertainty_m3s"),
    "coil_balance": ("air_side_w", "water_side_w", "difference_pct"),
    "supply_temperature": ("supply_air_c", "setpoint_c", "deviation_k"),
    "duct_static": ("static_pa", "setpoint_pa", "deviation_pct"),
    "damper_position": ("commanded_pct", "measured_pct", "error_pct"),
    "sensor_drift": ("sensor", "reference", "error"),
    "heat_recovery": ("effectiveness_pct", "uncertainty_pct"),
}
LIMIT_KEYS = {
    "oa_fraction_temperature": ("design_min_oa_fraction", "required_outdoor_airflow_m3s"),
    "oa_fraction_co2": ("design_min_oa_fraction", "required_outdoor_airflow_m3s"),
    "full_oa_airflow": ("design_min_outdoor_airflow_m3s", "required_outdoor_airflow_m3s"),
    "sensor_drift": ("allowed_error",),
    "heat_recovery": ("design_effectiveness_pct",),
}
# A number or a band with its unit, which a line could otherwise break inside ("930 L/" then "s"; "0.39 in."
# then "w.c."; "2.0–" then "7.0 °C").
_QUANTITY = re.compile(
    r"[−\-±]?\d[\d,.]*(?:(?:–| to )[−\-]?\d[\d,.]*)?\s"
    r"(?:in\. w\.c\.|L/s|Btu/h|m³/s|kg/m³|Δ°F|°C|°F|K|Pa|ppm|cfm|%|points)(?!\w)"
)


def keep_units(text: str) -> str:
    """``text`` escaped for HTML, each number or band with its unit kept on one line."""
    return mark_safe(_QUANTITY.sub(lambda m: f'<span class="nobr">{m.group(0)}</span>', escape(text)))


# Yes/no answers and choices: the same answer for several parts is one row naming them.
ANSWERS = ("check", "choice")
# The bands a reason ends with, when the limit column already says them.
_BANDS = re.compile(r" \(watch above [^()]*\)$")
# The figures in brackets a reason repeats from the values and limit cells ("(259 Pa at design, clean 95 Pa,
# final 300 Pa)"); the findings table and the visit's own record keep the whole text.
_FIGURES = re.compile(r" \([^()]*\d[^()]*\)")


# Derived values said after the value before them, without their label ("41 % ± 3 points").
_AFTER = {"uncertainty", "uncertainty_pct", "airflow_uncertainty_m3s"}


# Shorter labels where the row's check already says what is compared (values and units still from
# ``inspections.display.derived_rows``).
SHORT_LABELS = {
    "commanded_pct": "commanded",
    "measured_pct": "measured",
    "error_pct": "error",
    "supply_air_c": "supply air",
    "deviation_k": "deviation",
    "deviation_pct": "deviation",
    "static_pa": "static pressure",
    "sensor": "sensor",
    "reference": "reference",
    "error": "difference",
    "allowed_error": "allowed ±",
    "design_min_oa_fraction": "design minimum",
    "design_min_outdoor_airflow_m3s": "design minimum",
    "required_outdoor_airflow_m3s": "the space needs",
    "loading_pct": "loading",
    "design_effectiveness_pct": "design",
}


# Said after the value: "319 Pa at design airflow", "102.0 % of rated clean".
_SUFFIX = {"corrected_dp_pa": "at design airflow", "fraction_of_clean_pct": "of rated clean"}


def _derived_text(derived: dict, keys, system: str, item: str) -> list[str]:
    out: list[str] = []
    for key in keys:
        for label, value in derived_rows({key: derived[key]}, system, item=item) if key in derived else []:
            if key in _AFTER and out:
                out[-1] += f" ± {value.lstrip('± ')}"
            elif key == "allowed_error":
                out.append(f"allowed ±{value}")
            elif key in _SUFFIX:
                out.append(f"{value} {_SUFFIX[key]}")
            else:
                out.append(f"{SHORT_LABELS.get(key, label)} {value}")
    return out


def _control_limits(check: str, system: str) -> str:
    """The watch and fail bands of a set-point or position check, as ``engineering.controls`` judges it."""
    if check == "supply_temperature":
        lim = supply_temperature_check(measured_c=0.0, setpoint_c=0.0).limits
        w, f = (shown(lim[k], "temperature_difference", system) for k in ("watch_k", "fail_k"))
        return f"watch over {w}, fail over {f}"
    if check == "damper_position":
        lim = damper_position_check(commanded_pct=0.0, measured_pct=0.0).limits
        return f"watch over {lim['watch_pct']:g}, fail over {lim['fail_pct']:g} points"
    if check == "duct_static":
        lim = static_pressure_check(measured_pa=1.0, setpoint_pa=1.0).limits
        return f"watch over {lim['watch_pct']:g} %, fail over {lim['fail_pct']:g} % of set point"
    return ""


def _filter_cells(check: str, d: dict, system: str) -> tuple[list[str], str]:
    """A filter judgement: the reading with the airflow it was read at, its value at design airflow and how
    loaded that is; the limit it was judged against (the final value, or the clean value after a change)."""
    values = []
    if "dp_pa" in d:
        read = shown(d["dp_pa"], "pressure", system)
        if isinstance(d.get("airflow_m3s"), int | float):
            read += f" read at {shown(d['airflow_m3s'], 'airflow', system)}"
            source = d.get("airflow_source")
            if isinstance(source, str) and source:
                read += f" ({source.replace(' (not measured)', '')})"
        values.append(read)
    more = (
        ("corrected_dp_pa", "loading_pct")
        if check == "filter_loading"
        else ("corrected_dp_pa", "fraction_of_clean_pct")
    )
    values += _derived_text(d, more, system, "")
    values += [
        f"{label}: {value}"
        for label, value in derived_rows({k: d[k] for k in ("media_bypass_suspected",) if k in d}, system)
    ]
    limit_keys = ("clean_dp_pa", "final_dp_pa") if check == "filter_loading" else ("clean_dp_pa",)
    words = {"final_dp_pa": "final", "clean_dp_pa": "clean" if check == "filter_loading" else "rated clean"}
    limit = ", ".join(f"{words[k]} {shown(d[k], 'pressure', system)}" for k in limit_keys if d.get(k) is not None)
    return values, limit


def _band_limit(d: dict, reading: Reading | None, system: str) -> str:
    """A single reading's band: ok within …, watch within … (the stored limits, in the reader's units)."""
    if reading is None or not reading.item.quantity:
        return ""
    qty, decimals = reading.item.quantity, reading.item.decimals
    ok = reasons.render_part(reasons.span(d.get("ok_min"), d.get("ok_max"), qty, decimals), system)
    text = f"ok {ok}"
    if d.get("watch_min") is not None or d.get("watch_max") is not None:
        lo = d.get("watch_min", d.get("ok_min"))
        hi = d.get("watch_max", d.get("ok_max"))
        text += f"; watch {reasons.render_part(reasons.span(lo, hi, qty, decimals), system)}"
    return text


def _judged_cells(e: Evaluation, reading: Reading | None, system: str) -> tuple[list[str], str]:
    """The values a judgement was made on and the limit it was judged against, in the reader's units."""
    d = e.derived or {}
    if e.check_name in ("filter_loading", "filter_after_change"):
        return _filter_cells(e.check_name, d, system)
    if e.check_name in VALUE_KEYS:
        values = _derived_text(d, VALUE_KEYS[e.check_name], system, e.item_key)
        limit = "; ".join(_derived_text(d, LIMIT_KEYS.get(e.check_name, ()), system, e.item_key))
        return values, limit or _control_limits(e.check_name, system)
    values = [reading_value(reading, system)] if reading is not None else []
    return values, _band_limit(d, reading, system) if e.check_name == "limits" else ""


def judged_cells(*, evaluation: Evaluation, reading: Reading | None, system: str) -> tuple[list[str], str]:
    """The values a judgement was made on and its limit, in the reader's units, as the unit history prints them
    (the property manager's finding pages read the same)."""
    return _judged_cells(evaluation, reading, system)


def _reading_text(r: Reading, system: str) -> str:
    """A reading beside the values judged from it ("return air 22.7 °C"): its label, short."""
    return f"{r.item.label.lower().replace(' temperature', '')} {reading_value(r, system)}"


def _visit(
    insp: Inspection, *, system: str, labels: dict[str, str], tz: zoneinfo.ZoneInfo, findings: list[Finding]
) -> dict:
    """One visit of the history: its heading and one row per judgement (see the module's docstring). A failure
    that a finding records names the finding, whose full text the findings table gives once."""
    by_problem = {(f.component_id, f.problem): f for f in findings}
    readings = list(insp.readings.all())
    order = {(r.item.template.code, r.item.key, r.component_id): i for i, r in enumerate(readings)}
    owned = {(f"{r.item.template.code}.{r.item.key}", r.component_id): r for r in readings}
    evaluations = list(insp.evaluations.all())
    judged = {(e.item_key, e.component_id) for e in evaluations}
    heading = [
        f"{VISIT_WORDS.get(r.item.key, r.item.label.lower())} {reading_value(r, system)}"
        for r in readings
        if r.item.template.code == "visit" and reading_value(r, system) not in ("—", "")
    ]
    # Readings no judgement owns: inputs of a check on the same part and task (a damper's command, the
    # outdoor and return temperatures of the outdoor-air check) or readings kept as recorded.
    loose: dict[tuple[str, int | None], list[Reading]] = defaultdict(list)
    recorded = []
    for r in readings:
        key = (f"{r.item.template.code}.{r.item.key}", r.component_id)
        if r.item.template.code == "visit" or key in judged:
            continue
        if any(
            e.item_key.partition(".")[0] == r.item.template.code
            and e.component_id == r.component_id
            and e.check_name not in (*ANSWERS, "limits")
            for e in evaluations
        ):
            loose[(r.item.template.code, r.component_id)].append(r)
        else:
            recorded.append(r)
    rows = []
    attached: set[tuple[str, int | None]] = set()
    for e in evaluations:
        d = e.derived or {}
        code = e.item_key.partition(".")[0]
        reading = owned.get((e.item_key, e.component_id))
        part = e.component.name if e.component_id else ""
        values, limit = _judged_cells(e, reading, system)
        if e.check_name not in (*ANSWERS, "limits") and (code, e.component_id) not in attached:
            # The readings this judgement was made from that its values do not already say.
            numbers = {round(v, 6) for v in d.values() if isinstance(v, int | float) and not isinstance(v, bool)}
            inputs = [
                r
                for r in loose.get((code, e.component_id), [])
                if r.value_si is None or round(r.value_si, 6) not in numbers
            ]
            if reading is not None and reading.value_si is not None and round(reading.value_si, 6) not in numbers:
                inputs.append(reading)
            inputs.sort(key=lambda r: order[(r.item.template.code, r.item.key, r.component_id)])
            values = [_reading_text(r, system) for r in inputs] + values
            attached.add((code, e.component_id))
        reason = ""
        finding = by_problem.get((e.component_id, problem_of(check=e.check_name, item=e.item_key)))
        if e.verdict == Verdict.FAIL and finding is not None:
            reason = f"finding: {finding.title} (first seen {finding.opened_at.astimezone(tz):%Y-%m-%d})"
        elif e.verdict not in (Verdict.OK, "") or (not limit and e.check_name not in (*ANSWERS, "limits")):
            text = reasons.text_without_subject(reason_for(evaluation=e, unit_system=system), part or None)
            reason = _BANDS.sub("", text) if limit else text
            if e.check_name in ("filter_loading", "filter_after_change") or e.check_name in VALUE_KEYS:
                reason = _FIGURES.sub("", reason)  # the values and limit cells give them
        if reading is not None and reading.note:
            reason = f"{reason}; note: {reading.note}" if reason else f"note: {reading.note}"
        rows.append(
            {
                "check": check_label(check=e.check_name, item=e.item_key, labels=labels),
                "parts": [part] if part else [],
                "values": keep_units("; ".join(v for v in values if v)),
                "limit": keep_units(limit),
                "verdict": VERDICTS.get(e.verdict, e.verdict),
                "verdict_code": e.verdict,
                "reason": keep_units(reason),
                "answer": e.check_name in ANSWERS,
                "order": _row_order(e.item_key, e.component, reading, order),
            }
        )
    for r in recorded + [
        r for rs in loose.values() for r in rs if (r.item.template.code, r.component_id) not in attached
    ]:
        rows.append(
            {
                "check": r.item.label,
                "parts": [r.component.name] if r.component_id else [],
                "values": keep_units(reading_value(r, system)),
                "limit": "",
                "verdict": VERDICTS.get(r.verdict, "recorded") if r.verdict else "recorded",
                "verdict_code": r.verdict,
                "reason": f"note: {r.note}" if r.note else "",
                "answer": False,
                "order": _row_order(f"{r.item.template.code}.{r.item.key}", r.component, r, order),
            }
        )
    rows.sort(key=lambda row: row["order"])
    return {
        "inspection": insp,
        "finished": insp.finished_at.astimezone(tz),
        "technician": insp.technician,
        "work_order": insp.work_order,
        "heading": keep_units("; ".join(heading)),
        "rows": _merge_answers(rows),
    }


def _row_order(item_key: str, component, reading: Reading | None, order: dict) -> tuple:
    """Rows in the checklist's order: task as the phone lists them, then item, then the part's place."""
    code, _, key = item_key.partition(".")
    task = TASK_CODES.index(code) if code in TASK_CODES else len(TASK_CODES)
    at = order.get((code, key, component.pk if component is not None else None), len(order))
    return (task, at if reading is not None else len(order), component.position if component is not None else -1)


def _merge_answers(rows: list[dict]) -> list[dict]:
    """The same yes/no answer or choice on several parts, all ok, as one row naming the parts."""
    out: list[dict] = []
    same: dict[tuple, dict] = {}
    for row in rows:
        if row["answer"] and row["verdict_code"] == Verdict.OK and not row["reason"] and row["parts"]:
            key = (row["check"], row["values"])
            if key in same:
                same[key]["parts"].append(row["parts"][0])
                continue
            same[key] = row
        out.append(row)
    return out


def _filter_charts(
    *, ahu: AHU, lo: datetime, hi: datetime, system: str, today: date | None = None, tz: zoneinfo.ZoneInfo | None = None
) -> list[dict]:
    """Per filter bank: pressure drop at design airflow in the period, one line per set of filters, and the
    change forecast of the set fitted at the period's end, judged on ``today`` (the history's last day; the
    day before ``hi`` when not given) by ``reports.compliance.filter_outlook``.

    The numbers are ``inspections.selectors.filter_series``: the same series the manager's chart, the
    evaluation's forecast and the compliance report read. Days are the site's (``tz``; UTC when not given).
    """
    tz = tz or zoneinfo.ZoneInfo("UTC")
    if today is None:
        today = (hi - timedelta(days=1)).date()
    banks = [c for c in ahu.components.all().order_by("position", "pk") if c.kind == ComponentKind.FILTER_BANK]
    all_series = filter_series_for(components=banks, before=hi)
    out = []
    p_label = unit_label(quantity="pressure", system=system)
    for bank in banks:
        series = all_series[bank.pk]
        points = series.current.forecast_points()
        final = bank.specs.get("final_dp_pa")
        forecast, note = None, ""
        if final and points:
            try:
                forecast = filter_forecast(
                    points=points, design_airflow_m3s=series.design_airflow_m3s, final_dp_pa=final
                )
            except EngineeringInputError as exc:
                note = f"No change forecast: {exc}"
        elif not points:
            note = "No change forecast: no readings with run-hours since the last filter change."
        # Due now or forecast: the one rule the site page and the compliance report call, judged on the day the
        # history ends. The last reading of the set fitted at or over the final value is change now, whatever
        # the trend says.
        cur = [p for p in series.current.points if not p.after_change] or list(series.current.points)
        fdate = forecast.date_at_final if forecast is not None else None
        outlook = filter_outlook(
            today=today,
            forecast_on=fdate.date() if isinstance(fdate, datetime) else fdate,
            at_final_now=bool(forecast is not None and forecast.at_final_now),
            corrected_dp_pa=cur[-1].corrected_dp_pa if cur else None,
            final_dp_pa=final,
        )
        lines = []
        # Each point's source (a technician's reading, a building-automation trend day) named under the chart.
        sources = filter_sources_words(points=[p for p in series.points if p.at >= lo])
        for life in series.lives:
            shown_pts = [(p.at.astimezone(tz).date(), p.corrected_dp_pa) for p in life.points if p.at >= lo]
            if shown_pts:
                name = (
                    f"Filters fitted {life.changed_at.astimezone(tz):%Y-%m-%d}"
                    if life.changed_at
                    else "Earlier filters"
                )
                lines.append((name, shown_pts))
        if not lines:
            out.append({"bank": bank, "svg": None, "note": "No filter readings in the period.", "forecast": None})
            continue
        if len(lines) == 1 and not any(life.changed_at and life.changed_at >= lo for life in series.lives):
            lines = [("At design airflow", lines[0][1])]
        series_out = [
            (
                name,
                [d for d, _ in pts],
                [to_display(value=v, quantity="pressure", system=system) for _, v in pts],
                "line",
            )
            for name, pts in lines
        ]
        markers = [
            (life.changed_at.astimezone(tz).date(), "filters changed")
            for life in series.lives
            if life.changed_at is not None and lo <= life.changed_at < hi
        ]
        last_day, last_value = series_out[-1][1][-1], series_out[-1][2][-1]
        if (fdate := outlook.forecast_ahead) is not None:
            series_out.append(
                (
                    "Forecast",
                    [last_day, fdate],
                    [last_value, to_display(value=final, quantity="pressure", system=system)],
                    "dashed",
                )
            )
            markers.append((fdate, f"change {local_date_of(fdate)}"))
        hlines = [(to_display(value=final, quantity="pressure", system=system), "final")] if final else []
        svg = charts.time_series(
            series=series_out,
            y_label=f"Pressure drop at design airflow ({p_label})",
            hlines=hlines,
            markers=markers,
        )
        out.append(
            {
                "bank": bank,
                "svg": svg_data_uri(svg),
                "note": note,
                "sources": sources,
                "forecast": forecast,
                "outlook": outlook,
                "due_now": outlook.due_now,
                "final": shown(final, "pressure", system),
                # The plotted numbers (SI), one (name, [(day, Pa at design airflow)]) per set of filters.
                "lines": lines,
            }
        )
    return out


def _supply_chart(*, inspections: list[Inspection], system: str, tz: zoneinfo.ZoneInfo | None = None) -> dict:
    """Signed deviation of supply air from its set point at each visit, with the ±1 K / ±2 K bands."""
    pts = []
    for insp in inspections:
        for e in insp.evaluations.all():
            d = e.derived or {}
            if (
                e.check_name == "supply_temperature"
                and isinstance(d.get("supply_air_c"), int | float)
                and isinstance(d.get("setpoint_c"), int | float)
            ):
                pts.append(
                    (
                        insp.finished_at.astimezone(tz or zoneinfo.ZoneInfo("UTC")).date(),
                        d["supply_air_c"] - d["setpoint_c"],
                    )
                )
    if not pts:
        return {"svg": None}
    limits = supply_temperature_check(measured_c=0.0, setpoint_c=0.0).limits
    k = unit_label(quantity="temperature_difference", system=system)

    def conv(v):
        return to_display(value=v, quantity="temperature_difference", system=system)

    hl = defaultdict(str)
    for band, name in ((limits["watch_k"], "watch"), (limits["fail_k"], "fail")):
        hl[conv(band)] = f"+{name}"
        hl[conv(-band)] = f"−{name}"
    svg = charts.time_series(
        series=[("Supply air − set point", [d for d, _ in pts], [conv(v) for _, v in pts], "line")],
        y_label=f"Deviation ({k})",
        hlines=sorted(hl.items()),
    )
    return {
        "svg": svg_data_uri(svg),
        "points": len(pts),
        "watch": shown(limits["watch_k"], "temperature_difference", system),
        "fail": shown(limits["fail_k"], "temperature_difference", system),
    }
