"""Unit history: every work order, reading and finding of one AHU over a period, with trend charts.

Charts: filter pressure drop at design airflow per filter bank, one line per set
of filters (``inspections.selectors.filter_series``), with the change forecast
(``engineering.filters.filter_forecast``), and the supply-air
temperature's deviation from its set point with the watch and fail bands of
``engineering.controls.supply_temperature_check`` (1 K / 2 K, common practice).

Readings: each as read, and a filter reading also with the airflow it was read at and its value at
design airflow, as the evaluation that judged it kept them (``judged_as``), so a fail below the final
value reads as what it is.
"""

from __future__ import annotations

import zoneinfo
from collections import defaultdict
from datetime import date, datetime, time, timedelta

from django.db.models import Prefetch, Q

from engineering.controls import supply_temperature_check
from engineering.errors import EngineeringInputError
from engineering.filters import filter_forecast
from engineering.units import to_display, unit_label
from inspections.display import derived_rows
from inspections.models import Evaluation, Finding, Inspection, Reading
from inspections.selectors import filter_series_for, reason_for
from inventory.models import AHU, ComponentKind
from inventory.selectors import ahus_visible_to
from reports import charts
from reports.compliance import filter_outlook
from reports.rendering import html_render, paper_for, svg_data_uri
from scheduling.models import WorkOrder

from . import Built, Prepared, one_id, period, refuse_missing
from .common import shown, unit_system
from .inspection_report import VERDICTS, reading_value


def prepare(*, user, parameters: dict, requested_at: datetime) -> Prepared:
    unit_id = one_id(parameters, "unit")
    row = (
        ahus_visible_to(user=user)
        .filter(pk=unit_id)
        .values_list("building__site_id", "building__site__organisation_id")
        .first()
    )
    refuse_missing("unit", [unit_id], set() if row is None else {unit_id}, "unit")
    today = requested_at.date()
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
        .select_related("technician")
        .prefetch_related(
            Prefetch(
                "readings",
                queryset=Reading.objects.select_related("item__template", "component").order_by(
                    "item__template__code", "item__position", "component__position", "pk"
                ),
            ),
            Prefetch("evaluations", queryset=Evaluation.objects.order_by("pk")),
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
        finding.reason_display = reason_for(evaluation=finding, unit_system=system)
    reading_rows = []
    for insp in listed:
        judged = {(e.item_key, e.component_id): e for e in insp.evaluations.all()}
        for r in insp.readings.all():
            ev = judged.get((f"{r.item.template.code}.{r.item.key}", r.component_id))
            reading_rows.append(
                {
                    "at": insp.finished_at,
                    "by": insp.technician,
                    "label": r.item.label,
                    "template": r.item.template.title,
                    "component": r.component,
                    "value": reading_value(r, system),
                    "judged_as": judged_as(ev.derived if ev else None, system),
                    "verdict": VERDICTS.get(r.verdict, ""),
                    "verdict_code": r.verdict,
                }
            )
    # The history's last day: its end, or the day it was asked for when that is earlier (the site's day).
    last_day = min(end, report.created_at.astimezone(zoneinfo.ZoneInfo(ahu.building.site.time_zone)).date())
    filter_charts = _filter_charts(ahu=ahu, lo=lo, hi=hi, system=system, today=last_day)
    supply_chart = _supply_chart(inspections=listed, system=system)
    title = f"Unit history — {ahu.tag}, {ahu.building.site.name}, {p['start']} to {p['end']}"
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
            "readings": reading_rows,
            "findings": findings,
            "filter_charts": filter_charts,
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


# A reading judged after correcting it to design airflow (the filter checks): what it was judged as, in this
# order. A filter read at reduced airflow can fail below its final value; these say why.
JUDGED_AS_KEYS = (
    "airflow_m3s",
    "airflow_source",
    "design_airflow_m3s",
    "corrected_dp_pa",
    "clean_dp_pa",
    "final_dp_pa",
)


def judged_as(derived: dict | None, system: str) -> list[tuple[str, str]]:
    """(label, value in the reader's units) of the airflow a reading was taken at and its value at design airflow,
    from the evaluation that judged it (``inspections.display.derived_rows``: the same words and numbers as the
    inspection record); empty for a reading not corrected to design airflow."""
    if not derived or "corrected_dp_pa" not in derived:
        return []
    return [row for key in JUDGED_AS_KEYS if key in derived for row in derived_rows({key: derived[key]}, system)]


def _filter_charts(*, ahu: AHU, lo: datetime, hi: datetime, system: str, today: date | None = None) -> list[dict]:
    """Per filter bank: pressure drop at design airflow in the period, one line per set of filters, and the
    change forecast of the set fitted at the period's end, judged on ``today`` (the history's last day; the
    day before ``hi`` when not given) by ``reports.compliance.filter_outlook``.

    The numbers are ``inspections.selectors.filter_series``: the same series the manager's chart, the
    evaluation's forecast and the compliance report read.
    """
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
        for life in series.lives:
            shown_pts = [(p.at.date(), p.corrected_dp_pa) for p in life.points if p.at >= lo]
            if shown_pts:
                name = f"Filters fitted {life.changed_at:%Y-%m-%d}" if life.changed_at else "Earlier filters"
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
            (life.changed_at.date(), "filters changed")
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
            markers.append((fdate, f"change {fdate.isoformat()}"))
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
                "forecast": forecast,
                "outlook": outlook,
                "due_now": outlook.due_now,
                "final": shown(final, "pressure", system),
                # The plotted numbers (SI), one (name, [(day, Pa at design airflow)]) per set of filters.
                "lines": lines,
            }
        )
    return out


def _supply_chart(*, inspections: list[Inspection], system: str) -> dict:
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
                pts.append((insp.finished_at.date(), d["supply_air_c"] - d["setpoint_c"]))
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
