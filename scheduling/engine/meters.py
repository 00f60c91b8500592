"""Run-hour meters as the due-date engine reads them: each meter's readings since its last reset, its recent rate and
the day a run-hour target is projected.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from functools import lru_cache

from django.db.models import TextField
from django.db.models.functions import Cast

from engineering.errors import EngineeringInputError
from engineering.trends import run_hours_per_day

from ..models import MeterReading
from .rows import UnitRow, plain_rows

RATE_WINDOW_DAYS = 120  # "recent" run-hour rate: readings of the last four months (common practice)
RATE_MAX_READINGS = 20
METER_HISTORY_DAYS = 800
# A fan meter fed by the building-automation trend (its latest reading's source is "bas_trend") counts every hour
# the fan ran, where a typed meter is read a few times a year; it is the run-hour basis while its latest reading is
# at most this old. The nightly judging writes one each night, so a week without one means the feed has stopped
# (common practice; the same week closes a fault absent from the trends), and the unit's typed meter is used again.
TREND_METER_CURRENT_DAYS = 7


@lru_cache(maxsize=20_000)
def _rate_per_day(readings: tuple[tuple[dt.datetime, float], ...]) -> float | None:
    """Robust run-hour rate (h/day) of the readings, None when none can be drawn.

    A pure function of the readings, kept across runs: a unit's recent readings
    rarely change between two nightly runs, and the Theil–Sen fit is the
    engine's costliest step per unit.
    """
    try:
        return run_hours_per_day(readings=list(readings)).slope
    except EngineeringInputError:
        return None


def cache_clear() -> None:
    """Forget the meters' run-hour rates kept in this process (``config.caches.clear_module_caches``)."""
    _rate_per_day.cache_clear()


class Meters:
    """Run-hour readings of the units, grouped per meter, since each meter's last reset."""

    def __init__(self, ahu_ids, now: dt.datetime):
        self.now = now
        self.by_meter: dict[tuple[int, int], list[tuple[dt.datetime, float, bool, int]]] = defaultdict(list)
        self._rates: dict[tuple[int, int], float | None] = {}
        # The times as text, parsed by datetime.fromisoformat (C): the driver's time-zone-aware loader is
        # Python, and over 100,000 readings it was a fifth of an idempotent run. Text keeps the exact
        # microseconds (a reading typed on the form has its inspection's finishing time, compared below).
        self.source: dict[tuple[int, int], str] = {}  # each meter's latest reading's source
        rows = (
            MeterReading.objects.filter(ahu_id__in=ahu_ids, taken_at__gte=now - dt.timedelta(days=METER_HISTORY_DAYS))
            .order_by("taken_at", "id")
            .annotate(taken_text=Cast("taken_at", TextField()))
            .values_list("ahu_id", "component_id", "taken_text", "hours", "is_reset", "id", "source")
        )
        parse = dt.datetime.fromisoformat
        for ahu_id, comp_id, taken_text, hours, is_reset, pk, source in plain_rows(rows):
            taken_at = parse(taken_text)
            if taken_at.tzinfo is None:  # SQLite keeps naive UTC
                taken_at = taken_at.replace(tzinfo=dt.UTC)
            series = self.by_meter[(ahu_id, comp_id or 0)]
            if is_reset:
                series.clear()
            series.append((taken_at, hours, bool(is_reset), pk))
            self.source[(ahu_id, comp_id or 0)] = source

    def meter_for(self, unit: UnitRow) -> tuple[int, int] | None:
        """The typed basis: the unit's own meter, else its (supply first) fan's."""
        if self.by_meter.get((unit.pk, 0)):
            return (unit.pk, 0)
        for fan in self._fans(unit):
            if self.by_meter.get((unit.pk, fan.pk)):
                return (unit.pk, fan.pk)
        return None

    @staticmethod
    def _fans(unit: UnitRow) -> list:
        return sorted(unit.by_kind.get("fan", ()), key=lambda c: (c.specs.get("role") != "supply", c.pk))

    def trend_meter_for(self, unit: UnitRow) -> tuple[int, int] | None:
        """The fan meter the building-automation trend feeds (supply fan first), while it is current: its latest
        reading came from the trend at most ``TREND_METER_CURRENT_DAYS`` ago."""
        since = self.now - dt.timedelta(days=TREND_METER_CURRENT_DAYS)
        for fan in self._fans(unit):
            meter = (unit.pk, fan.pk)
            series = self.by_meter.get(meter)
            if series and self.source.get(meter) == MeterReading.Source.BAS_TREND and series[-1][0] >= since:
                return meter
        return None

    def basis_for(self, unit: UnitRow, *, last_done: dt.datetime | None) -> tuple[tuple[int, int] | None, str]:
        """(meter, why) a runtime task of ``unit`` last done at ``last_done`` is projected on.

        The trend-fed fan meter while it is current and reaches back to the task's last completion (a meter that
        began after the last service cannot count the hours since it); otherwise the typed basis
        (``meter_for``). ``why`` is '' for the typed basis and "trend" when the trend-fed meter replaced it."""
        typed = self.meter_for(unit)
        trend = self.trend_meter_for(unit)
        if trend is None or trend == typed:
            return typed, ""
        if typed is not None and last_done is not None and last_done < self.by_meter[trend][0][0]:
            return typed, ""
        return trend, "trend"

    def rate(self, meter) -> float | None:
        if meter not in self._rates:
            series = self.by_meter[meter]
            since = self.now - dt.timedelta(days=RATE_WINDOW_DAYS)
            recent = [r for r in series if r[0] >= since][-RATE_MAX_READINGS:]
            if len(recent) < 2:
                recent = series[-2:]
            self._rates[meter] = _rate_per_day(tuple((r[0], r[1]) for r in recent))
        return self._rates[meter]

    def projection(self, meter, *, run_hours: int, last_done: dt.datetime | None, tag: str = ""):
        """(key part, projected date-time when the next ``run_hours`` are reached) or None without a rate.

        ``tag`` names a basis other than the typed one in the key (``h:<reset>:<target>:fan<id>``), so the open
        occurrence is re-keyed, not duplicated, when the basis changes."""
        slope = self.rate(meter)
        if slope is None or slope <= 0:
            return None
        series = self.by_meter[meter]
        reset_id = series[0][3] if series[0][2] else 0
        if last_done is not None and last_done >= series[0][0]:
            before = [r for r in series if r[0] <= last_done]
            basis = (before[-1] if before else series[0])[1]
            target = basis + run_hours
        else:
            target = (int(series[-1][1] // run_hours) + 1) * run_hours
        last_at, last_hours = series[-1][0], series[-1][1]
        when = last_at + dt.timedelta(days=max(0.0, (target - last_hours) / slope))
        key = f"h:{reset_id}:{round(target)}"
        return (f"{key}:fan{meter[1]}" if tag else key), when
