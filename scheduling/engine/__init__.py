"""The due-date engine: rules × units → work orders.

``work_orders_generate`` computes every due occurrence of every task on every
in-service unit (or its components) for a horizon, bundles what falls due for
one unit within ``bundle_days`` into one visit, and writes only what is new.
It reads everything it needs in a fixed number of queries and writes in bulk.

Occurrence keys (unique per unit, task code and component in the database):

* interval, fixed to the calendar: ``c:<due date>`` on the grid anchor + k·interval
  (anchor: the unit's service start, else the day it was registered);
* interval, floating: ``after:<basis>`` — one open occurrence at a time, basis =
  date of the last completion (else the anchor), so completing it restarts the clock;
* run-hours: ``h:<meter>:<target hours>`` — the target stays, the projected date
  moves with the rate (the row is updated, not duplicated);
* season: ``<season>:<season year>`` (``services.seasons.season_key``: the freeze
  season of winter 2026/27 in the north is ``freeze:2026`` whether it starts on
  28 December or 3 January) — due its lead time before the start, or at once when
  that window has already opened; moves with the forecast. The start comes from
  the stored forecast/CSV days first, the site's normals elsewhere.

Speed: a nightly run over thousands of units is mostly idempotent, so the loop
works on light rows read with ``values_list`` (no model instances), reads each
meter's rate and each task's target rule once, and reads back only the stored
occurrences a run could want again.

One module per job: ``generate`` (the run), ``rows`` (the units, parts and occurrences it works on),
``occurrences`` (each rule's due dates on a unit), ``meters`` (run-hour rates and projections), ``dates``
(calendar arithmetic), ``writes`` (bulk inserts, joins and moves with their audit rows).
"""

from __future__ import annotations

from .dates import add_interval, add_months, calendar_occurrences
from .generate import BUNDLE_DAYS, work_orders_generate
from .meters import TREND_METER_CURRENT_DAYS
from .rows import GenerationResult

__all__ = [
    "BUNDLE_DAYS",
    "TREND_METER_CURRENT_DAYS",
    "GenerationResult",
    "add_interval",
    "add_months",
    "calendar_occurrences",
    "work_orders_generate",
]
