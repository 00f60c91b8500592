"""A form's failed evaluations into findings: each failure observes the open finding of its unit, part and
problem or opens one, in one insert; then the visit's resolutions and the corrective work they need."""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections.abc import Iterable
from typing import Any

from django.db import IntegrityError, transaction

from accounts.models import User
from accounts.services import audit_record
from engineering.controls import Verdict

from ... import reasons as rs
from ...evaluation import Result
from ...models import Amendment, ChecklistTemplate, Evaluation, Finding, Inspection
from .closing import banks_replaced, findings_resolve
from .corrective import corrective_for_group, proposal_withdraw_for_design_review
from .problems import (
    STEP_CHECKS,
    condition_of,
    finding_text_parts,
    finding_title,
    freeze_season_near,
    is_design_review,
    known_condition,
    problem_of,
    severity_of,
    step_labels,
    template_conditions,
)
from .record import finding_open_or_get, finding_seen_again

# An open finding's key among a unit's: (part id or None, problem).
Key = tuple[int | None, str]
# A failed judgement of a form: its row, its result, condition, urgent?, design review?, the finding's values.
Failing = tuple[Evaluation, Result, str, bool, bool, dict[str, Any]]


def _observe(
    *,
    inspection: Inspection,
    ev: Evaluation,
    res: Result,
    values: dict[str, Any],
    seen_at: dt.datetime,
    amendment: Amendment | None,
    by: User | None,
    known: dict[Key, Finding] | None = None,
    fresh: dict[Key, Evaluation] | None = None,
) -> tuple[Finding, bool]:
    """Update the open finding of this unit, part and problem with a new observation, or open one.

    Returns (finding, new?). A second failure of the same problem on the same form (the outdoor-air
    fraction by temperatures and by CO2) is one visit: it updates the values, not the count.
    ``known``: the unit's open findings, {(component id, problem): finding}, read (and locked) once by the
    caller; ``fresh``: those of them just opened for an observation, {key: its evaluation}.
    """
    key = {"ahu": inspection.ahu, "component": res.component, "problem": values["problem"]}
    known_key = (res.component.pk if res.component is not None else None, values["problem"])
    finding: Finding | None
    if known is not None and known_key in known:
        finding = known[known_key]
        if fresh is not None and fresh.get(known_key) is ev:
            del fresh[known_key]
            return finding, True  # opened by this observation, in findings_open's one insert
    else:
        finding = Finding.objects.select_for_update(of=("self",)).filter(state=Finding.State.OPEN, **key).first()
    if finding is None:
        finding, opened = finding_open_or_get(
            key=key,
            fields={
                "organisation_id": inspection.organisation_id,
                "inspection": inspection,
                "evaluation": ev,
                "opened_at": seen_at,
                "last_seen_at": seen_at,
                "times_seen": 1,
                "latest_evaluation": ev,
                "latest_inspection": inspection,
                "amendment": amendment,
                **{k: v for k, v in values.items() if k != "problem"},
            },
        )
        if known is not None:
            known[known_key] = finding
        if opened:
            return finding, True
        # another form opened it meanwhile: observe that one
    same_visit = finding.latest_inspection_id == inspection.pk
    finding_seen_again(
        finding,
        values=values,
        seen_at=seen_at,
        times_seen=finding.times_seen + (0 if same_visit else 1),
        latest={"latest_evaluation": ev, "latest_inspection": inspection},
    )
    audit_record(
        actor=by,
        obj=finding,
        action="finding_observe",
        organisation_id=finding.organisation_id,
        changes={
            "inspection": inspection.pk,
            "evaluation": ev.pk,
            "amendment": amendment.pk if amendment is not None else None,
            "times_seen": finding.times_seen,
        },
    )
    return finding, False


def _findings_opened(
    *, inspection: Inspection, failing: list[Failing], seen_at: dt.datetime, amendment: Amendment | None
) -> tuple[dict[Key, Finding], dict[Key, Evaluation], list[Finding]]:
    """The unit's open findings, locked, in one query; and the new ones the failures need, opened in one insert.

    Returns (known, fresh) for ``_observe`` and the open findings as read (for ``findings_resolve``). Should
    another form open one of the same findings meanwhile (the unique constraint refuses the insert), nothing is
    opened here and each failure goes its own way, as ever.
    """
    known: dict[Key, Finding] = {}
    rows = list(
        Finding.objects.select_for_update(of=("self",)).filter(state=Finding.State.OPEN, ahu_id=inspection.ahu_id)
    )
    for f in rows:
        known.setdefault((f.component_id, f.problem), f)  # newest first, as .first() would pick
    fresh: dict[Key, Evaluation] = {}
    new: list[tuple[Key, Finding]] = []
    for ev, res, _condition, _urgent, _design_review, values in failing:
        key = (res.component.pk if res.component is not None else None, values["problem"])
        if key in known or key in fresh:
            continue
        fresh[key] = ev
        new.append(
            (
                key,
                Finding(
                    organisation_id=inspection.organisation_id,
                    inspection=inspection,
                    evaluation=ev,
                    ahu=inspection.ahu,
                    component=res.component,
                    opened_at=seen_at,
                    last_seen_at=seen_at,
                    times_seen=1,
                    latest_evaluation=ev,
                    latest_inspection=inspection,
                    amendment=amendment,
                    **values,
                ),
            )
        )
    if not new:
        return known, fresh, rows
    try:
        with transaction.atomic():
            Finding.objects.bulk_create([f for _, f in new])
    except IntegrityError:
        return known, {}, rows
    known.update(new)
    return known, fresh, rows


def findings_open(
    *,
    inspection: Inspection,
    evaluations: list[Evaluation],
    results: list[Result],
    by: User | None,
    amendment: Amendment | None = None,
    opened_at: dt.datetime | None = None,
    templates: Iterable[ChecklistTemplate] = (),
) -> list[Finding]:
    """The findings a form's failed evaluations observe, each once, in order; corrective work proposed for them.

    A failure updates the open finding of the same unit, part and problem (last seen, times seen, latest
    values) or, when there is none, opens one first seen now. With ``amendment`` the observation points to it
    and is made at ``opened_at`` (the amendment's time). ``templates``: the newest checklist templates as already
    read with their items (a synced form's checklist): its failed steps are named from them, not read again.

    Corrective work: at most one open corrective work order per unit and problem, where every failed step
    of a test that names a scheduling condition is that condition's problem (the failed steps of the freeze
    test share one "freeze protection" work order). A design-review finding proposes none. A failed
    freeze-protection test inside or up to 30 days before the site's freeze season gets an urgent corrective
    work order, approved at once (the scheduling service e-mails the supervisors after commit); other work
    waits for a supervisor's approval.
    """
    site = inspection.ahu.building.site
    seen_at = opened_at or inspection.finished_at
    by_template = template_conditions()
    pairs = list(zip(evaluations, results, strict=True))
    labels = step_labels(
        {res.item for ev, res in pairs if ev.verdict == Verdict.FAIL and res.check in STEP_CHECKS}, current=templates
    )
    found: dict[int, Finding] = {}
    needs_work: dict[str, dict[str, Any]] = {}
    replaced = banks_replaced(results=results)
    failing: list[Failing] = []
    for ev, res in pairs:
        if ev.verdict != Verdict.FAIL:
            continue
        if res.check == "filter_loading" and res.component is not None and res.component.pk in replaced:
            continue  # the old set, read before it was replaced on this visit: the replacement answers it
        condition = condition_of(res, by_template)
        urgent = condition == "freeze_protection_failed" and freeze_season_near(
            site=site, on=seen_at.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date()
        )
        design_review = is_design_review(check=res.check, derived=ev.derived or {})
        parts = finding_text_parts(ev, res, ahu=inspection.ahu, design_review=design_review)
        values = {
            "problem": problem_of(check=res.check, item=res.item),
            "kind": Finding.Kind.DESIGN_REVIEW if design_review else Finding.Kind.CORRECTIVE,
            "severity": "critical" if urgent else severity_of(condition=condition, res=res, derived=ev.derived or {}),
            "title": finding_title(res, condition, labels, design_review=design_review),
            "reason": rs.render(parts, "si"),
            "reason_parts": parts,
            "condition_code": condition,
        }
        failing.append((ev, res, condition, urgent, design_review, values))
    known, fresh, open_rows = _findings_opened(
        inspection=inspection, failing=failing, seen_at=seen_at, amendment=amendment
    )
    for ev, res, condition, urgent, design_review, values in failing:
        finding, _ = _observe(
            inspection=inspection,
            ev=ev,
            res=res,
            values=values,
            seen_at=seen_at,
            amendment=amendment,
            by=by,
            known=known,
            fresh=fresh,
        )
        found[finding.pk] = finding
        if design_review:
            proposal_withdraw_for_design_review(finding=finding, by=by)
            continue
        group = needs_work.setdefault(
            known_condition(condition) or f"problem:{finding.problem}", {"findings": {}, "urgent": False}
        )
        group["findings"][finding.pk] = finding  # the latest copy of the row, as returned
        group["urgent"] = group["urgent"] or urgent
    if amendment is None:  # an amendment corrects an earlier visit: findings_close_cleared judges it
        findings_resolve(
            inspection=inspection,
            evaluations=evaluations,
            results=results,
            failed=set(found),
            at=seen_at,
            by=by,
            open_rows=open_rows,
        )
    source_ref = f"inspection:{inspection.pk}" + (f" amendment:{amendment.pk}" if amendment is not None else "")
    for key, group in needs_work.items():
        corrective_for_group(
            inspection=inspection,
            condition=key if not key.startswith("problem:") else "",
            findings=list(group["findings"].values()),
            urgent=group["urgent"],
            source_ref=source_ref,
            site=site,
            by=by,
        )
    return list(found.values())
