"""Freeze-protection readiness for the season judged (the running one while it runs), counted per state.

For each unit with an electric preheater or a preheat coil, from what its
latest freeze-protection test found and the freeze findings still open:
``inspections.freeze.freeze_readiness`` decides it (rules there), these
figures only count it. A unit is **ready** (proven, every step passed, on or
before the season start), **done late**, **due**, **not ready** (a failed test,
an open critical or high freeze finding, or untested once the season began)
or **season unknown**, each with its reason in plain words.
"""

from __future__ import annotations

from inspections import freeze as freeze_rules

FREEZE_READY, FREEZE_LATE, FREEZE_DUE, FREEZE_NOT_READY, FREEZE_UNKNOWN = (
    freeze_rules.READY,
    freeze_rules.DONE_LATE,
    freeze_rules.DUE,
    freeze_rules.NOT_READY,
    freeze_rules.UNKNOWN,
)
FREEZE_LABELS = freeze_rules.LABELS


def freeze_rows(*, units, as_of, today_of) -> tuple[list[dict], dict[str, int]]:
    """Per protected unit the readiness row (inspections.freeze decides it) and the count per state."""
    rows, counts = [], dict.fromkeys(FREEZE_LABELS, 0)
    for r in freeze_rules.freeze_readiness(units=units, as_of=as_of, today_of=today_of):
        counts[r.status] += 1
        rows.append(r.as_row())
    return rows, counts
