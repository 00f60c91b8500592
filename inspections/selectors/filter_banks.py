"""A filter bank's pressure-drop series at design airflow, restarting at each filter change: the one series the
charts, the unit history, the change forecast and the compliance report read."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from django.db.models import Q

from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint, corrected_pressure_drop
from inventory.models import AHU, Component

from ..models import Reading

# Where a point of a filter series came from; readers label it (a technician's reading, a trend day).
FILTER_READING = "reading"
FILTER_TREND = "bas_trend"
FILTER_SOURCE_LABELS = {FILTER_READING: "technician reading", FILTER_TREND: "building-automation trend"}


@dataclass(frozen=True)
class FilterSeriesPoint:
    """One pressure-drop value of a filter bank, with the same value corrected to design airflow.

    ``source`` says where it came from: ``FILTER_READING`` (a technician's reading on a visit's form) or a
    registered source (``FILTER_POINT_SOURCES``; the building-automation trend's day, ``FILTER_TREND``)."""

    at: dt.datetime  # when the visit's form was finished; for a trend day, the site's day's end
    inspection_id: int | None  # None for a point that no visit read
    dp_pa: float  # as read
    airflow_m3s: float  # airflow at the visit, by inspections.evaluation.form.supply_airflow
    corrected_dp_pa: float  # at the bank's design airflow, by engineering.filters.corrected_pressure_drop
    run_hours: float | None  # the unit's run-hour meter at the visit; for a trend day, the trend-fed meter's
    after_change: bool  # read just after fitting new filters
    source: str = FILTER_READING

    @property
    def source_label(self) -> str:
        return FILTER_SOURCE_LABELS.get(self.source, self.source)


def filter_sources_words(*, points) -> str:
    """Where a chart's points came from, for its caption: '3 technician readings and 28 building-automation
    trend days' ('' without points)."""
    readings = sum(1 for p in points if p.source == FILTER_READING)
    trend = sum(1 for p in points if p.source == FILTER_TREND)
    parts = []
    if readings:
        parts.append(f"{readings} technician reading{'' if readings == 1 else 's'}")
    if trend:
        parts.append(f"{trend} building-automation trend day{'' if trend == 1 else 's'}")
    return " and ".join(parts)


# Sources of filter-series points from apps above this one (the building-automation trends register theirs in
# their AppConfig.ready, as for FREEZE_EVENT_SOURCES): ``source(components=[bank, ...], before=datetime | None)``
# returns {bank id: [FilterSeriesPoint, ...]} in a fixed number of queries, points at or before ``before`` only
# (``FilterHistory.before`` keeps the same points of a source read without a limit).
FILTER_POINT_SOURCES: list = []


def filter_point_source_register(source) -> None:
    if source not in FILTER_POINT_SOURCES:
        FILTER_POINT_SOURCES.append(source)


@dataclass(frozen=True)
class FilterLife:
    """The readings of one set of filters, from the change that fitted it (None: fitted before the records)."""

    changed_at: dt.datetime | None
    points: tuple[FilterSeriesPoint, ...]

    def forecast_points(self, reading: FilterPoint | None = None) -> list[FilterPoint]:
        """The points with run-hours, as engineering.filters.filter_forecast takes them, on one meter's scale.

        ``reading``: a technician's new reading of these filters (on the unit's typed meter, ``when`` the moment
        its form was finished), newer than every point here: it joins them as a typed reading, on the same scale
        by the same rule (a form's own reading is never laid beside trend days counted from another zero).

        A technician's reading carries the unit's typed meter; a trend day the trend-fed fan meter, which counts
        the same running from another zero. Where both are in this set of filters, the trend days are shifted by
        the two meters' difference at the reading closest in time to a trend day (at most a day apart); with no
        such pair the two cannot be put on one line, and the source of the newest point is used alone: the newest
        evidence supersedes (a reading after the last trend day, or trend days after the last reading)."""
        points = self.points
        if reading is not None:
            at = reading.when
            if not isinstance(at, dt.datetime):
                at = dt.datetime.combine(at, dt.time(12), tzinfo=dt.UTC)
            new = FilterSeriesPoint(
                at=at,
                inspection_id=None,
                dp_pa=reading.dp_pa,
                airflow_m3s=reading.airflow_m3s,
                corrected_dp_pa=reading.dp_pa,  # not read here: the forecast corrects each point itself
                run_hours=reading.run_hours,
                after_change=False,
            )
            points = (*points, new)
        return _on_one_meter(points)


def _on_one_meter(points) -> list[FilterPoint]:
    """``FilterLife.forecast_points`` of ``points`` (the phone's twin: evaluate.js onOneMeter, which joins its own
    reading to the same points by this rule: tests/inspections/test_phone_agreement.py)."""
    with_hours = [p for p in points if p.run_hours is not None]
    typed = [p for p in with_hours if p.source == FILTER_READING]
    other = [p for p in with_hours if p.source != FILTER_READING]
    if typed and other:
        pairs = [(abs((t.at - r.at).total_seconds()), r, t) for r in typed for t in other]
        gap, r, t = min(pairs, key=lambda x: x[0])
        if gap <= 86400:
            offset = r.run_hours - t.run_hours
            with_hours = sorted(
                typed + [_shifted(p, offset) for p in other], key=lambda p: (p.at, p.source == FILTER_READING)
            )
        else:
            newest = max(with_hours, key=lambda p: (p.at, p.source == FILTER_READING))
            with_hours = typed if newest.source == FILTER_READING else other
    return [
        FilterPoint(run_hours=p.run_hours, dp_pa=p.dp_pa, airflow_m3s=p.airflow_m3s, when=p.at.date())
        for p in with_hours
        if p.run_hours is not None and p.run_hours >= 0
    ]


def _shifted(p: FilterSeriesPoint, offset: float) -> FilterSeriesPoint:
    from dataclasses import replace

    return replace(p, run_hours=None if p.run_hours is None else p.run_hours + offset)


@dataclass(frozen=True)
class FilterSeries:
    """A filter bank's pressure drop at design airflow, restarting at each filter change, oldest first."""

    component: Component
    design_airflow_m3s: float
    lives: tuple[FilterLife, ...]

    @property
    def current(self) -> FilterLife:
        """The filters fitted now (the last life); empty before any reading."""
        return self.lives[-1] if self.lives else FilterLife(changed_at=None, points=())

    @property
    def points(self) -> list[FilterSeriesPoint]:
        return [p for life in self.lives for p in life.points]


def filter_design_airflow_m3s(*, component: Component, ahu: AHU | None = None) -> float:
    """The airflow a bank's pressure drop is corrected to: its own design airflow, else the unit's."""
    return (component.specs or {}).get("design_airflow_m3s") or (ahu or component.ahu).design_supply_airflow_m3s


def _series_point(
    v: dict, dp: float, q: float, design: float, hours: float | None, *, after_change: bool = False
) -> FilterSeriesPoint | None:
    try:
        corrected = corrected_pressure_drop(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=design)
    except EngineeringInputError:
        return None  # too far from design airflow to correct: no point on any chart or forecast
    return FilterSeriesPoint(
        at=v["at"],
        inspection_id=v["inspection_id"],
        dp_pa=dp,
        airflow_m3s=q,
        corrected_dp_pa=corrected,
        run_hours=hours,
        after_change=after_change,
    )


@dataclass(frozen=True)
class FilterHistory:
    """What ``filter_series_for`` reads of some banks, read once with no time limit (``filter_history_read``):
    the forms of one sync request, each finished at its own time, build their banks' series from it without a
    query of their own. Only for banks no other form of the request writes to (their history stands still)."""

    banks: frozenset[int]
    rows: list[tuple]  # as _filter_rows, every form's
    values: dict[int, dict[str, float]]  # visit_values of those rows' inspections
    extra: dict[int, list[FilterSeriesPoint]]  # the registered sources' points, all of them

    def before(
        self, *, banks: list[Component], before: dt.datetime | None
    ) -> tuple[list[tuple], dict[int, list[FilterSeriesPoint]]]:
        """The rows and the sources' points ``_filter_rows`` and the sources give for ``banks`` and ``before``: a
        reading of a form finished before it, a source's point at or before it (``FILTER_POINT_SOURCES``)."""
        ids = {b.pk for b in banks}
        rows = [r for r in self.rows if r[0] in ids and (before is None or (r[5] is not None and r[5] < before))]
        extra = {
            bank_id: [p for p in points if before is None or p.at <= before]
            for bank_id, points in self.extra.items()
            if bank_id in ids
        }
        return rows, extra


def filter_history_read(*, components: list[Component]) -> FilterHistory:
    """The filter history of the given components' banks, whole, in the fixed queries of ``filter_series_for``."""
    banks = [c for c in components if c.kind == "filter_bank"]
    if not banks:
        return FilterHistory(banks=frozenset(), rows=[], values={}, extra={})
    rows = list(_filter_rows(banks=banks, before=None))
    return FilterHistory(
        banks=frozenset(b.pk for b in banks),
        rows=rows,
        values=visit_values(inspection_ids=sorted({r[4] for r in rows})),
        extra=_source_points(banks=banks, before=None),
    )


def filter_series_for(
    *, components: list[Component], before: dt.datetime | None = None, history: FilterHistory | None = None
) -> dict[int, FilterSeries]:
    """``filter_series`` of several banks at once, {component id: series}, in a fixed number of queries; none when
    ``history`` (``filter_history_read``) holds every one of the banks."""
    banks = [c for c in components if c.kind == "filter_bank"]
    held = history if history is not None and all(b.pk in history.banks for b in banks) else None
    if held is not None:
        rows, extra = held.before(banks=banks, before=before)
        by_visit = _filter_readings(rows=rows)
        visited = sorted({i for visits in by_visit.values() for i in visits})
        values = {i: held.values[i] for i in visited if i in held.values}
    else:
        by_visit = _filter_readings(rows=_filter_rows(banks=banks, before=before))
        values = visit_values(inspection_ids=sorted({i for visits in by_visit.values() for i in visits}))
    # Units already loaded with their banks (select_related) cost no query.
    ahus = {c.ahu_id: c.ahu for c in banks if Component.ahu.is_cached(c)}
    if missing := {c.ahu_id for c in banks} - set(ahus):
        ahus |= {a.pk: a for a in AHU.objects.filter(pk__in=missing)}
    airflow_at = _visit_airflow(ahus=ahus, values=values)
    if held is None:
        extra = _source_points(banks=banks, before=before)
    out = {}
    for bank in banks:
        design = filter_design_airflow_m3s(component=bank, ahu=ahus[bank.ahu_id])
        lives = _bank_lives(
            bank=bank, visits=by_visit.get(bank.pk, {}), values=values, design=design, airflow_at=airflow_at
        )
        out[bank.pk] = FilterSeries(
            component=bank, design_airflow_m3s=design, lives=_with_points(lives, extra.get(bank.pk, []))
        )
    return out


def _filter_rows(*, banks: list[Component], before: dt.datetime | None):
    """The banks' filter readings and changes, (component id, template code, item key, value, inspection id,
    finished at), in time order; of forms finished before ``before`` only, when given (one query). A pressure drop
    outside its plausible range (flagged ``improbable`` at the sync) is left out, as the evaluation sets it aside."""
    dp = Q(value_si__isnull=False, improbable=False)
    rows = (
        Reading.objects.filter(component__in=banks)
        .filter(
            Q(dp, item__template__code="filter_check", item__key="dp")
            | Q(dp, item__template__code="filter_replace", item__key="dp_after")
            | Q(item__template__code="filter_replace", item__key="replaced", value_text="ok")
        )
        .values_list(
            "component_id", "item__template__code", "item__key", "value_si", "inspection_id", "inspection__finished_at"
        )
        .order_by("inspection__finished_at", "inspection_id")
    )
    if before is not None:
        rows = rows.filter(inspection__finished_at__lt=before)
    return rows


def _filter_readings(*, rows) -> dict[int, dict[int, dict]]:
    """The rows of ``_filter_rows`` by visit, {bank id: {inspection id: {"at", "inspection_id",
    "<template>.<item>": value}}}, visits in time order."""
    by_visit: dict[int, dict[int, dict]] = {}
    for comp_id, code, key, value, insp_id, at in rows:
        v = by_visit.setdefault(comp_id, {}).setdefault(insp_id, {"at": at, "inspection_id": insp_id})
        v[f"{code}.{key}"] = value if value is not None else True
    return by_visit


def _source_points(*, banks: list[Component], before: dt.datetime | None) -> dict[int, list[FilterSeriesPoint]]:
    """The registered sources' points of the banks (``FILTER_POINT_SOURCES``), at or before ``before`` when given."""
    extra: dict[int, list[FilterSeriesPoint]] = {}
    for source in FILTER_POINT_SOURCES:
        for bank_id, found in source(components=banks, before=before).items():
            extra.setdefault(bank_id, []).extend(found)
    return extra


def _visit_airflow(*, ahus: dict[int, AHU], values: dict[int, dict[str, float]]):
    """``airflow_at(bank, inspection id)``: the supply airflow at a visit as the evaluation finds it
    (``inspections.evaluation.form.supply_airflow``), each visit worked out once."""
    from ..evaluation.form import Form, Value, supply_airflow

    # Fans matter only where a visit gave the fan speed and no airflow (the first fan law then gives the airflow).
    fans: dict[int, list[Component]] = {}
    if any("supply_fan_speed" in v and not v.get("supply_airflow") for v in values.values()):
        for fan in Component.objects.filter(ahu_id__in=list(ahus), kind="fan").order_by("position", "pk"):
            fans.setdefault(fan.ahu_id, []).append(fan)
    airflow: dict[int, float] = {}

    def airflow_at(bank: Component, insp_id: int) -> float:
        if insp_id not in airflow:
            form = Form(
                ahu=ahus[bank.ahu_id],
                components=fans.get(bank.ahu_id, []),
                values={(f"visit.{k}", None): Value(number=x) for k, x in values.get(insp_id, {}).items()},
                slots=[],
                finished_at=dt.datetime.min,
            )
            airflow[insp_id] = supply_airflow(form)[0]
        return airflow[insp_id]

    return airflow_at


def _bank_lives(
    *, bank: Component, visits: dict[int, dict], values: dict, design: float, airflow_at
) -> list[FilterLife]:
    """One bank's visits cut into the lives of its filters: a change starts a new set."""
    lives: list[FilterLife] = []
    changed_at, pts = None, []
    for v in visits.values():
        q = airflow_at(bank, v["inspection_id"])
        hours = values.get(v["inspection_id"], {}).get("run_hours")
        # The check at a changing visit reads the old filters; the reading after the change starts the new set.
        if "filter_check.dp" in v and (p := _series_point(v, v["filter_check.dp"], q, design, hours)) is not None:
            pts.append(p)
        if v.get("filter_replace.replaced"):
            if pts or changed_at is not None:
                lives.append(FilterLife(changed_at=changed_at, points=tuple(pts)))
            changed_at, pts = v["at"], []
            after = v.get("filter_replace.dp_after")
            p = None if after is None else _series_point(v, after, q, design, hours, after_change=True)
            if p is not None:
                pts.append(p)
    if pts or changed_at is not None:
        lives.append(FilterLife(changed_at=changed_at, points=tuple(pts)))
    return lives


def _with_points(lives: list[FilterLife], extra: list[FilterSeriesPoint]) -> tuple[FilterLife, ...]:
    """The registered sources' points put into the set of filters fitted at their time, in time order."""
    if not extra:
        return tuple(lives)
    first = lives[0].changed_at if lives else None
    if not lives or (first is not None and any(p.at < first for p in extra)):
        lives = [FilterLife(changed_at=None, points=()), *lives]  # the filters before the first change recorded
    pts: list[list[FilterSeriesPoint]] = [list(life.points) for life in lives]
    for p in extra:
        # The last set fitted before the point (a change at the same moment fits before it); else the first.
        i = max((j for j, life in enumerate(lives) if life.changed_at is None or life.changed_at <= p.at), default=0)
        pts[i].append(p)
    return tuple(
        FilterLife(changed_at=life.changed_at, points=tuple(sorted(got, key=lambda p: p.at)))
        for life, got in zip(lives, pts, strict=True)
    )


def filter_series(*, component: Component, before: dt.datetime | None = None) -> FilterSeries:
    """A filter bank's pressure drop corrected to design airflow, restarting at each filter change.

    The one series of a bank that the manager's chart, the unit history, the
    evaluation's change forecast and the compliance report all read. Each
    reading (filter check, and the reading just after a change) is corrected
    with ``engineering.filters.corrected_pressure_drop`` to the bank's design
    airflow (its own, else the unit's), from the airflow at that visit as the
    evaluation finds it (measured, else from fan speed, else design). A
    change ("filters replaced" answered ok) starts a new life: the filter
    check of the changing visit belongs to the old filters, the reading
    after the change is the new set's first point. Readings taken too far
    from design airflow to correct are left out. Only forms finished before
    ``before`` count, when given.

    Points from the sources registered in ``FILTER_POINT_SOURCES`` (the
    building-automation trend's filter days) join the set of filters fitted
    at their time; each point says its ``source`` so a reader can label it.
    """
    return filter_series_for(components=[component], before=before)[component.pk]


def visit_values(*, inspection_ids: list[int]) -> dict[int, dict[str, float]]:
    """Run-hours, airflow and fan speed of the given inspections, {inspection id: {key: SI value}}. A value outside
    its plausible range (kept and flagged ``improbable`` at the sync) is left out, as the evaluation sets it aside
    (``inspections.evaluation.form.Form.set_aside``): the airflow is then found as without it."""
    out: dict[int, dict[str, float]] = {}
    for insp_id, key, value in Reading.objects.filter(
        inspection_id__in=inspection_ids, item__template__code="visit", value_si__isnull=False, improbable=False
    ).values_list("inspection_id", "item__key", "value_si"):
        out.setdefault(insp_id, {})[key] = value
    return out
