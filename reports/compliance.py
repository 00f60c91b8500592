"""Compliance figures: the one place they are computed. Screens, APIs and PDFs read them from here.

Rules (all dates are the site's local dates; ``as_of`` is the moment the
figures are taken, for a report its requested time; "the date of ``as_of``" is each site's today then,
``inventory.today.today_for``, and for several sites together the latest of them, ``report_today``):

Preventive work in a period ``start``–``end`` (both days included)
    Counted per *task occurrence* (``scheduling.WorkOrderTask`` of a preventive
    work order), grouped by the task's category. An occurrence belongs to the
    period when its ``due_date`` lies inside it. Its *deadline* is
    ``due_date + grace_days`` of its task; the deadline day itself is still in
    time. Its completion is the occurrence's own ``completed_at`` or, failing
    that, the work order's when the work order is completed or verified.
    Completions up to ``as_of`` count. The cut-off ``evaluated_on`` is the
    earlier of ``end`` and the date of ``as_of``.

    - **on time**: completed on or before the deadline;
    - **late**: completed after the deadline;
    - **missed**: not completed, and the deadline is before ``evaluated_on``;
    - **not yet due**: not completed, deadline on or after ``evaluated_on``
      (still inside its grace when the period closes, or the period is not over);
    - **cancelled**: not completed and its work order was cancelled.

    **On-time share** = on time / (on time + late + missed). Not yet due and
    cancelled occurrences are left out. With nothing in the denominator the
    share is ``None`` (shown as "—"), never 0 % or NaN.

Overdue now
    Open work orders (planned, assigned, in progress), of any kind, whose
    deadline is before the date of ``as_of``. The deadline of a work order is
    the last day of its grace window: the day before the scheduler's
    ``overdue_on`` (its first overdue day) when set, else ``due_date`` plus the
    smallest grace of its tasks (0 without tasks). The board, the escalation
    e-mails and these figures therefore call the same day overdue.

Open findings by severity and age
    Findings open at ``as_of`` (state open, opened on or before it). Age in
    whole days from opening to ``as_of``, in buckets 0–30, 31–90, 91–180 and
    over 180 days. The same rows are listed one by one (``open_findings``),
    most severe first and within a severity the oldest first, each with the
    corrective work it holds at ``as_of`` in words (``corrective_work_words``)
    and who saw it (``Finding.source_words``: the building-automation trends
    and their rule, for a fault the trends found).

Filter status of every unit
    For each filter bank of each unit, ``bank_filter_status``: the latest judged point of its one series,
    ``inspections.selectors.filter_series`` (points on or before ``as_of``), the series the charts and the
    unit history read, whether a technician's reading or a building-automation trend day, with its source.
    After a change that is the reading just after it, judged by the check of new filters, with its loading
    by engineering.filters and no forecast yet; a reading otherwise is the filter check's ``filter_loading``
    evaluation: verdict, loading % and the change forecast it stored; a trend day is judged by the same
    engineering.filters.filter_loading the trend feed used and forecast from the filters fitted now. Either
    is judged on the site's today by ``filter_outlook`` (the one rule the site page and the unit history
    also call: "now" when the filter was already at or over its final value; a stored date before today
    reads "due now (forecast for …)"). A point that could not be judged (airflow too far from design, no
    clean or final value) is skipped.

Freeze-protection readiness before the coming season
    For each unit with an electric preheater or a preheat coil, from what its
    latest freeze-protection test found and the freeze findings still open:
    ``inspections.freeze.freeze_readiness`` decides it (rules there), these
    figures only count it. A unit is **ready** (proven, every step passed, on or
    before the season start), **done late**, **due**, **not ready** (a failed test,
    an open critical or high freeze finding, or untested once the season began)
    or **season unknown**, each with its reason in plain words.
"""

from __future__ import annotations

import contextlib
import dataclasses
import zoneinfo
from collections import defaultdict
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta

from django.db.models import Min, Q

from accounts.clock import local_date_of
from engineering import filters as engineering_filters
from engineering.errors import EngineeringInputError
from inspections import display
from inspections import freeze as freeze_rules
from inspections.freeze import last_season_end  # noqa: F401  (re-exported: the window rule lives there)
from inspections.models import Evaluation, Finding, finding_age_days
from inspections.selectors import FILTER_READING, filter_series_for
from inventory.models import AHU, Component, ComponentKind, Site
from inventory.today import today_for
from scheduling.models import TaskCategory, WorkOrder, WorkOrderTask

ON_TIME, LATE, MISSED, NOT_YET_DUE, CANCELLED = "on_time", "late", "missed", "not_yet_due", "cancelled"
OUTCOMES = (ON_TIME, LATE, MISSED, NOT_YET_DUE, CANCELLED)
AGE_BUCKETS = ((0, 30, "0–30 days"), (31, 90, "31–90 days"), (91, 180, "91–180 days"), (181, None, "over 180 days"))
SEVERITIES = tuple(reversed(Finding.Severity.values))  # critical first
FREEZE_READY, FREEZE_LATE, FREEZE_DUE, FREEZE_NOT_READY, FREEZE_UNKNOWN = (
    freeze_rules.READY,
    freeze_rules.DONE_LATE,
    freeze_rules.DUE,
    freeze_rules.NOT_READY,
    freeze_rules.UNKNOWN,
)
FREEZE_LABELS = freeze_rules.LABELS


@dataclass(frozen=True)
class Occurrence:
    """One due task occurrence, reduced to what the rules need."""

    category: str
    due_date: date
    grace_days: int
    completed_on: date | None
    cancelled: bool = False
    site_id: int | None = None

    @property
    def deadline(self) -> date:
        try:
            return self.due_date + timedelta(days=self.grace_days)
        except OverflowError:  # a due date stored at the calendar's end (before the input policy): never late
            return date.max


def occurrence_outcome(occ: Occurrence, *, evaluated_on: date) -> str:
    """on_time / late / missed / not_yet_due / cancelled, by the rules in the module docstring."""
    if occ.completed_on is not None:
        return ON_TIME if occ.completed_on <= occ.deadline else LATE
    if occ.cancelled:
        return CANCELLED
    return MISSED if occ.deadline < evaluated_on else NOT_YET_DUE


@dataclass
class CategoryFigures:
    category: str
    label: str
    counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(OUTCOMES, 0))

    @property
    def due(self) -> int:
        return sum(self.counts.values())

    @property
    def judged(self) -> int:
        return self.counts[ON_TIME] + self.counts[LATE] + self.counts[MISSED]

    @property
    def on_time_share(self) -> float | None:
        return self.counts[ON_TIME] / self.judged if self.judged else None

    def __getattr__(self, name: str) -> int:
        # Templates read figures.on_time, figures.late, ...
        counts = self.__dict__.get("counts", {})
        if name in counts:
            return counts[name]
        raise AttributeError(name)


def preventive_figures(
    occurrences: Iterable[Occurrence], *, start: date, end: date, as_of: date
) -> tuple[list[CategoryFigures], CategoryFigures]:
    """Per-category counts (categories in the library's order, only those with work) and the total."""
    evaluated_on = min(end, as_of)
    labels = dict(TaskCategory.choices)
    by_cat: dict[str, CategoryFigures] = {}
    total = CategoryFigures("all", "All categories")
    for occ in occurrences:
        if not start <= occ.due_date <= end:
            continue
        outcome = occurrence_outcome(occ, evaluated_on=evaluated_on)
        fig = by_cat.setdefault(occ.category, CategoryFigures(occ.category, labels.get(occ.category, occ.category)))
        fig.counts[outcome] += 1
        total.counts[outcome] += 1
    order = {c: i for i, c in enumerate(TaskCategory.values)}
    rows = sorted(by_cat.values(), key=lambda f: (order.get(f.category, len(order)), f.category))
    return rows, total


def age_bucket(days: int) -> str:
    for low, high, label in AGE_BUCKETS:
        if days >= low and (high is None or days <= high):
            return label
    return AGE_BUCKETS[0][2]


@dataclass
class ComplianceFigures:
    start: date
    end: date
    as_of: datetime
    sites: list[Site]
    units: list[AHU]
    categories: list[CategoryFigures]
    total: CategoryFigures
    overdue: list[dict]
    findings_matrix: dict[str, dict[str, int]]
    findings_total: int
    # Every finding the matrix counts, most severe first and within a severity the oldest first: site, unit,
    # part, problem, severity, first seen (the site's date), age in days and the corrective work in words.
    open_findings: list[dict]
    filters: list[dict]
    freeze: list[dict]
    freeze_counts: dict[str, int]
    # Per site id: "total" (CategoryFigures of all categories) and "findings_total",
    # filled in the same passes, so a dashboard row per site costs no extra query.
    by_site: dict[int, dict] = field(default_factory=dict)

    @property
    def freeze_ready_now(self) -> int:
        """Units proven ready now, on time or late (``inspections.freeze.FreezeReadiness.ready``)."""
        return sum(1 for r in self.freeze if r["ready"])

    @property
    def age_labels(self) -> list[str]:
        return [label for _, _, label in AGE_BUCKETS]


def report_today(zones: Iterable[str], *, as_of: datetime) -> date:
    """The figures' today for sites of these time zones at ``as_of``: the latest of their todays (a site
    already on the next day has begun it); the server's date without any site. The default period of the
    compliance report and of the manager's pages ends on it."""
    return max((today_for(zone, now=as_of) for zone in zones), default=today_for(None, now=as_of))


def _local_date(at: datetime | None, tz: zoneinfo.ZoneInfo) -> date | None:
    return at.astimezone(tz).date() if at else None


def compliance_figures(*, site_ids: list[int], start: date, end: date, as_of: datetime) -> ComplianceFigures:
    """Every compliance figure for the given sites. Tenancy is the caller's: pass only visible sites.

    A fixed number of queries whatever the number of units (about ten).
    """
    sites = list(Site.objects.filter(pk__in=site_ids).order_by("name", "pk"))
    tz_of = {s.pk: zoneinfo.ZoneInfo(s.time_zone) for s in sites}
    units = list(
        AHU.objects.filter(building__site_id__in=site_ids)
        .select_related("building__site")
        .order_by("building__site__name", "building__name", "tag", "pk")
    )
    today_of = {s.pk: today_for(s, now=as_of) for s in sites}
    report_day = report_today([s.time_zone for s in sites], as_of=as_of)

    rows = (
        WorkOrderTask.objects.filter(
            work_order__kind=WorkOrder.Kind.PREVENTIVE,
            ahu__building__site_id__in=site_ids,
            due_date__gte=start,
            due_date__lte=end,
        )
        .values_list(
            "task__category",
            "due_date",
            "task__grace_days",
            "completed_at",
            "work_order__state",
            "work_order__completed_at",
            "ahu__building__site_id",
        )
        .order_by("due_date", "pk")
    )
    done_states = {WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED}
    occurrences = []
    for category, due, grace, done_at, wo_state, wo_done_at, site_id in rows:
        if done_at is None and wo_state in done_states:
            done_at = wo_done_at
        if done_at is not None and done_at > as_of:
            done_at = None
        occurrences.append(
            Occurrence(
                category,
                due,
                grace,
                _local_date(done_at, tz_of[site_id]),
                cancelled=wo_state == WorkOrder.State.CANCELLED,
                site_id=site_id,
            )
        )
    categories, total = preventive_figures(occurrences, start=start, end=end, as_of=report_day)
    by_site = {s.pk: {"total": CategoryFigures("all", "All categories"), "findings_total": 0} for s in sites}
    for occ in occurrences:
        by_site[occ.site_id]["total"].counts[occurrence_outcome(occ, evaluated_on=report_day)] += 1

    overdue = []
    open_orders = (
        WorkOrder.objects.filter(
            ahu__building__site_id__in=site_ids, state__in=WorkOrder.OPEN_STATES, due_date__lte=report_day
        )
        .annotate(min_grace=Min("tasks__task__grace_days"))
        .select_related("ahu__building__site", "assignee")
        .order_by("due_date", "ahu__building__site__name", "ahu__tag", "pk")
    )
    for wo in open_orders:
        if wo.overdue_on is not None:
            deadline = wo.overdue_on - timedelta(days=1)
        else:
            deadline = wo.due_date + timedelta(days=wo.min_grace or 0)
        today = today_of[wo.ahu.building.site_id]
        if deadline < today:
            overdue.append({"work_order": wo, "deadline": deadline, "days_overdue": (today - deadline).days})

    matrix = {sev: {label: 0 for _, _, label in AGE_BUCKETS} for sev in SEVERITIES}
    findings_total = 0
    open_findings = []
    # One query: the counts and the listing are the same rows, so they always agree.
    for finding in (
        Finding.objects.filter(ahu__building__site_id__in=site_ids, opened_at__lte=as_of)
        .filter(Q(state=Finding.State.OPEN) | Q(closed_at__gt=as_of))
        .select_related("ahu__building__site", "component", "corrective_work_order")
    ):
        site_id = finding.ahu.building.site_id
        tz = tz_of[site_id]
        matrix.setdefault(finding.severity, {label: 0 for _, _, label in AGE_BUCKETS})
        age = finding_age_days(opened_at=finding.opened_at, end=as_of, time_zone=tz.key)
        matrix[finding.severity][age_bucket(age)] += 1
        findings_total += 1
        by_site[site_id]["findings_total"] += 1
        open_findings.append(
            {
                "finding": finding,
                "site": finding.ahu.building.site,
                "unit": finding.ahu,
                "part": finding.component.name if finding.component is not None else WHOLE_UNIT,
                "problem": finding_problem(finding),
                "source": finding.source_words,  # "" for a visit's finding
                "severity": finding.severity,
                "severity_label": finding.get_severity_display(),
                "first_seen": finding.opened_at.astimezone(tz).date(),
                "age_days": age,
                "corrective": corrective_work_words(finding=finding, as_of=as_of, tz=tz),
            }
        )
    rank = {sev: i for i, sev in enumerate(SEVERITIES)}
    open_findings.sort(
        key=lambda r: (
            rank.get(r["severity"], len(rank)),
            r["finding"].opened_at,
            r["site"].name,
            r["unit"].tag,
            r["finding"].pk,
        )
    )

    filters = _filter_rows(units=units, as_of=as_of, today_of=today_of)
    freeze, freeze_counts = _freeze_rows(units=units, as_of=as_of, today_of=today_of)
    return ComplianceFigures(
        start=start,
        end=end,
        as_of=as_of,
        sites=sites,
        units=units,
        categories=categories,
        total=total,
        overdue=overdue,
        findings_matrix=matrix,
        findings_total=findings_total,
        open_findings=open_findings,
        filters=filters,
        freeze=freeze,
        freeze_counts=freeze_counts,
        by_site=by_site,
    )


WHOLE_UNIT = "the unit as a whole"


def finding_problem(finding: Finding) -> str:
    """The finding's plain title without the part it ends with (the listing names the part in its own column)."""
    title = finding.title
    if finding.component is not None:
        suffix = f" — {finding.component.name}"
        if title.endswith(suffix) and len(title) > len(suffix):
            title = title[: -len(suffix)]
    return title


def corrective_work_words(*, finding: Finding, as_of: datetime, tz: zoneinfo.ZoneInfo) -> str:
    """What is being done about an open finding, in words: "corrective work approved, due 12 Dec 2026",
    "awaiting approval", "none: a design review", "none proposed yet".

    Read at ``as_of``: work completed after it is still open then. Dates are the app's ("12 Dec 2026").
    """
    wo = finding.corrective_work_order
    if wo is None:
        return "none: a design review" if finding.kind == Finding.Kind.DESIGN_REVIEW else "none proposed yet"
    due = f", due {local_date_of(wo.due_date)}" if wo.due_date else ""
    if wo.state == WorkOrder.State.CANCELLED:
        return "corrective work cancelled"
    if wo.approval == WorkOrder.Approval.PENDING:
        return f"corrective work awaiting approval{due}"
    if wo.approval == WorkOrder.Approval.REJECTED:
        return "corrective work rejected"
    done_at = wo.completed_at if wo.completed_at is not None and wo.completed_at <= as_of else None
    if wo.state in (WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED) and done_at is not None:
        return f"corrective work done {local_date_of(done_at.astimezone(tz))}, finding still open"
    if wo.state == WorkOrder.State.IN_PROGRESS:
        return f"corrective work in progress{due}"
    if wo.state == WorkOrder.State.ASSIGNED or wo.assignee_id is not None:
        return f"corrective work assigned{due}"
    if wo.approval == WorkOrder.Approval.APPROVED:
        return f"corrective work approved{due}"
    return f"corrective work planned{due}"


def bank_filter_status(*, banks: list[Component], as_of: datetime, today_of: dict[int, date]) -> dict[int, dict]:
    """The current filter status of each bank, {bank id: status}: the one answer the manager's dashboard, her site
    page, the compliance PDF and the API give for "is this filter loaded".

    The status is the latest judged point of the bank's one series (``inspections.selectors.filter_series_for``,
    points on or before ``as_of``), whichever its source: a technician's reading (its stored ``filter_loading``
    evaluation, or the check of new filters just after a change) or a building-automation trend day (judged by the
    same ``engineering.filters.filter_loading`` the feed judged it with, at design airflow, and forecast from the
    filters fitted now by ``engineering.filters.filter_forecast``). A point that cannot be judged (no clean or final
    value, airflow too far from design) does not hide the last one that was. ``today_of`` is the site's today per
    site id. Keys: ``verdict`` ("" when nothing was judged), ``derived`` (``loading_pct`` …), ``at``,
    ``after_change``, ``corrected_dp_pa``, ``source`` and ``source_label`` (``FILTER_SOURCE_LABELS``), ``reason``
    (SI words of a trend day's judgement; a reading's is its ``evaluation``'s), ``evaluation``, ``outlook`` and
    ``forecast`` (in words).
    """
    series = filter_series_for(components=banks, before=as_of + timedelta(microseconds=1))
    # Each reading's judgement: the filter check's loading, or the check of the reading after a change. One
    # that could not be judged (no clean or final value) has no pressure drop at design airflow.
    judged = {
        (e.component_id, e.inspection_id, e.check_name): e
        for e in Evaluation.objects.filter(
            component__in=banks,
            check_name__in=(FILTER_CHECK, FILTER_AFTER_CHANGE),
            inspection_id__in={p.inspection_id for s in series.values() for p in s.points if p.inspection_id},
        )
        .filter(derived__has_key="corrected_dp_pa")
        .order_by("pk")
    }
    out: dict[int, dict] = {}
    for bank in banks:
        s = series[bank.pk]
        today = today_of[bank.ahu.building.site_id]
        status = _status_none()
        for p in reversed(s.points):
            if p.source == FILTER_READING:
                ev = judged.get((bank.pk, p.inspection_id, _check_of(p)))
                if ev is None:
                    continue
                derived = dict(ev.derived)
                if p.after_change:
                    derived.update(_loading_of_new_filters(bank=bank, point=p, design=s.design_airflow_m3s))
                # Filters just fitted have no forecast before their next check.
                outlook = None if p.after_change else stored_filter_outlook(derived=derived, today=today)
                status = {**_status_none(), "verdict": ev.verdict, "derived": derived, "evaluation": ev}
            else:
                trend = _trend_status(bank=bank, point=p, series=s, today=today)
                if trend is None:
                    continue
                status, outlook = trend
            status.update(
                # A trend day's point stands at the day's end: its last instant is dated on the day itself.
                at=p.at if p.source == FILTER_READING else p.at - timedelta(microseconds=1),
                after_change=p.after_change,
                corrected_dp_pa=p.corrected_dp_pa,
                source=p.source,
                source_label=p.source_label,
                outlook=outlook,
                forecast=NEW_FILTERS_FORECAST if outlook is None else outlook.words(),
            )
            break
        out[bank.pk] = status
    return out


def _status_none() -> dict:
    return {
        "verdict": "",
        "derived": {},
        "at": None,
        "after_change": False,
        "corrected_dp_pa": None,
        "source": "",
        "source_label": "",
        "reason": "",
        "reason_parts": [],
        "evaluation": None,
        "outlook": None,
        "forecast": "—",
    }


def _trend_status(*, bank: Component, point, series, today: date) -> tuple[dict, FilterOutlook] | None:
    """A trend day's status: judged as ``automation.feeds`` judged it (at design airflow, the bank's clean and
    final values), forecast from the filters fitted now; None when the bank cannot be judged."""
    specs = bank.specs or {}
    if "clean_dp_pa" not in specs or "final_dp_pa" not in specs:
        return None
    design = series.design_airflow_m3s
    try:
        loading = engineering_filters.filter_loading(
            dp_pa=point.corrected_dp_pa,
            airflow_m3s=design,
            design_airflow_m3s=design,
            clean_dp_pa=specs["clean_dp_pa"],
            final_dp_pa=specs["final_dp_pa"],
        )
    except EngineeringInputError:
        return None
    forecast = None
    with contextlib.suppress(EngineeringInputError):  # fewer than its points, or no rise: no forecast
        forecast = engineering_filters.filter_forecast(
            points=series.current.forecast_points(), design_airflow_m3s=design, final_dp_pa=specs["final_dp_pa"]
        )
    fdate = forecast.date_at_final if forecast is not None else None
    outlook = filter_outlook(
        today=today,
        forecast_on=fdate.date() if isinstance(fdate, datetime) else fdate,
        at_final_now=bool(forecast is not None and forecast.at_final_now),
        corrected_dp_pa=point.corrected_dp_pa,
        final_dp_pa=specs["final_dp_pa"],
    )
    if outlook.forecast_on is None and not outlook.at_final:
        outlook = dataclasses.replace(outlook, no_forecast=NO_FORECAST_YET)
    status = {
        **_status_none(),
        "verdict": loading.verdict.value,
        "derived": {"loading_pct": engineering_filters.loading_percent(loading.fraction_of_span)},
        "reason": loading.reason,
        "reason_parts": list(loading.parts),  # in the reader's units (inspections.reasons)
    }
    return status, outlook


def _filter_rows(*, units: list[AHU], as_of: datetime, today_of: dict[int, date]) -> list[dict]:
    banks = list(
        Component.objects.filter(ahu__in=units, kind=ComponentKind.FILTER_BANK)
        .select_related("ahu__building")
        .order_by("position", "pk")
    )
    by_unit: dict[int, list[Component]] = defaultdict(list)
    for bank in banks:
        by_unit[bank.ahu_id].append(bank)
    status = bank_filter_status(banks=banks, as_of=as_of, today_of=today_of)
    out = []
    for unit in units:
        for bank in by_unit.get(unit.pk, []):
            out.append({"unit": unit, "filter": bank, **status[bank.pk]})
        if unit.pk not in by_unit:
            out.append({"unit": unit, "filter": None, **_status_none()})
    return out


FILTER_CHECK, FILTER_AFTER_CHANGE = "filter_loading", "filter_after_change"  # inspections.evaluation's check names
NEW_FILTERS_FORECAST = "new filters, no forecast before their next check"


def _check_of(point) -> str:
    return FILTER_AFTER_CHANGE if point.after_change else FILTER_CHECK


def _loading_of_new_filters(*, bank: Component, point, design: float) -> dict:
    """The loading of filters just fitted, by the same engineering.filters.filter_loading the filter check uses
    (the check after a change judges against the clean value only and keeps no loading)."""
    specs = bank.specs or {}
    if "clean_dp_pa" not in specs or "final_dp_pa" not in specs:
        return {}
    try:
        loading = engineering_filters.filter_loading(
            dp_pa=point.dp_pa,
            airflow_m3s=point.airflow_m3s,
            design_airflow_m3s=design,
            clean_dp_pa=specs["clean_dp_pa"],
            final_dp_pa=specs["final_dp_pa"],
        )
    except EngineeringInputError:
        return {}
    return {"loading_pct": engineering_filters.loading_percent(loading.fraction_of_span)}


@dataclass(frozen=True)
class FilterOutlook:
    """When a bank's filters are to be changed, judged on one day (the site's): ``filter_outlook`` decides it."""

    at_final: bool  # at or over its final pressure drop: change now, whatever the trend says
    due_now: bool  # at final, or the forecast day has gone by
    forecast_on: date | None  # the day the trend reaches the final value (None: no forecast)
    no_forecast: str = ""  # why a judged filter has no forecast, in words ("" when unknown or no reading)

    @property
    def forecast_ahead(self) -> date | None:
        """The day a forecast line and mark may be drawn to: the forecast, unless the filter is due now."""
        return None if self.due_now else self.forecast_on

    def words(self, day_text: Callable[[date], str] = local_date_of) -> str:
        """The outlook in words, each date written as the pages and the PDFs write a day ("5 Jun 2025")."""
        if self.at_final:
            return display.DERIVED_FLAGS["forecast_at_final_now"][1]  # the words the inspection record shows
        if self.forecast_on is None:
            return self.no_forecast or "—"
        if self.due_now:
            return f"due now (forecast for {day_text(self.forecast_on)})"
        return day_text(self.forecast_on)


def filter_outlook(
    *,
    today: date,
    forecast_on: date | None = None,
    at_final_now: bool = False,
    corrected_dp_pa: float | None = None,
    final_dp_pa: float | None = None,
) -> FilterOutlook:
    """The one rule for "filter due now or forecast", for the site page, the compliance PDF and the unit history.

    Due now when the filters are at or over their final pressure drop (``at_final_now`` as the evaluation or
    engineering.filters.filter_forecast found it, or the last pressure drop at design airflow
    ``corrected_dp_pa`` at or over ``final_dp_pa``), or when the forecast day is before ``today`` (a forecast
    made at an earlier visit: the day has gone by). The forecast day itself is not yet past.
    """
    at_final = bool(at_final_now) or (
        corrected_dp_pa is not None and bool(final_dp_pa) and round(corrected_dp_pa, 9) >= final_dp_pa
    )
    due_now = at_final or (forecast_on is not None and forecast_on < today)
    return FilterOutlook(at_final=at_final, due_now=due_now, forecast_on=forecast_on)


def stored_filter_outlook(*, derived: dict, today: date) -> FilterOutlook:
    """``filter_outlook`` of a stored filter evaluation (its ``forecast_at_final_now`` and ``forecast_change_date``)."""
    try:
        day = date.fromisoformat(str(derived.get("forecast_change_date") or "")[:10])
    except ValueError:
        day = None
    outlook = filter_outlook(today=today, forecast_on=day, at_final_now=derived.get("forecast_at_final_now") is True)
    note = str(derived.get("forecast_note") or "")
    if note and outlook.forecast_on is None and not outlook.at_final:
        # The evaluation said why it made no forecast: the table says it too rather than a bare dash.
        why = NO_DATE_NOT_RISING if "rising" in note else NO_FORECAST_YET
        outlook = FilterOutlook(at_final=False, due_now=False, forecast_on=None, no_forecast=why)
    return outlook


NO_FORECAST_YET = "no forecast yet: the readings since the change give no trend"
NO_DATE_NOT_RISING = "no change date: the pressure drop is not rising"


def filter_forecast_text(*, derived: dict, today: date) -> str:
    """The change forecast of a stored filter evaluation in words, judged on the site's ``today``
    (``filter_outlook``): "now: …", "due now (forecast for <date>)", the date ahead, or "—"."""
    return stored_filter_outlook(derived=derived, today=today).words()


def _freeze_rows(*, units, as_of, today_of) -> tuple[list[dict], dict[str, int]]:
    """Per protected unit the readiness row (inspections.freeze decides it) and the count per state."""
    rows, counts = [], dict.fromkeys(FREEZE_LABELS, 0)
    for r in freeze_rules.freeze_readiness(units=units, as_of=as_of, today_of=today_of):
        counts[r.status] += 1
        rows.append(r.as_row())
    return rows, counts
