"""The property manager's read-only dashboard: own sites only, through inventory.selectors.sites_visible_to.

Compliance figures come from reports.compliance (through frontend.selectors), the same as in the PDFs.
"""

import datetime as dt

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import render
from django.views.decorators.http import require_GET

from engineering.units import to_display, unit_label
from inspections import display, reasons
from inspections.freeze import season_window
from inspections.reasons import text_without_subject
from inspections.selectors import reason_for
from inventory.today import today_for
from reports.documents.common import percent, shown

from .. import selectors
from ..charts import line_chart
from . import records


def _records_context(*, form_id: str, today: dt.date) -> dict:
    """The report forms of the page, asking by default for the period its figures show (ending on ``today``)."""
    start, end = selectors.default_period(today=today)
    return {"form_id": form_id, "period_start": start, "period_end": end, "layouts": records.LAYOUTS}


@login_required
@require_GET
def dashboard(request):
    figures, rows = selectors.site_summaries(user=request.user)
    return render(
        request,
        "frontend/manager/dashboard.html",
        {
            "f": figures,
            "rows": rows,
            "share": percent(figures.total.on_time_share),
            "findings": selectors.findings_rows(figures),
            "site_ids": [s.pk for s in figures.sites],
            **_records_context(form_id="all", today=figures.end),
        },
    )


@login_required
@require_GET
def site_detail(request, pk: int):
    site = selectors.site_for(user=request.user, pk=pk)
    if site is None:
        raise Http404("No such site that you may see.")
    system = request.user.unit_system
    p_unit = unit_label(quantity="pressure", system=system)
    t_unit = unit_label(quantity="temperature", system=system)

    def p(v):
        return to_display(value=v, quantity="pressure", system=system)

    today = today_for(site)
    figures = selectors.figures_for(user=request.user, site_ids=[site.pk])
    # Each bank's one status (reports.compliance.bank_filter_status: the latest judged point of the filters fitted
    # now, a technician's reading or a trend day): the table and the charts' captions, verdicts and outlooks read it.
    status_of = {row["filter"].pk: row for row in figures.filters if row["filter"] is not None}
    charts = []
    for trend in selectors.filter_trends(site=site):
        comp = trend["component"]
        status = status_of.get(comp.pk) or {}
        ev = status.get("evaluation")
        final = comp.specs.get("final_dp_pa")
        outlook = status.get("outlook")
        # No dashed line for a filter due now, nor to a forecast date already past (the table says "due now").
        ahead = outlook.forecast_ahead if outlook is not None else None
        forecast = [(ahead, p(final))] if ahead is not None and final else []
        charts.append(
            {
                "title": f"{comp.ahu.display_name} {comp.name}: pressure drop at design airflow",
                # The caption names the bank: the reason does not begin with it again.
                "reason": text_without_subject(
                    reason_for(evaluation=ev, unit_system=system)
                    if ev
                    else reasons.render(status.get("reason_parts") or [status.get("reason", "")], system),
                    comp.name,
                ),
                "verdict": status.get("verdict", ""),
                "svg": line_chart(
                    title=f"{comp.ahu.display_name} {comp.name} pressure drop at design airflow",
                    unit=p_unit,
                    series=[],
                    segments=[[(d, p(v)) for d, v in life] for life in trend["lives"]],
                    forecast=forecast,
                    markers=[(day, "filters changed") for day in trend["changes"]],
                    hline=(p(final), f"final {shown(final, 'pressure', system)}") if final else None,
                ),
                "evaluation": ev,
                "lives": trend["lives"],
                "sources": trend["sources"],
            }
        )
    # The site's own day throughout: its charts, its season and its temperatures.
    # The season freeze readiness judges (the running one while it runs, else the coming one): one date for the
    # chart's line, its caption and the readiness below.
    season, _opens = season_window(site=site, today=today)
    temps = selectors.outdoor_temperatures(site=site, today=today)
    t = [(d, to_display(value=v, quantity="temperature", system=system)) for d, v in temps]
    threshold = to_display(value=site.preheat_threshold_c, quantity="temperature", system=system)
    temp_chart = line_chart(
        title=f"{site.name}: daily minimum outdoor temperature",
        unit=t_unit,
        series=[x for x in t if x[0] <= today],
        forecast=[x for x in t if x[0] > today],
        hline=(threshold, f"preheat threshold {threshold:.0f} {t_unit}"),
        # The line only inside the chart's days (a season far off or long begun would squash the temperatures).
        vline=(season, "freeze season starts") if season and t and t[0][0] <= season <= t[-1][0] else None,
    )
    for row in figures.filters:
        d = row["derived"]
        row["corrected_dp"] = shown(row["corrected_dp_pa"], "pressure", system)
        row["loading"] = display.loading_words(d.get("loading_pct"))
        if row["outlook"] is not None:
            # Dates as the rest of the page writes them ("5 Jun 2025"), on the site's day.
            row["forecast"] = row["outlook"].words()
    return render(
        request,
        "frontend/manager/site.html",
        {
            "site": site,
            "charts": charts,
            "temp_chart": temp_chart,
            "season": season,
            "season_started": bool(season and season <= today),
            "f": figures,
            "share": percent(figures.total.on_time_share),
            "category_rows": [(c, percent(c.on_time_share)) for c in figures.categories],
            "findings": selectors.findings_rows(figures),
            "freeze_text": selectors.freeze_text(figures.freeze_counts),
            "site_ids": [site.pk],
            "label_site": site,
            "label_what": f"One label for each unit of {site.name} ({len(figures.units)}).",
            "default_layout": "letter-3x10" if system == "us" else "a4-3x8",
            **_records_context(form_id="site", today=figures.end),
        },
    )
