"""The property manager's read-only dashboard: own sites only, through inventory.selectors.sites_visible_to."""

import datetime as dt

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import render
from django.urls import NoReverseMatch, reverse
from django.utils import timezone
from django.views.decorators.http import require_GET

from engineering.units import to_display, unit_label

from .. import selectors
from ..charts import line_chart


def _report_links(site) -> list[dict]:
    """PDF records of the reports app, where its pages exist."""
    links = []
    for name, text in (
        ("reports:site_records", "Maintenance records (PDF)"),
        ("reports:compliance", "Compliance summary (PDF)"),
    ):
        try:
            links.append({"url": reverse(name, kwargs={"site_id": site.pk}), "text": text})
        except NoReverseMatch:
            continue
    return links


@login_required
@require_GET
def dashboard(request):
    rows = selectors.site_summaries(user=request.user)
    return render(request, "frontend/manager/dashboard.html", {"rows": rows, "severities": selectors.SEVERITIES})


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

    charts = []
    for trend in selectors.filter_trends(site=site):
        comp = trend["component"]
        ev = trend["evaluation"]
        forecast = []
        final = comp.specs.get("final_dp_pa")
        change = (ev.derived or {}).get("forecast_change_date") if ev else None
        if change and final:
            forecast = [(dt.date.fromisoformat(change), p(final))]
        charts.append(
            {
                "title": f"{comp.ahu.tag} {comp.name}: pressure drop",
                "svg": line_chart(
                    title=f"{comp.ahu.tag} {comp.name} pressure drop",
                    unit=p_unit,
                    series=[(d, p(v)) for d, v in trend["points"]],
                    forecast=forecast,
                    hline=(p(final), f"final {p(final):.2f} {p_unit}") if final else None,
                ),
                "evaluation": ev,
            }
        )
    temps = selectors.outdoor_temperatures(site=site)
    t = [(d, to_display(value=v, quantity="temperature", system=system)) for d, v in temps]
    today = timezone.localdate()
    threshold = to_display(value=site.preheat_threshold_c, quantity="temperature", system=system)
    temp_chart = line_chart(
        title=f"{site.name}: daily minimum outdoor temperature",
        unit=t_unit,
        series=[x for x in t if x[0] <= today],
        forecast=[x for x in t if x[0] > today],
        hline=(threshold, f"preheat threshold {threshold:.0f} {t_unit}"),
        vline=(site.freeze_season_start, "freeze season starts") if site.freeze_season_start else None,
    )
    summary = next((r for r in selectors.site_summaries(user=request.user) if r["site"].pk == site.pk), None)
    return render(
        request,
        "frontend/manager/site.html",
        {
            "site": site,
            "charts": charts,
            "temp_chart": temp_chart,
            "summary": summary,
            "reports": _report_links(site),
            "severities": selectors.SEVERITIES,
        },
    )
