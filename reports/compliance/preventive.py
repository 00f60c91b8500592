"""Preventive work in a period: each due task occurrence's outcome and the counts per category.

All dates are the site's local dates (see the package docstring).

Counted per *task occurrence* (``scheduling.WorkOrderTask`` of a preventive
work order), grouped by the task's category. An occurrence belongs to the
period when its ``due_date`` lies inside it. Its *deadline* is
``due_date + grace_days`` of its task; the deadline day itself is still in
time. Its completion is the occurrence's own ``completed_at`` or, failing
that, the work order's when the work order is completed or verified.
Completions up to ``as_of`` count. The cut-off ``evaluated_on`` is the
earlier of ``end`` and the date of ``as_of``.

- **on time**: completed on or before the deadline;
- **late**: completed after the deadline;
- **missed**: not completed, and the deadline is before ``evaluated_on``;
- **not yet due**: not completed, deadline on or after ``evaluated_on``
  (still inside its grace when the period closes, or the period is not over);
- **cancelled**: not completed and its work order was cancelled.

**On-time share** = on time / (on time + late + missed). Not yet due and
cancelled occurrences are left out. With nothing in the denominator the
share is ``None`` (shown as "—"), never 0 % or NaN.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date, timedelta

from scheduling.models import TaskCategory

ON_TIME, LATE, MISSED, NOT_YET_DUE, CANCELLED = "on_time", "late", "missed", "not_yet_due", "cancelled"
OUTCOMES = (ON_TIME, LATE, MISSED, NOT_YET_DUE, CANCELLED)


@dataclass(frozen=True)
class Occurrence:
    """One due task occurrence, reduced to what the rules need."""

    category: str
    due_date: date
    grace_days: int
    completed_on: date | None
    cancelled: bool = False
    site_id: int | None = None

    @property
    def deadline(self) -> date:
        try:
            return self.due_date + timedelta(days=self.grace_days)
        except OverflowError:  # a due date stored at the calendar's end (before the input policy): never late
            return date.max


def occurrence_outcome(occ: Occurrence, *, evaluated_on: date) -> str:
    """on_time / late / missed / not_yet_due / cancelled, by the rules in the module docstring."""
    if occ.completed_on is not None:
        return ON_TIME if occ.completed_on <= occ.deadline else LATE
    if occ.cancelled:
        return CANCELLED
    return MISSED if occ.deadline < evaluated_on else NOT_YET_DUE


@dataclass
class CategoryFigures:
    category: str
    label: str
    counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(OUTCOMES, 0))

    @property
    def due(self) -> int:
        return sum(self.counts.values())

    @property
    def judged(self) -> int:
        return self.counts[ON_TIME] + self.counts[LATE] + self.counts[MISSED]

    @property
    def on_time_share(self) -> float | None:
        return self.counts[ON_TIME] / self.judged if self.judged else None

    def __getattr__(self, name: str) -> int:
        # Templates read figures.on_time, figures.late, ...
        counts = self.__dict__.get("counts", {})
        if name in counts:
            return counts[name]
        raise AttributeError(name)


def preventive_figures(
    occurrences: Iterable[Occurrence], *, start: date, end: date, as_of: date
) -> tuple[list[CategoryFigures], CategoryFigures]:
    """Per-category counts (categories in the library's order, only those with work) and the total."""
    evaluated_on = min(end, as_of)
    labels = dict(TaskCategory.choices)
    by_cat: dict[str, CategoryFigures] = {}
    total = CategoryFigures("all", "All categories")
    for occ in occurrences:
        if not start <= occ.due_date <= end:
            continue
        outcome = occurrence_outcome(occ, evaluated_on=evaluated_on)
        fig = by_cat.setdefault(occ.category, CategoryFigures(occ.category, labels.get(occ.category, occ.category)))
        fig.counts[outcome] += 1
        total.counts[outcome] += 1
    order = {c: i for i, c in enumerate(TaskCategory.values)}
    rows = sorted(by_cat.values(), key=lambda f: (order.get(f.category, len(order)), f.category))
    return rows, total
