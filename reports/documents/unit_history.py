"""Unit history: every work order, reading and finding of one AHU over a period, with trend charts.

Charts: filter pressure drop at design airflow per filter bank with its change
forecast (``engineering.filters.filter_forecast``), and the supply-air
temperature's deviation from its set point with the watch and fail bands of
``engineering.controls.supply_temperature_check`` (1 K / 2 K, common practice).
"""

from __future__ import annotations

import zoneinfo
from collections import defaultdict
from datetime import date, datetime, time, timedelta

from django.db.models import Prefetch, Q

from engineering.controls import supply_temperature_check
from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint, corrected_pressure_drop, filter_forecast
from engineering.units import to_display, unit_label
from inspections.models import Evaluation, Finding, Inspection, Reading
from inspections.selectors import reason_for
from inventory.models import AHU, ComponentKind
from inventory.selectors import ahus_visible_to
from reports import charts
from reports.rendering import html_render, svg_data_uri
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
        Finding.objects.filter(ahu=ahu, opened_at__gte=lo, opened_at__lt=hi)
        .select_related("component", "corrective_work_order", "evaluation")
        .order_by("opened_at", "pk")
    )
    for finding in findings:
        finding.reason_display = reason_for(evaluation=finding, unit_system=system)
    reading_rows = [
        {
            "at": insp.finished_at,
            "by": insp.technician,
            "label": r.item.label,
            "template": r.item.template.title,
            "component": r.component,
            "value": reading_value(r, system),
            "verdict": VERDICTS.get(r.verdict, ""),
            "verdict_code": r.verdict,
        }
        for insp in listed
        for r in insp.readings.all()
    ]
    filter_charts = _filter_charts(ahu=ahu, inspections=inspections, start=start, system=system)
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
        generated_at=report.created_at,
        subject=f"History of {ahu.tag}",
    )
    return Built(html=html, title=title)


def _run_hours(insp: Inspection) -> float | None:
    for r in insp.readings.all():
        if r.item.template.code == "visit" and r.item.key == "run_hours" and r.value_si is not None:
            return r.value_si
    return None


def _filter_charts(*, ahu: AHU, inspections: list[Inspection], start: date, system: str) -> list[dict]:
    """Per filter bank: corrected pressure drop since its last change, and the change forecast."""
    banks = [c for c in ahu.components.all().order_by("position", "pk") if c.kind == ComponentKind.FILTER_BANK]
    out = []
    p_label = unit_label(quantity="pressure", system=system)
    for bank in banks:
        points: list[FilterPoint] = []
        shown_pts: list[tuple[date, float]] = []
        for insp in inspections:
            replaced = any(
                r.component_id == bank.pk and r.item.template.code == "filter_replace" for r in insp.readings.all()
            )
            if replaced:
                points, shown_pts = [], []  # a new filter: the trend starts again
            ev = next(
                (e for e in insp.evaluations.all() if e.check_name == "filter_loading" and e.component_id == bank.pk),
                None,
            )
            if ev is None or replaced:
                continue
            d = ev.derived or {}
            dp, q, qd = d.get("dp_pa"), d.get("airflow_m3s"), d.get("design_airflow_m3s")
            if not all(isinstance(x, int | float) for x in (dp, q, qd)):
                continue
            try:
                corrected = corrected_pressure_drop(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=qd)
            except EngineeringInputError:
                continue
            when = insp.finished_at.date()
            shown_pts.append((when, corrected))
            hours = _run_hours(insp)
            if hours is not None:
                points.append(FilterPoint(run_hours=hours, dp_pa=dp, airflow_m3s=q, when=when))
        final = bank.specs.get("final_dp_pa")
        forecast, note = None, ""
        if final and points:
            try:
                forecast = filter_forecast(
                    points=points,
                    design_airflow_m3s=bank.specs.get("design_airflow_m3s") or ahu.design_supply_airflow_m3s,
                    final_dp_pa=final,
                )
            except EngineeringInputError as exc:
                note = f"No change forecast: {exc}"
        elif not points:
            note = "No change forecast: no readings with run-hours since the last filter change."
        if not shown_pts:
            out.append({"bank": bank, "svg": None, "note": "No filter readings in the period.", "forecast": None})
            continue
        xs = [d for d, _ in shown_pts]
        ys = [to_display(value=v, quantity="pressure", system=system) for _, v in shown_pts]
        series = [("At design airflow", xs, ys, "line")]
        markers = []
        if forecast is not None and forecast.date_at_final is not None:
            fdate = forecast.date_at_final
            fdate = fdate.date() if isinstance(fdate, datetime) else fdate
            series.append(
                (
                    "Forecast",
                    [xs[-1], fdate],
                    [ys[-1], to_display(value=final, quantity="pressure", system=system)],
                    "dashed",
                )
            )
            markers.append((fdate, f"change {fdate.isoformat()}"))
        hlines = [(to_display(value=final, quantity="pressure", system=system), "final")] if final else []
        svg = charts.time_series(series=series, y_label=f"Pressure drop ({p_label})", hlines=hlines, markers=markers)
        out.append(
            {
                "bank": bank,
                "svg": svg_data_uri(svg),
                "note": note,
                "forecast": forecast,
                "final": shown(final, "pressure", system),
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
