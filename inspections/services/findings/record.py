"""One finding's record: the stored judgements it points at, opening it (or the one another writer just
opened), one more observation of it, and closing it (audited)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable
from typing import Any

from django.db import IntegrityError, transaction

from accounts.models import User
from accounts.services import audit_record

from ...evaluation import Result
from ...models import Amendment, Evaluation, Finding, Inspection
from .problems import severity_worst


def evaluations_store(
    *, inspection: Inspection, results: Iterable[Result], amendment: Amendment | None = None
) -> list[Evaluation]:
    """The judgements of a form (or of an amendment's corrected form) as stored rows, written in one insert."""
    rows = [
        Evaluation(
            inspection=inspection,
            amendment=amendment,
            check_name=res.check,
            item_key=res.item,
            component=res.component,
            verdict=res.verdict,
            reason=res.reason,
            reason_parts=res.reason_parts,
            method=res.method,
            derived=res.derived,
            condition_code=res.condition_code,
        )
        for res in results
    ]
    Evaluation.objects.bulk_create(rows)
    return rows


def finding_open_or_get(*, key: dict[str, Any], fields: dict[str, Any]) -> tuple[Finding, bool]:
    """Open the finding of ``key`` (unit, part and problem) with ``fields``; should another writer have opened
    the same one meanwhile (the one-open-per-problem constraint refuses the insert), that one, locked.
    Returns (finding, opened here?)."""
    try:
        with transaction.atomic():
            return Finding.objects.create(**key, **fields), True
    except IntegrityError:
        return Finding.objects.select_for_update(of=("self",)).get(state=Finding.State.OPEN, **key), False


# What the latest observation of a finding sets (its own fields beside these: severity, last seen, times seen).
LATEST_VALUES = ("kind", "title", "reason", "reason_parts", "condition_code")


def finding_seen_again(
    finding: Finding, *, values: dict[str, Any], seen_at: dt.datetime, times_seen: int, latest: dict[str, Any]
) -> None:
    """One more observation of an open finding: the count, the worst severity so far and, when it is the latest
    observation, its time, its values and ``latest`` ({field: value} of the source: judgement and form, or
    evidence). An observation older than the latest (an amendment to an older visit) adds to the count only."""
    finding.times_seen = times_seen
    finding.severity = severity_worst(finding.severity, values["severity"])
    if seen_at >= (finding.last_seen_at or finding.opened_at):
        finding.last_seen_at = seen_at
        for name in LATEST_VALUES:
            setattr(finding, name, values[name])
        for name, value in latest.items():
            setattr(finding, name, value)
    finding.save(update_fields=["times_seen", "last_seen_at", "severity", *LATEST_VALUES, *latest])


def acting_person(by: User | None) -> User | None:
    return by if getattr(by, "is_authenticated", False) else None


def finding_close(
    finding: Finding, *, at: dt.datetime, cause: str, by: User | None, changes: dict[str, Any], note: str = ""
) -> None:
    finding.state, finding.closed_at, finding.close_cause = Finding.State.CLOSED, at, cause
    finding.closed_by = acting_person(by)
    finding.close_note = note[: Finding._meta.get_field("close_note").max_length]
    finding.save(update_fields=["state", "closed_at", "close_cause", "close_note", "closed_by", "cleared_by_amendment"])
    audit_record(
        actor=by,
        obj=finding,
        action="finding_close",
        organisation_id=finding.organisation_id,
        changes={"cause": cause, **({"note": note} if note else {}), **changes},
    )
