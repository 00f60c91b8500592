"""The unit history's charts: each filter bank's pressure drop at design airflow per set of filters with its
change forecast, and the supply air's deviation from its set point with the watch and fail bands."""

from __future__ import annotations

import zoneinfo
from collections import defaultdict
from datetime import date, datetime, timedelta

from accounts.clock import local_date_of
from engineering.controls import supply_temperature_check
from engineering.errors import EngineeringInputError
from engineering.filters import filter_forecast
from engineering.units import to_display, unit_label
from inspections.models import Inspection, Reading
from inspections.selectors import filter_series_for, filter_sources_words
from inventory.models import AHU, ComponentKind
from reports import charts
from reports.compliance import filter_outlook
from reports.rendering import svg_data_uri

from .common import shown
from .visit_words import number_shown


def filter_charts(
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
    unplotted = _unplotted(banks=banks, series=all_series, lo=lo, hi=hi, system=system, tz=tz)
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
            out.append(
                {
                    "bank": bank,
                    "svg": None,
                    "note": "No filter reading of the period could be corrected to design airflow."
                    if bank.pk in unplotted
                    else "No filter readings in the period.",
                    "forecast": None,
                    "unplotted": unplotted.get(bank.pk, ""),
                }
            )
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
                "unplotted": unplotted.get(bank.pk, ""),
                # The plotted numbers (SI), one (name, [(day, Pa at design airflow)]) per set of filters.
                "lines": lines,
            }
        )
    return out


def _unplotted(*, banks: list, series: dict, lo: datetime, hi: datetime, system: str, tz: zoneinfo.ZoneInfo) -> dict:
    """Per bank, in words, the technicians' pressure drops of the period that have no point on its chart: read at
    an airflow too far from design to correct them to design airflow (``inspections.selectors.filter_banks``), so
    the latest visit's reading never silently goes missing ("162 Pa on 5 Dec 2026")."""
    plotted = {(bank_pk, p.inspection_id) for bank_pk, s in series.items() for p in s.points}
    readings = Reading.objects.filter(
        component__in=banks,
        item__template__code="filter_check",
        item__key="dp",
        value_si__isnull=False,
        inspection__finished_at__gte=lo,
        inspection__finished_at__lt=hi,
    ).select_related("inspection")
    words: dict[int, list[str]] = defaultdict(list)
    for r in sorted(readings, key=lambda r: r.inspection.finished_at):
        if (r.component_id, r.inspection_id) not in plotted:
            day = r.inspection.finished_at.astimezone(tz).date()
            words[r.component_id].append(f"{number_shown(r.value_si, 'pressure', system)} on {local_date_of(day)}")
    why = "read at an airflow too far from design airflow to correct to it (see the visit's record)"
    return {pk: f"{', '.join(w)} {why}" for pk, w in words.items()}


def supply_chart(*, inspections: list[Inspection], system: str, tz: zoneinfo.ZoneInfo | None = None) -> dict:
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
