"""A fault found in the trends as a finding of its unit: one finding per open fault, through the findings' own path.

Each open ``Fault`` is one ``inspections.Finding`` of its unit (and part, where the rule names one), source
"building-automation trends" with the rule (FC6 …), raised and updated each judged day through
``inspections.services.findings.finding_observe_source`` (the path a visit's failure takes: one open finding per
unit, part and problem), and closed with its fault: "absent for N days in the building-automation trends", or its
corrective work completed. A fault found again after it closed is a new fault with a new finding. The fault points
at its finding (``Fault.finding``); the finding's page links to the fault's evidence chart and back.

The finding's words and evidence are made here from the fault's fields alone (``finding_fields``), so the
migration that gave the faults open before it their findings says them the same way.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import inspect
import zoneinfo

from accounts.clock import local_time_text
from engineering.faults.consequences import consequence_text
from engineering.faults.freeze import G36_FREEZE_STAGES, stage_number
from engineering.faults.rules import RULES_BY_CODE
from engineering.filters import filter_loading
from engineering.formatting import count_text
from inspections import reasons
from inspections.models import Finding

from .fault_models import Fault
from .freeze_words import freeze_parts

# The finding's source: the same value the trend-fed meter readings and filter points carry.
SOURCE = Finding.Source.BAS_TREND.value
SOURCE_WORDS = Finding.Source.BAS_TREND.label.lower()


def latest_window(windows: list[dict] | None) -> dict | None:
    """The evidence window that ended last (None without windows)."""
    ends = [w for w in windows or [] if w.get("start") and w.get("end")]
    return max(ends, key=lambda w: (w["end"], w["start"])) if ends else None


def finding_title(title: str, component_name: str | None) -> str:
    """The finding's title as a visit's names its part: "<the rule's words> — <part>"."""
    return f"{title} — {component_name}" if component_name else title


def finding_evidence(*, section: str, windows: list[dict] | None, share: float | None, days: int) -> dict:
    """What a reader needs beside the text: the rule's published section, the latest evidence window (ISO times),
    the share of the operating time the rule could judge that the fault took on its latest day (0–1) and the
    number of days it was found; the lowest supply air of a freeze event's window."""
    w = latest_window(windows)
    out: dict = {"section": section, "share": share, "days": days}
    if w is not None:
        out.update(start=w["start"], end=w["end"])
        if w.get("lowest_c") is not None:
            out["lowest_c"] = w["lowest_c"]
    return out


def evidence_window_words(evidence: dict, zone: str) -> str:
    """The latest evidence window on the site's clock, "2 Dec 2026 06:15 CET – 2 Dec 2026 18:00 CET" ("" without
    one)."""
    start, end = evidence.get("start"), evidence.get("end")
    if not start or not end:
        return ""
    return (
        f"{local_time_text(dt.datetime.fromisoformat(start), zone=zone)} – "
        f"{local_time_text(dt.datetime.fromisoformat(end), zone=zone)}"
    )


def share_words(share: float | None) -> str:
    return "" if share is None else f"{share * 100:.0f} % of the operating time the rule could judge"


def finding_parts(
    *, code: str, formula: str, evidence: dict, consequence: dict | None, zone: str, windows: list[dict] | None = None
) -> list:
    """The finding's text (inspections.reasons parts, SI): the rule and what it tests, the latest evidence window
    and the share of the operating time, the days, and what it costs; a freeze event says what happened
    (``freeze_words.freeze_parts``, on the site's clock). Where it was found is the finding's source
    (``Finding.source_words``), which every page and PDF says beside this text: the text does not say it again."""
    days = int(evidence.get("days") or 0)
    days_words = f"; found on {count_text(days, 'day')}" if days else ""
    if code == Fault.FREEZE and windows:
        return reasons.flatten(freeze_parts(windows, zone), days_words)
    parts: list = [f"Rule {code}"]
    if formula:
        parts.append(f" ({formula})")
    window = evidence_window_words(evidence, zone)
    if window:
        parts.append(f"; latest evidence window {window}")
    share = share_words(evidence.get("share"))
    if share:
        parts.append(f", {share} that day")
    parts.append(days_words)
    if evidence.get("lowest_c") is not None:
        parts += ["; the supply air fell to ", {"value": float(evidence["lowest_c"]), "quantity": "temperature"}]
    # What it costs, in the reader's units when read; without a number, what the rule's fault risks and what to
    # check first (engineering.faults.consequences.RISKS: "check for a leaking cooling valve or a faulty sensor").
    if consequence_text(code, consequence):
        parts += ["; ", reasons.consequence(code, consequence or {})]
    return reasons.flatten(parts)


def finding_fields(fault) -> dict:
    """Everything the finding of ``fault`` says, from the fault's own fields (a ``Fault`` or its historical
    model in a migration): title, severity, condition, rule, evidence, text parts and when it was seen."""
    zone = fault.ahu.building.site.time_zone
    evidence = finding_evidence(
        section=fault.section, windows=fault.windows, share=fault.share, days=len(fault.days_seen or [])
    )
    return {
        "title": finding_title(fault.title, fault.component.name if fault.component_id else None),
        "severity": fault.severity,
        "condition_code": fault.condition_code,
        "rule": fault.code,
        "evidence": evidence,
        "reason_parts": finding_parts(
            code=fault.code,
            formula=fault.formula,
            evidence=evidence,
            consequence=fault.consequence,
            zone=zone,
            windows=fault.windows,
        ),
        "first_seen_at": fault.first_seen_at,
        "last_seen_at": fault.last_seen_at,
        "times_seen": max(len(fault.days_seen or []), 1),
    }


def trend_reading_parts(*, rule: str, evidence: dict, component=None) -> tuple[list, list]:
    """A trend finding's "Reading" and "Limit" as reason parts (SI; rendered in the reader's units): what the trends
    saw and what it was judged against, where a visit's finding shows its reading and limit.

    A loaded filter: its pressure drop at design airflow (the day's median) and its share of the clean-to-final span,
    against the change point and the bank's final pressure drop. A freeze event: the lowest supply air, against the
    first freeze-protection stage. A guideline rule: the share of the operating time it held on its latest day,
    against the rule's test. Empty lists where the evidence holds nothing to say."""
    specs = (component.specs or {}) if component is not None else {}
    if rule == FILTER_RULE:
        reading: list = []
        if evidence.get("corrected_dp_pa") is not None:
            dp = reasons.q(float(evidence["corrected_dp_pa"]), "pressure")
            reading += [dp, " at design airflow (the day's median)"]
        if evidence.get("loading_pct") is not None:
            share = f"{float(evidence['loading_pct']):.0f} % of the clean-to-final span"
            reading.append(f", {share}" if reading else share)
        limit: list = [f"change at {FILTER_CHANGE_FRACTION * 100:.0f} % of the span"]
        if specs.get("clean_dp_pa") is not None and specs.get("final_dp_pa") is not None:
            limit += [" from clean ", reasons.q(float(specs["clean_dp_pa"]), "pressure")]
            limit += [" to final ", reasons.q(float(specs["final_dp_pa"]), "pressure")]
        return reasons.flatten(reading), reasons.flatten(limit)
    if rule == Fault.FREEZE:
        first = min(G36_FREEZE_STAGES, key=lambda st: (stage_number(st.name), -st.below_c))
        reading = (
            ["supply air down to ", reasons.q(float(evidence["lowest_c"]), "temperature")]
            if evidence.get("lowest_c") is not None
            else []
        )
        limit = [f"freeze-protection {first.name}: below ", reasons.q(first.below_c, "temperature")]
        return reading, reasons.flatten(limit, f" for {first.for_s / 60:g} min")
    share = share_words(evidence.get("share"))
    reading = [f"fault during {share} on its latest day"] if share else []
    known = RULES_BY_CODE.get(rule)
    return reading, ([f"rule {rule}: {known.formula}"] if known is not None else [])


def absent_words(days: int) -> str:
    """Why a trend finding closed when its fault was no longer found: "absent for 7 days in the trends"."""
    return f"absent for {count_text(days, 'day')} in the {SOURCE_WORDS}"


# ---------------------------------------------------------------------------
# Services (called inside automation.judging's writes)
# ---------------------------------------------------------------------------


def fault_finding_keep(*, fault, by):
    """The fault's one finding, raised or updated with what the fault holds now; the fault points at it."""
    from inspections.services.findings import SourceSeen, finding_observe_source

    f = finding_fields(fault)
    finding, _opened = finding_observe_source(
        seen=SourceSeen(
            ahu=fault.ahu,
            component=fault.component,
            source=SOURCE,
            rule=f["rule"],
            severity=f["severity"],
            title=f["title"],
            reason_parts=f["reason_parts"],
            condition_code=f["condition_code"],
            first_seen_at=f["first_seen_at"],
            last_seen_at=f["last_seen_at"],
            times_seen=f["times_seen"],
            evidence=f["evidence"],
        ),
        by=by,
    )
    if fault.finding_id != finding.pk:
        fault.finding = finding
        fault.save(update_fields=["finding"])
    return finding


def fault_finding_close(*, fault, at: dt.datetime, cause: str, by) -> None:
    """Close the fault's finding with it: absent (the days since it was last seen, in words) or corrected."""
    from inspections.services.findings import finding_close_source

    if fault.finding_id is None:
        return
    if cause == "absent":
        days = max(int((at - fault.last_seen_at).total_seconds() // 86_400), 0)
        finding_close_source(
            finding=fault.finding, at=at, cause=Finding.CloseCause.ABSENT, note=absent_words(days), by=by
        )
    else:
        finding_close_source(finding=fault.finding, at=at, cause=Finding.CloseCause.CORRECTED, by=by)


# ---------------------------------------------------------------------------
# A filter bank the trend found loaded (automation.feeds.filter_feed)
# ---------------------------------------------------------------------------

FILTER_RULE = "FILTER"  # the finding's rule: a trend finding names one (the findings' DB constraint)
# The change point the feed judges with: ``engineering.filters.filter_loading``'s own fail fraction.
FILTER_CHANGE_FRACTION = float(inspect.signature(filter_loading).parameters["fail_fraction"].default)
FILTER_SECTION = (
    f"change at {FILTER_CHANGE_FRACTION * 100:.0f} % of the clean-to-final pressure-drop span "
    "(engineering.filters; common practice)"
)


def _open_filter_finding(bank):
    from inspections.services.findings import source_problem

    return (
        Finding.objects.filter(
            ahu_id=bank.ahu_id,
            component=bank,
            problem=source_problem(source=SOURCE, rule=FILTER_RULE),
            state=Finding.State.OPEN,
        )
        .select_related("corrective_work_order")
        .first()
    )


def open_filter_findings(*, banks) -> dict:
    """{bank id: its open "filter loaded" finding from the trends} of many banks in one query (as
    ``_open_filter_finding`` picks each)."""
    from inspections.services.findings import source_problem

    out: dict = {}
    for finding in Finding.objects.filter(
        ahu_id__in={b.ahu_id for b in banks},
        component__in=[b.pk for b in banks],
        problem=source_problem(source=SOURCE, rule=FILTER_RULE),
        state=Finding.State.OPEN,
    ).select_related("corrective_work_order"):
        out.setdefault(finding.component_id, finding)
    return out


def filter_finding_keep(*, bank, row, judged, start: dt.datetime, end: dt.datetime, work_order, by):
    """The bank's one open finding "filter loaded", raised or updated by a trend day (``row``, a ``FilterDay``
    judged FAIL over the site day ``start``–``end``) through the findings' own path, holding the corrective work
    the feed proposed (``work_order``; none other is proposed for it)."""
    from django.core.exceptions import ValidationError

    from inspections.services.findings import (
        CONDITION_TITLES,
        SourceSeen,
        finding_observe_source,
        finding_work_order_attach,
    )

    from .fault_models import FilterDay
    from .feeds import FILTER_CONDITION

    held = _open_filter_finding(bank)
    # Seen over the site day: first seen at its start, last seen at its end.
    first_seen = min(held.opened_at, start) if held is not None else start
    zone = zoneinfo.ZoneInfo(bank.ahu.building.site.time_zone)
    first_day = first_seen.astimezone(zone).date()
    days = FilterDay.objects.filter(component=bank, verdict="fail", day__gte=first_day, day__lte=row.day).count()
    last_seen = max(held.last_seen_at, end) if held is not None and held.last_seen_at else end
    evidence = finding_evidence(
        section=FILTER_SECTION, windows=[{"start": start.isoformat(), "end": end.isoformat()}], share=None, days=days
    )
    evidence.update(corrected_dp_pa=round(row.corrected_dp_pa, 1), loading_pct=row.loading_pct)
    # The judgement in the reader's units (its quantities as parts); the forecast words stay on the day. Where it was
    # found (the source) and the bank (the title) are said beside the text by every page: not again in it.
    parts = reasons.flatten(
        f"{row.day:%-d %b %Y}: ",
        list(judged.parts),
        f" (trend median of {row.samples} samples with the fan running)",
    )
    finding, _opened = finding_observe_source(
        seen=SourceSeen(
            ahu=bank.ahu,
            component=bank,
            source=SOURCE,
            rule=FILTER_RULE,
            severity="high" if judged.fraction_of_span >= 1.0 else "medium",  # as the proposed work's priority
            title=finding_title(CONDITION_TITLES[FILTER_CONDITION], bank.name),
            reason_parts=parts,
            condition_code=FILTER_CONDITION,
            first_seen_at=first_seen,
            last_seen_at=last_seen,
            times_seen=max(days, 1),
            evidence=evidence,
        ),
        by=by,
    )
    if work_order is not None and finding.corrective_work_order_id != work_order.pk:
        # Refused when the finding already holds other open corrective work (a supervisor's): it keeps that one.
        with contextlib.suppress(ValidationError):
            finding_work_order_attach(finding=finding, work_order=work_order, by=by)
    return finding


def filter_finding_clear(*, bank, row, end: dt.datetime, by, open_findings: dict | None = None) -> bool:
    """Close the bank's open "filter loaded" finding when a trend day later than it was last seen judges the
    bank below its change point (new filters, or the loading fell back); False when none was open.
    ``open_findings``: ``open_filter_findings`` of the site's banks, read before this day's writes."""
    from inspections.services.findings import finding_close_source

    held = _open_filter_finding(bank) if open_findings is None else open_findings.get(bank.pk)
    if held is None or (held.last_seen_at is not None and end <= held.last_seen_at):
        return False
    loading = "" if row.loading_pct is None else f" ({row.loading_pct:.0f} % of the clean-to-final span)"
    return finding_close_source(
        finding=held,
        at=end,
        cause=Finding.CloseCause.ABSENT,
        note=f"below the change point in the {SOURCE_WORDS} on {row.day.isoformat()}{loading}",
        by=by,
    )
