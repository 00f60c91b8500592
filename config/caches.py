"""The process's kept results of pure functions, forgotten together.

Each of these caches keeps the answer of a pure function of its arguments for
the life of the process (a worker keeps them across requests and nightly runs).
Forgetting them makes the next call start cold, as a fresh process does: the
benchmark does so before each repetition and the tests before each test.
Caches of things that never change while the process lives (the Brick ontology,
the phone's unit and property tables, the shell's static digest) are left alone.
Each module that keeps results says how to forget them, with its own ``cache_clear``.
"""

from __future__ import annotations


def clear_module_caches() -> None:
    """Forget every kept result of the engine, the seasons, the routes, unit conversions, zone spans and the
    checklist templates read."""
    from accounts import clock
    from engineering import units
    from inspections.services import library
    from scheduling.engine import meters
    from scheduling.selectors import today
    from scheduling.services import seasons

    meters.cache_clear()
    seasons.cache_clear()
    today.cache_clear()
    units.cache_clear()
    clock.cache_clear()
    library.cache_clear()
