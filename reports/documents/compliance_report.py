"""Site compliance report for a period: one site or a whole portfolio.

A one-page summary first, then preventive work by task category (table and
chart), overdue work, open findings by severity and age and then each of them (most severe and oldest
first, with the corrective work it holds), the filter status of
every unit and freeze-protection readiness. Figures come from
``reports.compliance`` only.
"""

from __future__ import annotations

from datetime import datetime, timedelta

from django.core.exceptions import ValidationError

from accounts.models import Organisation
from engineering.controls import Verdict
from inspections import display
from inventory.display import usual_zone
from inventory.selectors import sites_visible_to
from reports import charts
from reports.compliance import FREEZE_LABELS, compliance_figures, report_today
from reports.rendering import html_render, paper_for, svg_data_uri

from . import Built, Prepared, id_list, period, period_text, refuse_missing, single_organisation
from .common import percent, shown, unit_system

# A whole portfolio in one report: the benchmark's large size is 5,000 units on 500 sites.
MAX_SITES = 1000


def prepare(*, user, parameters: dict, requested_at: datetime) -> Prepared:
    site_ids = id_list(parameters, "sites")
    visible = sites_visible_to(user=user)
    if site_ids:
        rows = list(visible.filter(pk__in=site_ids).values_list("pk", "organisation_id", "time_zone"))
        refuse_missing("sites", site_ids, {r[0] for r in rows}, "site")
    else:
        rows = list(visible.values_list("pk", "organisation_id", "time_zone"))
        if not rows:
            raise ValidationError({"sites": "you may see no site, so there is nothing to report on"})
    if len(rows) > MAX_SITES:
        raise ValidationError({"sites": f"{len(rows)} sites: at most {MAX_SITES} in one report"})
    # The sites' today, as the figures read it (not the request's UTC date: a site east of UTC is a day on).
    today = report_today([r[2] for r in rows], as_of=requested_at)
    start, end = period(parameters, default_start=today - timedelta(days=365), default_end=today)
    return Prepared(
        parameters={
            "sites": sorted(r[0] for r in rows),
            "start": start.isoformat(),
            "end": end.isoformat(),
            "unit_system": unit_system(parameters, user),
        },
        site_ids=sorted(r[0] for r in rows),
        organisation_id=single_organisation({r[1] for r in rows}, "sites"),
    )


def build(*, report) -> Built:
    from datetime import date

    p = report.parameters
    system = p["unit_system"]
    figures = compliance_figures(
        site_ids=p["sites"],
        start=date.fromisoformat(p["start"]),
        end=date.fromisoformat(p["end"]),
        as_of=report.created_at,
    )
    organisation = Organisation.objects.get(pk=report.organisation_id)
    for row in figures.filters:
        d = row["derived"]
        row["corrected_dp"] = shown(row["corrected_dp_pa"], "pressure", system)
        row["loading"] = display.loading_words(d.get("loading_pct"))
    filter_rows = _filter_rows(figures.filters)
    filter_counts = dict.fromkeys((Verdict.OK, Verdict.WATCH, Verdict.FAIL, "none"), 0)
    for row in figures.filters:
        filter_counts[row["verdict"] if row["verdict"] in filter_counts else "none"] += 1
    high_findings = sum(sum(figures.findings_matrix.get(s, {}).values()) for s in ("critical", "high"))
    single = len(figures.sites) == 1
    scope = figures.sites[0].name if single else f"{len(figures.sites)} sites"
    title = f"Compliance report — {scope}, {period_text(p)}"
    html = html_render(
        template="reports/compliance.html",
        context={
            "organisation": organisation,
            "f": figures,
            "single": single,
            "scope": scope,
            "share": percent(figures.total.on_time_share, 1),
            "category_rows": [(c, percent(c.on_time_share)) for c in figures.categories],
            "chart": svg_data_uri(charts.compliance_bars(figures.categories)),
            "filter_rows": filter_rows,
            "filter_counts": filter_counts,
            "high_findings": high_findings,
            "freeze_labels": FREEZE_LABELS,
            "system": system,
            "unit_count": len(figures.units),
        },
        title=title,
        paper=paper_for(system),
        generated_at=report.created_at,
        zone=usual_zone([s.time_zone for s in figures.sites]),
        subject=f"Preventive maintenance compliance of {scope}",
    )
    return Built(html=html, title=title)


def _filter_rows(filters: list[dict]) -> list[dict]:
    """The filter table's rows: a bank's row for each bank with a reading; a unit's banks with no reading share one
    row that names them all ("Pre-filters; Final filters"), as they share everything else (no reading, so no
    pressure drop, loading, verdict or forecast). Fewer rows for a large portfolio's new units (issue 17)."""
    rows: list[dict] = []
    for r in filters:
        bank = r["filter"].name if r["filter"] else None
        last = rows[-1] if rows else None
        if (
            r["at"] is None
            and bank is not None
            and last is not None
            and last["status"] is None
            and last["banks"]
            and last["unit"].pk == r["unit"].pk
        ):
            last["banks"].append(bank)
            continue
        rows.append({"unit": r["unit"], "banks": [bank] if bank else [], "status": r if r["at"] is not None else None})
    return rows
