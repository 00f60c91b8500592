"""Filter status of every unit: each bank's latest judged point, whatever its source.

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
"""

from __future__ import annotations

import contextlib
import dataclasses
from collections import defaultdict
from datetime import date, datetime, timedelta

from engineering import filters as engineering_filters
from engineering.errors import EngineeringInputError
from inspections.models import Evaluation
from inspections.selectors import FILTER_READING, filter_series_for
from inventory.models import AHU, Component, ComponentKind

from .outlook import NO_FORECAST_YET, FilterOutlook, filter_outlook, stored_filter_outlook

FILTER_CHECK, FILTER_AFTER_CHANGE = "filter_loading", "filter_after_change"  # inspections.evaluation's check names
NEW_FILTERS_FORECAST = "new filters, no forecast before their next check"


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


def filter_rows(*, units: list[AHU], as_of: datetime, today_of: dict[int, date]) -> list[dict]:
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
