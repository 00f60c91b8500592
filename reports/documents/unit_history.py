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
of its own ("Recorded": no limit applies to this reading, as the phone says it); the unit's own readings of the
visit (run-hours, airflow) stand in its heading.

The document prints landscape on the reader's paper (``reports.rendering.paper_for``): the tables keep
short terms (kinds, states, verdicts) whole and break names between words.

This module checks the inputs and puts the document together; a visit's rows are ``history_visits`` (their
cells ``history_cells``), the charts ``history_charts``.
"""

from __future__ import annotations

import zoneinfo
from datetime import date, datetime, time, timedelta

from django.db.models import Q

from inspections.models import Finding, Inspection
from inspections.selectors import findings_seen_on, item_labels, reason_for
from inventory.models import AHU
from inventory.selectors import ahus_visible_to
from inventory.today import today_for
from reports.rendering import html_render, paper_for
from scheduling.models import WorkOrder

from . import Built, Prepared, one_id, period, period_text, refuse_missing
from .common import shown, unit_system
from .history_cells import keep_units
from .history_charts import filter_charts, supply_chart
from .history_visits import history_visit
from .visit_record import readings_and_judgements

# The manager's finding pages read a judgement's cells from here as from ``history_cells``.
__all__ = ["build", "prepare"]


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
        .prefetch_related(*readings_and_judgements())
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
    visits = [
        history_visit(insp, system=system, labels=labels, tz=tz, findings=seen.get(insp.pk, [])) for insp in listed
    ]
    reading_count = sum(len(insp.readings.all()) for insp in listed)
    # The history's last day: its end, or the day it was asked for when that is earlier (the site's day).
    last_day = min(end, today_for(ahu.building.site, now=report.created_at))
    bank_charts = filter_charts(ahu=ahu, lo=lo, hi=hi, system=system, today=last_day, tz=tz)
    supply = supply_chart(inspections=listed, system=system, tz=tz)
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
            "filter_charts": bank_charts,
            # Two charts to a row: each filter bank's, then the supply air's.
            "chart_cells": [{"kind": "filter", "chart": fc} for fc in bank_charts]
            + ([] if bank_charts else [{"kind": "no_filters"}])
            + [{"kind": "supply"}],
            "supply_chart": supply,
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
