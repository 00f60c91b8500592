"""A form's readings judged (``inspections.evaluation``) with the filter banks' history up to the form's time for
their change forecast: the sync's forms and an amended inspection's readings alike."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterable
from typing import Any

from engineering.filters import FilterPoint
from inventory.models import AHU, Component

from .. import evaluation, selectors
from ..models import Reading

# Form values as the evaluation reads them: {(item api key, part id or None): value}.
Values = dict[tuple[str, int | None], evaluation.Value]


def filter_points_for(
    unit: AHU | list[Component],
    finished_at: dt.datetime,
    history: Callable[[], selectors.FilterHistory] | None = None,
) -> Callable[[Component], list[FilterPoint]]:
    """Earlier readings of a bank's present filters, for its change forecast (``selectors.filter_series``); asked
    with the form's own ``reading``, that reading joined to them on one meter (``FilterLife.forecast_points``).

    ``unit``: the AHU, or its components as already loaded. Every bank of the unit is read at the first
    question, in the fixed queries of ``filter_series_for``: a unit with 13 banks costs what one with one does;
    none when the history ``history()`` gives (asked then, not before) holds its banks."""
    series: dict[int | None, selectors.FilterSeries | None] = {}

    def points(component: Component, reading: FilterPoint | None = None) -> list[FilterPoint]:
        if not series:
            components = unit if isinstance(unit, list) else list(unit.components.all())
            held = history() if history is not None else None
            read = selectors.filter_series_for(components=components, before=finished_at, history=held)
            series.update(read.items())
            series.setdefault(None, None)  # marks the unit read, even when it has no filter banks
        found = series.get(component.pk)
        if found is None:  # not one of the unit's banks as loaded (never expected): asked on its own
            found = selectors.filter_series(component=component, before=finished_at)
        return found.current.forecast_points(reading)

    return points


def reading_values(readings: Iterable[Reading]) -> Values:
    """{(item api key, component id): evaluation.Value} of parsed readings, as evaluation reads them."""
    return {
        (r.item.api_key, r.component.pk if r.component else None): evaluation.Value(
            number=r.value_si, text=r.value_text
        )
        for r in readings
    }


def values_evaluate(
    *,
    ahu: AHU,
    values: Values,
    slots: list[Any],
    finished_at: dt.datetime,
    history: Callable[[], selectors.FilterHistory] | None = None,
) -> list[evaluation.Result]:
    """Judge a unit's form values finished at ``finished_at`` (the sync's form, and an amended inspection's
    readings), with the filter banks' history up to that time for their change forecast (from ``history()``
    when it holds them, ``filter_points_for``)."""
    components = list(ahu.components.all())
    form = evaluation.Form(
        ahu=ahu,
        components=components,
        values=values,
        slots=slots,
        finished_at=finished_at,
        filter_points=filter_points_for(components, finished_at, history),
    )
    return evaluation.evaluate(form)
