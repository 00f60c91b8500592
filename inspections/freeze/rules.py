"""Freeze-protection readiness without the database: the states, a test and an open finding as the rules read them,
and the verdict (``freeze_verdict``).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable
from dataclasses import dataclass

from ..models import Finding

TEMPLATE = "preheater_freeze"
CONDITION = "freeze_protection_failed"
READY, DONE_LATE, DUE, NOT_READY, UNKNOWN = "ready", "done_late", "due", "not_ready", "season_unknown"
LABELS = {
    READY: "Ready",
    DONE_LATE: "Ready, tested late",
    DUE: "Due",
    NOT_READY: "Not ready",
    UNKNOWN: "Season unknown",
}
BLOCKING_SEVERITIES = frozenset({Finding.Severity.CRITICAL, Finding.Severity.HIGH})


@dataclass(frozen=True)
class FreezeTest:
    """One freeze-protection test of a unit, reduced to what the rules need."""

    on: dt.date
    not_passed: tuple[str, ...] = ()  # plain words per step that did not pass; empty = passed every step
    failed: bool = False  # at least one step judged fail (not only watch or unanswered)
    corrective: str = ""  # the state of the corrective work its findings raised, in plain words
    at: dt.datetime | None = None  # when the form was finished (a freeze event before it is answered by a pass)

    @property
    def passed(self) -> bool:
        return not self.not_passed


@dataclass(frozen=True)
class OpenFinding:
    """A critical or high freeze-protection finding open at ``as_of``."""

    opened_on: dt.date
    title: str
    corrective: str = ""


@dataclass(frozen=True)
class Verdict:
    status: str
    reason: str
    decided_by: FreezeTest | None = None  # the test whose outcome the status reads (its steps not passed)
    latest: FreezeTest | None = None  # the unit's latest test, whatever it found: the "last test"


def _day(d: dt.date) -> str:
    return f"{d.day} {d:%b %Y}"


def _corrective_words(state: str) -> str:
    return f"corrective work {state}" if state else "no corrective work raised yet"


def _not_passed_words(test: FreezeTest) -> str:
    head = f"test failed on {_day(test.on)}" if test.failed else f"test on {_day(test.on)} not passed"
    tail = _corrective_words(test.corrective) if test.failed else "retest needed"
    return f"{head}: {'; '.join(test.not_passed)}; {tail}"


def freeze_verdict(
    *,
    tests: Iterable[FreezeTest],
    open_findings: Iterable[OpenFinding] = (),
    season_start: dt.date | None,
    window_opens: dt.date | None,
    today: dt.date,
) -> Verdict:
    """Readiness of one unit and why, in plain words (rules in the module docstring)."""
    tests = sorted(tests, key=lambda t: t.on)
    findings = sorted(open_findings, key=lambda f: f.opened_on)
    latest = tests[-1] if tests else None
    in_window = tests if season_start is None or window_opens is None else [t for t in tests if t.on > window_opens]
    last = in_window[-1] if in_window else None
    if last is not None and not last.passed:
        return Verdict(NOT_READY, "not ready — " + _not_passed_words(last), last, latest)
    if findings:
        f = findings[0]
        proven = f" (last test passed on {_day(last.on)})" if last is not None else ""
        return Verdict(
            NOT_READY,
            f"not ready — freeze-protection fault open since {_day(f.opened_on)}: {f.title}{proven}; "
            f"{_corrective_words(f.corrective)}",
            last,
            latest,
        )
    if season_start is None or window_opens is None:
        since = f"; last passed test on {_day(latest.on)}" if latest is not None else "; never tested"
        return Verdict(UNKNOWN, "freeze season not known for this site" + since, latest, latest)
    if last is not None:
        # The passing run since the last failure (latest first); ready when it began on or before the
        # season start. The status reads the latest test; the words name the first pass when it differs.
        run: list[FreezeTest] = []
        for t in reversed(in_window):
            if not t.passed:
                break
            run.append(t)
        before = [t for t in run if t.on <= season_start]
        first = before[-1] if before else run[-1]
        passed = f"every step passed on {_day(last.on)}"
        began = f"the season began on {_day(season_start)}"
        if before:
            again = "" if first is last else f"; first proven on {_day(first.on)}, before {began}"
            return Verdict(READY, f"ready — {passed}{again}", last, latest)
        again = f", after {began}" if first is last else f"; first proven on {_day(first.on)}, after {began}"
        return Verdict(DONE_LATE, f"proven late — {passed}{again}", last, latest)
    started = today >= season_start
    why = f"not tested since {_day(latest.on)}" if latest is not None else "never tested"
    if started:
        return Verdict(NOT_READY, f"not ready — {why}; the season began on {_day(season_start)}", None, latest)
    return Verdict(DUE, f"due — {why}; test before {_day(season_start)}", None, latest)
