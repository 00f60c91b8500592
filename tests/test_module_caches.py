"""One function forgets the kept results of the engine's pure functions; the tests and the benchmark call it."""

import datetime as dt

from accounts import clock
from config.caches import clear_module_caches
from engineering import units
from inspections.services import library
from scheduling.engine import meters
from scheduling.selectors import today
from scheduling.services import seasons

KEPT = [
    meters._rate_per_day,
    seasons._starts,
    today._suggest_order,
    units._convert,
    clock._spans,
    library._templates_read,
]


def test_each_test_starts_with_the_caches_empty():
    assert [f.cache_info().currsize for f in KEPT] == [0] * len(KEPT)


def test_clear_module_caches_forgets_every_kept_result():
    units._convert(1.0, "bar", "kPa")
    clock._spans("Europe/Amsterdam", 2026)
    today._suggest_order((52.0, 4.9), ((52.1, 4.9), (52.3, 4.9)))
    meters._rate_per_day(((dt.datetime(2025, 1, 1, tzinfo=dt.UTC), 100.0),))
    assert all(f.cache_info().currsize for f in (units._convert, clock._spans, today._suggest_order))
    clear_module_caches()
    assert [f.cache_info().currsize for f in KEPT] == [0] * len(KEPT)
