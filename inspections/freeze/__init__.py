"""Freeze-protection readiness, judged from what the tests found: the one place it is decided.

The manager's pages, the dashboard, the compliance figures and PDF, and the API all read
``freeze_readiness``; none of them restates these rules.

Which units count
    A unit with an electric preheater or a preheat coil (``duty=preheat``) in its component tree.

A freeze-protection test
    An inspection of the unit, finished on or before ``as_of``, with judgements of the
    ``preheater_freeze`` checklist (a preventive visit or the corrective work that retests it).
    Its date is the site's local date of its finish. Its steps are the required items of the
    current ``preheater_freeze`` template that apply to the unit: per electric preheater the stage
    switch-on temperature, the stages, the airflow interlock, the automatic-reset primary limit and
    the manual-reset high limit; for every protected unit the frost-thermostat trip temperature and
    the trip sequence. The verdict of a step is the form's, or the latest amendment's when one
    corrected it.

    The test **passed** only when every step was judged ok. A failed step fails it; a step judged
    "watch" does not pass either (on a safety device, "near its limit" is not proven); a step left
    unanswered or answered "not applicable" is not proven, so a test filled against an older
    template without the airflow-interlock and primary-limit steps does not prove the unit.

The window
    The season to judge and the day its window opens (``season_window``): the running season while
    it runs, else the coming one; the window opens on the last cold day of the season before, by
    the site's normals (rules in reports.compliance).

A unit is
    - **not ready** when its latest test in the window did not pass ("test failed on <date>: <steps>;
      corrective work <state>"), when a critical or high freeze-protection finding is open at
      ``as_of`` (whatever the tests say: the fault is not put right), or when it has no passing test
      in the window and the season has started ("not tested since <date>" / "never tested");
    - **ready** when its latest test in the window passed, a passing test in the window came on or
      before the season start with no failed test after it, and no such finding is open ("every step
      passed on <latest>", naming the first on-time pass too when a later test passed again);
    - **done late** when its latest test passed but every passing test since the last failure came
      after the season start;
    - **due** when it has no test in the window and the season has not started;
    - **season unknown** when the site has no computed season start (unless a failed test or an
      open finding makes it not ready: a known fault is never hidden behind an unknown season).

A freeze event found between visits (``FREEZE_EVENT_SOURCES``: the supply air below the freeze-protection
stages in the building-automation trends) counts as an open freeze-protection finding until a test passes
after it.

A passing retest (usually the corrective work order, whose completion closes the findings it
answers) makes the unit ready again.

The last test (``tested_on``, the "last test" of pages, PDF and API) is the unit's latest test up to
``as_of``, whatever protects it (a preheat coil or an electric preheater) and whatever it found: a
later passing test is never hidden behind the earlier one that proved the unit on time.

The corrective work state is read as it is now, also for an earlier ``as_of``.

One module per job: ``rules`` (the states and the verdict, without the database), ``season`` (the window, from the
site's normals), ``readiness`` (read from the database, many units at once; the freeze-event sources).
"""

from __future__ import annotations

from .readiness import (
    FREEZE_EVENT_SOURCES,
    FreezeReadiness,
    freeze_event_source_register,
    freeze_readiness,
    freeze_readiness_for,
    protected_units,
    readiness_json,
)
from .rules import (
    BLOCKING_SEVERITIES,
    CONDITION,
    DONE_LATE,
    DUE,
    LABELS,
    NOT_READY,
    READY,
    TEMPLATE,
    UNKNOWN,
    FreezeTest,
    OpenFinding,
    Verdict,
    freeze_verdict,
)
from .season import last_season_end, season_window, season_words, seasons_words

__all__ = [
    "BLOCKING_SEVERITIES",
    "CONDITION",
    "DONE_LATE",
    "DUE",
    "FREEZE_EVENT_SOURCES",
    "LABELS",
    "NOT_READY",
    "READY",
    "TEMPLATE",
    "UNKNOWN",
    "FreezeReadiness",
    "FreezeTest",
    "OpenFinding",
    "Verdict",
    "freeze_event_source_register",
    "freeze_readiness",
    "freeze_readiness_for",
    "freeze_verdict",
    "last_season_end",
    "protected_units",
    "readiness_json",
    "season_window",
    "season_words",
    "seasons_words",
]
