"""Open findings by severity and age, and each finding's problem and corrective work in words.

Findings open at ``as_of`` (state open, opened on or before it). Age in
whole days from opening to ``as_of``, in buckets 0–30, 31–90, 91–180 and
over 180 days. The same rows are listed one by one (``open_findings``),
most severe first and within a severity the oldest first, each with the
corrective work it holds at ``as_of`` in words (``corrective_work_words``)
and who saw it (``Finding.source_words``: the building-automation trends
and their rule, for a fault the trends found).
"""

from __future__ import annotations

import zoneinfo
from datetime import datetime

from accounts.clock import local_date_of
from inspections.models import Finding
from scheduling.models import WorkOrder

AGE_BUCKETS = ((0, 30, "0–30 days"), (31, 90, "31–90 days"), (91, 180, "91–180 days"), (181, None, "over 180 days"))
SEVERITIES = tuple(reversed(Finding.Severity.values))  # critical first


def age_bucket(days: int) -> str:
    for low, high, label in AGE_BUCKETS:
        if days >= low and (high is None or days <= high):
            return label
    return AGE_BUCKETS[0][2]


WHOLE_UNIT = "the unit as a whole"


def finding_problem(finding: Finding) -> str:
    """The finding's plain title without the part it ends with (the listing names the part in its own column)."""
    title = finding.title
    if finding.component is not None:
        suffix = f" — {finding.component.name}"
        if title.endswith(suffix) and len(title) > len(suffix):
            title = title[: -len(suffix)]
    return title


def corrective_work_words(*, finding: Finding, as_of: datetime, tz: zoneinfo.ZoneInfo) -> str:
    """What is being done about an open finding, in words: "corrective work approved, due 12 Dec 2026",
    "awaiting approval", "none: a design review", "none proposed yet".

    Read at ``as_of``: work completed after it is still open then. Dates are the app's ("12 Dec 2026").
    """
    wo = finding.corrective_work_order
    if wo is None:
        return "none: a design review" if finding.kind == Finding.Kind.DESIGN_REVIEW else "none proposed yet"
    due = f", due {local_date_of(wo.due_date)}" if wo.due_date else ""
    if wo.state == WorkOrder.State.CANCELLED:
        return "corrective work cancelled"
    if wo.approval == WorkOrder.Approval.PENDING:
        return f"corrective work awaiting approval{due}"
    if wo.approval == WorkOrder.Approval.REJECTED:
        return "corrective work rejected"
    done_at = wo.completed_at if wo.completed_at is not None and wo.completed_at <= as_of else None
    if wo.state in (WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED) and done_at is not None:
        return f"corrective work done {local_date_of(done_at.astimezone(tz))}, finding still open"
    if wo.state == WorkOrder.State.IN_PROGRESS:
        return f"corrective work in progress{due}"
    if wo.state == WorkOrder.State.ASSIGNED or wo.assignee_id is not None:
        return f"corrective work assigned{due}"
    if wo.approval == WorkOrder.Approval.APPROVED:
        return f"corrective work approved{due}"
    return f"corrective work planned{due}"
