"""Reads of the pages: the property manager's dashboard (every site through inventory.selectors.sites_visible_to),
the units behind the technician's today and a scanned label, records and feeds.

Compliance figures (on-time share, overdue, findings, filters, freeze readiness) are
reports.compliance's; this module only picks the sites and splits them per site.
"""

from __future__ import annotations

import datetime as dt

from django.utils import timezone

from engineering.controls import Verdict
from inspections import display
from inspections.freeze import seasons_words
from inspections.models import Finding, Inspection
from inspections.reasons import text_said_once
from inspections.selectors import check_label, filter_series_for, filter_sources_words
from inventory.models import AHU, Component, ComponentKind, Site
from inventory.selectors import ahus_visible_to, label_lookup, sites_visible_to
from inventory.today import today_for
from reports import compliance
from scheduling.models import OutdoorTemperature, WorkOrder

SEVERITIES = compliance.SEVERITIES
PERIOD_DAYS = 365  # the compliance report's default period: the last 12 months


def default_period(*, today: dt.date) -> tuple[dt.date, dt.date]:
    """The period the pages show and the report forms ask for unless the person picks another: the
    ``PERIOD_DAYS`` up to ``today`` (the person's or the site's, ``inventory.today.today_for``)."""
    return today - dt.timedelta(days=PERIOD_DAYS), today


def figures_for(*, user, site_ids: list[int] | None = None, start=None, end=None, as_of=None):
    """reports.compliance figures for the sites ``user`` may see (all of them, or those of ``site_ids``).

    The figures themselves are computed only in reports.compliance, so pages and PDFs agree.
    """
    visible = sites_visible_to(user=user)
    if site_ids is not None:
        visible = visible.filter(pk__in=site_ids)
    rows = list(visible.values_list("pk", "time_zone"))
    as_of = as_of or timezone.now()
    # The period ends on the sites' today, as the compliance report's does.
    default_start, default_end = default_period(today=compliance.report_today([z for _, z in rows], as_of=as_of))
    return compliance.compliance_figures(
        site_ids=[pk for pk, _ in rows], start=start or default_start, end=end or default_end, as_of=as_of
    )


def site_summaries(*, user, as_of: dt.datetime | None = None) -> tuple[compliance.ComplianceFigures, list[dict]]:
    """The figures of all visible sites together, and per site what those figures hold unit by unit.

    Per site: units, overdue work, filter verdicts and freeze readiness, split from one
    ``compliance_figures`` call, so a constant number of queries however many sites there are.
    """
    figures = figures_for(user=user, as_of=as_of)
    rows = {
        s.pk: {
            "site": s,
            "units": 0,
            "overdue": 0,
            "filters": dict.fromkeys((Verdict.FAIL, Verdict.WATCH, Verdict.OK, "none"), 0),
            "filters_to_change": [],
            "freeze": dict.fromkeys(compliance.FREEZE_LABELS, 0),
            "freeze_not_ready": [],
            "freeze_seasons": set(),
        }
        for s in figures.sites
    }
    for unit in figures.units:
        rows[unit.building.site_id]["units"] += 1
    for item in figures.overdue:
        rows[item["work_order"].ahu.building.site_id]["overdue"] += 1
    for item in figures.filters:
        if item["filter"] is not None:
            verdict = item["verdict"] if item["verdict"] in (Verdict.FAIL, Verdict.WATCH, Verdict.OK) else "none"
            rows[item["unit"].building.site_id]["filters"][verdict] += 1
            if verdict == Verdict.FAIL:
                # Which banks, and who found them loaded (a technician's reading or the trend).
                rows[item["unit"].building.site_id]["filters_to_change"].append(
                    f"{item['unit'].display_name} — {item['filter'].name}: {item['source_label']}"
                )
    for item in figures.freeze:
        rows[item["unit"].building.site_id]["freeze"][item["status"]] += 1
        rows[item["unit"].building.site_id]["freeze_seasons"].add((item["season_start"], item["season_running"]))
        if item["status"] != compliance.FREEZE_READY:
            # Each unit that is not ready says why (inspections.freeze's words), not only a count.
            rows[item["unit"].building.site_id]["freeze_not_ready"].append(
                f"{item['unit'].display_name}: {item['reason']}"
            )
    for row in rows.values():
        row["freeze_text"] = freeze_text(row["freeze"])
        # The season judged, as the compliance report names it ("… that began 19 Oct 2026" while it runs).
        row["freeze_season_words"] = seasons_words(row["freeze_seasons"]) if row["freeze_seasons"] else ""
        per_site = figures.by_site.get(row["site"].pk, {})
        row["total"] = per_site.get("total")
        row["findings_total"] = per_site.get("findings_total", 0)
        share = row["total"].on_time_share if row["total"] else None
        row["on_time"] = "—" if share is None else f"{share * 100:.0f} %"
    return figures, list(rows.values())


def freeze_text(counts: dict[str, int]) -> str:
    """Readiness counts per unit as text, such as '2 ready, 1 due'."""
    parts = [f"{n} {compliance.FREEZE_LABELS[status].lower()}" for status, n in counts.items() if n]
    return ", ".join(parts) if parts else "no preheat to prove"


def findings_rows(figures: compliance.ComplianceFigures) -> list[dict]:
    """Open findings by severity (critical first) and age bucket, with a total per severity."""
    return [
        {
            "severity": severity,
            "by_age": [
                (label, figures.findings_matrix.get(severity, {}).get(label, 0)) for label in figures.age_labels
            ],
            "total": sum(figures.findings_matrix.get(severity, {}).values()),
        }
        for severity in SEVERITIES
    ]


def site_for(*, user, pk: int) -> Site | None:
    return sites_visible_to(user=user).filter(pk=pk).first()


def filter_trends(*, site: Site, limit: int = 6) -> list[dict]:
    """Per filter bank of the site with readings: its pressure drop at design airflow, one list of
    (day, Pa) per set of filters (``inspections.selectors.filter_series``, restarting at each change),
    where its points came from (technicians' readings, building-automation trend days). The bank's verdict is
    ``reports.compliance.bank_filter_status``'s (the site page reads it from the compliance figures)."""
    banks = list(
        Component.objects.filter(ahu__building__site=site, kind=ComponentKind.FILTER_BANK)
        .select_related("ahu__building")
        .order_by("pk")
    )
    series = filter_series_for(components=banks)
    rows = [
        {
            "component": bank,
            "lives": [[(p.at.date(), p.corrected_dp_pa) for p in life.points] for life in series[bank.pk].lives],
            "changes": [life.changed_at.date() for life in series[bank.pk].lives if life.changed_at is not None],
            "sources": filter_sources_words(points=series[bank.pk].points),
        }
        for bank in banks
        if series[bank.pk].points
    ][:limit]
    return rows


def outdoor_temperatures(*, site: Site, today: dt.date | None = None, days_back: int = 30, days_ahead: int = 60):
    today = today or today_for(site)
    return list(
        OutdoorTemperature.objects.filter(
            site=site, date__gte=today - dt.timedelta(days=days_back), date__lte=today + dt.timedelta(days=days_ahead)
        )
        .order_by("date")
        .values_list("date", "min_c")
    )


def latest_inspection(*, work_order):
    """The newest stored form of the work order (amendments point to it), or None."""
    return (
        Inspection.objects.filter(work_order=work_order)
        .select_related("verified_by", "technician")
        .order_by("-finished_at", "-id")
        .first()
    )


def record_inspection(*, work_order):
    """The signed record of the work order: the form that completed it, else the newest stored form, or None.

    A later form for the same work order (sent twice, or after completion) is stored and flagged
    beside it; verification and the page's status follow the form that did the work.
    """
    completing = (
        Inspection.objects.filter(work_order=work_order, work_order_completed=True)
        .select_related("verified_by", "technician")
        .order_by("-finished_at", "-id")
        .first()
    )
    return completing or latest_inspection(work_order=work_order)


def item_labels(checklist: dict | None) -> dict[tuple[str, str | None], str]:
    """{(item key, component label code): "Label — component name"} from a checklist (inspections/SYNC.md §1)."""
    labels = {}
    for template in (checklist or {}).get("templates", []):
        for item in template.get("items", []):
            comp = item.get("component") or {}
            text = item.get("label") or item.get("key")
            labels[(item.get("key"), comp.get("label_code"))] = f"{text} — {comp['name']}" if comp.get("name") else text
    return labels


def result_for_display(*, result: dict | None, system: str, labels: dict | None = None) -> dict | None:
    """The server's answer to a synced form, with each evaluation's derived values in the reader's units.

    The reasons are kept as the inspections app wrote them (SI, see inspections/SYNC.md);
    the derived values beside them are converted by the same rules the inspection PDF uses.
    """
    if not result:
        return None
    shown_result = dict(result)
    states = dict(WorkOrder.State.choices)
    state = result.get("work_order_state")
    shown_result["status_words"] = display.status_words(result.get("status"))
    # A stored result already carries the state in words; a fresh answer carries its code.
    shown_result["work_order_state_words"] = states[state].lower() if state in states else (state or "")
    # The server's messages name the item in words; the keys of the form's fields are not shown.
    shown_result["error_lines"] = [
        " ".join(str(m) for m in (msgs if isinstance(msgs, list | tuple) else [msgs]))
        for msgs in (result.get("errors") or {}).values()
    ]
    severities = dict(Finding.Severity.choices)
    shown_result["findings"] = [
        {**f, "severity_words": severities.get(f.get("severity"), "")} for f in result.get("findings") or []
    ]
    shown_result["evaluation"] = [
        {
            **e,
            "label": (label := (labels or {}).get((e.get("item"), e.get("component"))) or _check_words(e)),
            # The label names the part ("Pressure drop — Final filters"): the reason does not say it again.
            # …nor the item ("Fin condition — Heating coil: Clean", not "…: Fin condition: Clean").
            "reason": text_said_once(e.get("reason") or "", label),
            "verdict_words": display.verdict_words(e.get("verdict")),
            "derived_display": display.derived_rows(e.get("derived") or {}, system, item=e.get("item") or ""),
            # The same values as sentences a technician reads, never "label: value; label: value".
            "derived_text": display.derived_text(e.get("derived") or {}, system, item=e.get("item") or ""),
        }
        for e in result.get("evaluation") or []
    ]
    return shown_result


def _check_words(evaluation: dict) -> str:
    """A judgement's name when the form's labels do not give one (never the item's key)."""
    return check_label(check=evaluation.get("check") or "", item="", labels={})


def calendar_feed_of(*, user):
    """The person's calendar address still in force (the newest), or None."""
    from scheduling.models import CalendarFeed

    return CalendarFeed.objects.filter(user=user, revoked_at__isnull=True).order_by("-created_at").first()


def ahus_by_id(*, ids) -> dict[int, AHU]:
    """Units by id with their building and site, in one query (the units of work the person already sees)."""
    return {ahu.pk: ahu for ahu in AHU.objects.filter(pk__in=list(ids)).select_related("building__site")}


def unit_for_label(*, user, code: str) -> tuple[AHU | None, Component | None]:
    """(unit, component or None) behind a label code the person may see; (None, None) otherwise."""
    found = label_lookup(user=user, code=code)
    if found is None:
        return None, None
    if isinstance(found, Component):
        return ahus_visible_to(user=user).get(pk=found.ahu_id), found
    return found, None
