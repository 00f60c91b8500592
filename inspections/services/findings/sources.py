"""Findings of sources other than a technician's visit (the building-automation trends): one open finding per
unit, part and rule, observed and closed as its source says."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import Any

from accounts.services import audit_record
from scheduling.titles import title_fit

from ... import reasons as rs
from ...models import Finding
from .problems import TITLE_MAX
from .record import finding_close, finding_open_or_get, finding_seen_again


@dataclass(frozen=True)
class SourceSeen:
    """What a source other than a technician's visit saw of one problem of one unit and part, as its finding keeps
    it: the building-automation trends, where a published fault rule (``rule``, e.g. FC6) found a fault.

    ``reason_parts`` is the finding's text (inspections.reasons parts, SI); ``times_seen`` how often the source
    saw it so far (the trends: days); ``evidence`` what a reader needs beside the text (the trends: the rule's
    section, the latest evidence window, the share of the operating time, the days)."""

    ahu: Any
    component: Any
    source: str
    rule: str
    severity: str
    title: str
    reason_parts: list[Any]
    condition_code: str
    first_seen_at: dt.datetime
    last_seen_at: dt.datetime
    times_seen: int
    evidence: dict[str, Any] = field(default_factory=dict)


def source_problem(*, source: str, rule: str) -> str:
    """The problem of a source's finding: its rule, so one open finding per unit, part and rule."""
    return f"{source}:{rule}"[:120]


def finding_observe_source(*, seen: SourceSeen, by: Any) -> tuple[Finding, bool]:
    """The one open finding of the unit, part and rule ``seen`` is about, updated with it, or opened first seen at
    ``seen.first_seen_at``; the same path as a visit's failure (one open finding per unit, part and problem,
    found again while open: the same finding; after it closed: a new one). Returns (finding, opened?).

    Audited when opened and when the source saw it on a further day (``times_seen`` grew), not at each rerun."""
    if seen.source == Finding.Source.INSPECTION or not seen.rule:
        raise ValueError("finding_observe_source is for a source other than a visit, with its rule")
    problem = source_problem(source=seen.source, rule=seen.rule)
    key = {"ahu": seen.ahu, "component": seen.component, "problem": problem}
    parts = list(seen.reason_parts)
    values = {
        "kind": Finding.Kind.CORRECTIVE,
        "severity": seen.severity,
        "title": title_fit(seen.title, limit=TITLE_MAX),
        "reason": rs.render(parts, "si"),
        "reason_parts": parts,
        "condition_code": seen.condition_code,
    }
    organisation_id = seen.ahu.building.site.organisation_id
    finding = Finding.objects.select_for_update(of=("self",)).filter(state=Finding.State.OPEN, **key).first()
    opened = False
    if finding is None:
        finding, opened = finding_open_or_get(
            key=key,
            fields={
                "organisation_id": organisation_id,
                "source": seen.source,
                "rule": seen.rule,
                "evidence": seen.evidence,
                "opened_at": seen.first_seen_at,
                "last_seen_at": seen.last_seen_at,
                "times_seen": seen.times_seen,
                **values,
            },
        )
    before = finding.times_seen
    if not opened:
        if seen.first_seen_at < finding.opened_at:  # an earlier day judged later
            finding.opened_at = seen.first_seen_at
            finding.save(update_fields=["opened_at"])
        finding_seen_again(
            finding,
            values=values,
            seen_at=seen.last_seen_at,
            times_seen=seen.times_seen,
            latest={"evidence": seen.evidence},
        )
    if opened or finding.times_seen > before:
        audit_record(
            actor=by,
            obj=finding,
            action="finding_open" if opened else "finding_observe",
            organisation_id=organisation_id,
            changes={"source": seen.source, "rule": seen.rule, "times_seen": finding.times_seen},
        )
    return finding, opened


def finding_close_source(*, finding: Finding, at: dt.datetime, cause: str, note: str = "", by: Any) -> bool:
    """Close a source's open finding when its source closes what it saw (the trends: absent for the set time, with
    ``note`` saying how long; or its corrective work completed). False when it was closed already."""
    locked = Finding.objects.select_for_update(of=("self",)).filter(pk=finding.pk, state=Finding.State.OPEN).first()
    if locked is None:
        return False
    finding_close(locked, at=at, cause=cause, by=by, changes={"source": locked.source, "rule": locked.rule}, note=note)
    finding.state, finding.closed_at, finding.close_cause, finding.close_note = (
        locked.state,
        locked.closed_at,
        locked.close_cause,
        locked.close_note,
    )
    return True
