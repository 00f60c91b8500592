"""When a bank's filters are to be changed, judged on the site's today: the one rule ``filter_outlook``
the site page, the compliance PDF and the unit history call."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import date

from accounts.clock import local_date_of
from inspections import display


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
        why = next((words for key, words in _NOTE_WORDS if key in note), NO_FORECAST_YET)
        outlook = FilterOutlook(at_final=False, due_now=False, forecast_on=None, no_forecast=why)
    return outlook


NO_FORECAST_YET = "no forecast yet: the readings since the change give no trend"
NO_DATE_NOT_RISING = "no change date: the pressure drop is not rising"
NO_FORECAST_RECHECK = "no forecast: the reading and the earlier values disagree, re-check them"
NO_FORECAST_BELOW_CLEAN = "no forecast: reads below its clean pressure drop"
# A stored evaluation's ``forecast_note`` (inspections.evaluation.filter_checks) → the words of the table.
_NOTE_WORDS = (
    ("re-check", NO_FORECAST_RECHECK),
    ("below its clean", NO_FORECAST_BELOW_CLEAN),
    ("rising", NO_DATE_NOT_RISING),
)


def filter_forecast_text(*, derived: dict, today: date) -> str:
    """The change forecast of a stored filter evaluation in words, judged on the site's ``today``
    (``filter_outlook``): "now: …", "due now (forecast for <date>)", the date ahead, or "—"."""
    return stored_filter_outlook(derived=derived, today=today).words()
