"""Findings: one open finding per unit, part and problem gathers every failure of it; done work closes it.

A finding closes when its corrective work order is completed (at the completion time; sent back for
rework, it opens again), when an amendment corrects the readings so that its check passes, when a later
visit judges the same check on the same part ok, or (a filter finding) when that bank's filters are replaced.
A failure after it closed opens a new finding. Corrective work still awaiting approval whose findings are all
closed is withdrawn.

Findings of other sources take the same path (``finding_observe_source``): the building-automation trends raise
one finding per unit, part and fault rule through ``automation.fault_findings``, closed with their fault
(``finding_close_source``: absent for the set time, or its corrective work completed).
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass, field
from typing import Any

from django.db import IntegrityError, transaction
from django.utils import timezone

from accounts.changes import organisation_changed
from accounts.services import audit_record
from engineering.controls import Verdict
from engineering.freeze import daily_minimums_from_normals
from engineering.outdoor_air import fraction_words
from scheduling.titles import title_fit

from .. import reasons as rs
from ..evaluation.results import ITEM_CONDITIONS, SEVERITY
from ..models import Evaluation, Finding, Inspection

FREEZE_LEAD_DAYS = 30
PRIORITY = {"critical": "urgent", "high": "high", "medium": "normal", "low": "low"}


def severity_of(*, condition: str, res, derived: dict) -> str:
    """How serious a failed check is. A filter at or past its final pressure drop at design airflow, or with
    its media bypassed, is high: it is changed now, not within the normal grace, as airflow falls off and
    loaded media can burst into the unit (common practice)."""
    base = SEVERITY.get(condition, res.severity)
    if res.check == "filter_loading" and (
        (derived.get("loading_pct") or 0) >= 100 or derived.get("media_bypass_suspected")
    ):
        return _worst(base, "high")
    return base


def freeze_season_near(*, site, on: dt.date, lead_days: int = FREEZE_LEAD_DAYS) -> bool:
    """Is ``on`` inside the site's freeze season or at most ``lead_days`` before it?

    Uses the site's computed season start when it falls in that window, and
    otherwise the daily minimums interpolated from the site's monthly normals
    (engineering.freeze.daily_minimums_from_normals) against its preheat threshold.
    """
    start = site.freeze_season_start
    if start is not None and 0 <= (start - on).days <= lead_days:
        return True
    days = daily_minimums_from_normals(monthly_min_c=site.normals_min_c, start=on, days=lead_days + 1)
    return any(t <= site.preheat_threshold_c for _, t in days)


# Plain names of the problems a check or a scheduling condition stands for (titles of findings and work).
CHECK_TITLES = {
    "filter_loading": "Filter loaded",
    "filter_after_change": "Filter pressure drop after change outside the clean range",
    "oa_fraction_temperature": "Outdoor air below minimum",
    "oa_fraction_co2": "Outdoor air below minimum",
    "coil_balance": "Coil heat balance off",
    "supply_temperature": "Supply-air temperature off set point",
    "duct_static": "Duct static pressure off set point",
    "damper_position": "Damper not at commanded position",
    "sensor_drift": "Sensor drift",
    "heat_recovery": "Heat recovery below design",
}
CONDITION_TITLES = {
    "filter_loaded": "Filter loaded",
    "sensor_drift": "Sensor drift",
    "supply_temp_off": "Supply-air temperature off set point",
    "damper_position": "Damper not at commanded position",
    "fan_not_proven": "Fan not proven",
    "freeze_protection_failed": "Freeze protection failed",
    "valve_leak": "Coil valve passing water when shut",
}
# Condition codes the scheduling engine knows (each has its title above); other fails raise corrective work without one.
KNOWN_CONDITIONS = frozenset(CONDITION_TITLES)
# A filter reading below its clean pressure drop is about missing or bypassed media, not loading.
FILTER_BYPASS_TITLE = "Filter media missing, torn or bypassed"
# An outdoor-air shortfall that comes from the design: the unit meets its design minimum, which is too low.
DESIGN_REVIEW_TITLE = "Design minimum outdoor air below the ventilation requirement"
FILTER_CHECKS = {"filter_loading", "filter_after_change"}
# Checks over the outdoor-air fraction: one problem however it was measured.
OUTDOOR_AIR_CHECKS = {"oa_fraction_temperature", "oa_fraction_co2"}
# Judgements of single checklist answers (a step of a test) rather than of a calculation.
STEP_CHECKS = {"check", "choice", "limits"}
SEVERITY_ORDER = ["low", "medium", "high", "critical"]


def _template_conditions() -> dict[str, str]:
    """{checklist template code: condition} for the tests whose failed steps name a scheduling condition.

    Every failed step of such a test (e.g. the preheater and freeze-protection test) is part of the same
    problem for corrective work: one work order per unit and condition holds the findings of all its steps.
    """
    return {key.split(".", 1)[0]: code for key, code in ITEM_CONDITIONS.items()}


def problem_of(*, check: str, item: str) -> str:
    """The problem a failed judgement is about: one open finding per unit, part and problem.

    A step of a checklist is its own problem (each failed step of a test is one finding); the outdoor-air
    fraction is one problem whether measured by temperatures or by CO2; other checks by check and reading.
    """
    if check in OUTDOOR_AIR_CHECKS:
        return "outdoor_air"
    if check in STEP_CHECKS:
        return item
    return f"{check}:{item}"[:120]


def _step_labels(items: set[str]) -> dict[str, tuple[str, str]]:
    """{api key: (test title, step label)} of checklist items, each from the latest template version that has it;
    one query for all the steps of a form."""
    from ..models import ChecklistItem

    if not items:
        return {}
    out: dict[str, tuple[str, str]] = {}
    for code, key, title, label in (
        ChecklistItem.objects.filter(template__code__in={i.partition(".")[0] for i in items})
        .order_by("template__version")
        .values_list("template__code", "key", "template__title", "label")
    ):
        if f"{code}.{key}" in items:
            out[f"{code}.{key}"] = (title, label)  # a later version's wins
    return out


def _title(res, condition: str, labels: dict[str, tuple[str, str]], *, design_review: bool = False) -> str:
    """A plain title: the problem's name, or the test and its step; then the part it concerns. A design review
    names the design minimum below the requirement (the unit meets its design minimum)."""
    where = f" — {res.component.name}" if res.component is not None else ""
    words = DESIGN_REVIEW_TITLE if design_review else CHECK_TITLES.get(res.check)
    if res.check in FILTER_CHECKS and (getattr(res, "derived", None) or {}).get("media_bypass_suspected") is True:
        words = FILTER_BYPASS_TITLE
    if words is None and res.check in STEP_CHECKS:
        found = labels.get(res.item)
        if found is not None:
            test, step = found
            words = f"{CONDITION_TITLES.get(condition, test)}: {step}"
    if words is None:
        words = CONDITION_TITLES.get(condition, "Deficiency")
    return title_fit(words + where, limit=Finding._meta.get_field("title").max_length)


def design_shortfall(derived: dict) -> bool:
    """Does the ventilation requirement exceed the unit's design minimum outdoor air?

    Uses the evaluation's own ``design_shortfall`` when it carries one, otherwise compares the derived
    requirement with the design minimum outdoor airflow (both m³/s, as the evaluation recorded them).
    """
    if "design_shortfall" in derived:
        return bool(derived["design_shortfall"])
    required, design = derived.get("required_outdoor_airflow_m3s"), derived.get("design_min_outdoor_airflow_m3s")
    return required is not None and design is not None and required > design


def _not_below_design_minimum(derived: dict) -> bool:
    """The measured fraction does not fail the design minimum: its band, uncertainty included, reaches it
    (engineering.outdoor_air.fraction_check fails only when the whole band is below the minimum)."""
    x, u, minimum = derived.get("oa_fraction"), derived.get("uncertainty", 0.0), derived.get("design_min_oa_fraction")
    return x is not None and minimum is not None and x + u >= minimum


def is_design_review(*, check: str, derived: dict) -> bool:
    """A shortfall from the design, not from the unit's upkeep: the unit does not fail its design minimum
    outdoor air, but the space needs more than that design minimum, so the failure comes from the requirement.
    Monthly corrective work cannot fix it."""
    if check == "full_oa_airflow":  # 100 % outdoor air: its design airflow is its design outdoor air
        q, u = derived.get("outdoor_airflow_m3s"), derived.get("airflow_uncertainty_m3s", 0.0)
        design = derived.get("design_supply_airflow_m3s")
        return bool(derived.get("design_shortfall")) and q is not None and design is not None and q + u >= design
    return check in OUTDOOR_AIR_CHECKS and design_shortfall(derived) and _not_below_design_minimum(derived)


def _outdoor_air_parts(*, check: str, derived: dict, ahu, design_review: bool) -> list | None:
    """The outdoor-air shortfall in words and quantities: measured, design minimum, requirement, what failed."""
    from engineering.ventilation import SPACE_KINDS

    try:
        x, u = derived["oa_fraction"], derived.get("uncertainty", 0.0)
        oa_q, supply_q = derived["outdoor_airflow_m3s"], derived["supply_airflow_m3s"]
        dmin, dmin_q = derived["design_min_oa_fraction"], derived["design_min_outdoor_airflow_m3s"]
    except KeyError:
        return None
    by = "temperatures" if check == "oa_fraction_temperature" else "CO2"
    parts: list = [
        f"Outdoor air measured by {by}: {fraction_words(x, u)} of the supply air (",
        rs.q(oa_q, "airflow"),
        f"); the unit's design minimum is {dmin * 100:.0f} % (",
        rs.q(dmin_q, "airflow"),
        ")",
    ]
    required = derived.get("required_outdoor_airflow_m3s")
    if required is not None and supply_q:
        kind = SPACE_KINDS.get(ahu.space_kind)
        space = f" for {kind.label.lower()}" if kind is not None else ""
        parts += [
            f"; the space needs {min(required / supply_q, 1.0) * 100:.0f} % (",
            rs.q(required, "airflow"),
            f"){space} by the ASHRAE 62.1 ventilation rate procedure",
        ]
    if x + u < dmin:
        parts.append(f". Fails: below the design minimum {dmin * 100:.0f} %")
    elif required is not None and supply_q:
        parts.append(f". Fails: below the {min(required / supply_q, 1.0) * 100:.0f} % the space needs")
    if design_review:
        parts.append(
            ". The unit's design minimum is below what the space needs: a design review, "
            "not monthly corrective work (no work order is proposed)"
        )
    return rs.flatten(parts)


def _text_parts(ev: Evaluation, res, *, ahu, design_review: bool) -> list:
    """The finding's text: the check's numbers and the limit that failed it, from the evaluation's parts.

    The title names the part ("Filter loaded — Final filters"), so the text does not start with it again: every
    page and PDF shows the two together ("Filter loaded — Final filters: filter at 112 % of its span …").
    """
    if res.check in OUTDOOR_AIR_CHECKS:
        parts = _outdoor_air_parts(check=res.check, derived=ev.derived, ahu=ahu, design_review=design_review)
        if parts is not None:
            return parts
    parts = list(ev.reason_parts or ([ev.reason] if ev.reason else []))
    return rs.without_subject(parts, res.component.name) if res.component is not None else parts


def evaluations_store(*, inspection: Inspection, results, amendment=None) -> list[Evaluation]:
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


def _worst(a: str, b: str) -> str:
    return max(a, b, key=lambda s: SEVERITY_ORDER.index(s) if s in SEVERITY_ORDER else 0)


def _open_or_get(*, key: dict[str, Any], fields: dict[str, Any]) -> tuple[Finding, bool]:
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


def _seen_again(
    finding: Finding, *, values: dict[str, Any], seen_at: dt.datetime, times_seen: int, latest: dict[str, Any]
) -> None:
    """One more observation of an open finding: the count, the worst severity so far and, when it is the latest
    observation, its time, its values and ``latest`` ({field: value} of the source: judgement and form, or
    evidence). An observation older than the latest (an amendment to an older visit) adds to the count only."""
    finding.times_seen = times_seen
    finding.severity = _worst(finding.severity, values["severity"])
    if seen_at >= (finding.last_seen_at or finding.opened_at):
        finding.last_seen_at = seen_at
        for name in LATEST_VALUES:
            setattr(finding, name, values[name])
        for name, value in latest.items():
            setattr(finding, name, value)
    finding.save(update_fields=["times_seen", "last_seen_at", "severity", *LATEST_VALUES, *latest])


def _observe(
    *, inspection: Inspection, ev: Evaluation, res, values: dict, seen_at, amendment, by, known=None, fresh=None
):
    """Update the open finding of this unit, part and problem with a new observation, or open one.

    Returns (finding, new?). A second failure of the same problem on the same form (the outdoor-air
    fraction by temperatures and by CO2) is one visit: it updates the values, not the count.
    ``known``: the unit's open findings, {(component id, problem): finding}, read (and locked) once by the
    caller; ``fresh``: those of them just opened for an observation, {key: its evaluation}.
    """
    key = {"ahu": inspection.ahu, "component": res.component, "problem": values["problem"]}
    known_key = (res.component.pk if res.component is not None else None, values["problem"])
    if known is not None and known_key in known:
        finding = known[known_key]
        if fresh is not None and fresh.get(known_key) is ev:
            del fresh[known_key]
            return finding, True  # opened by this observation, in findings_open's one insert
    else:
        finding = Finding.objects.select_for_update(of=("self",)).filter(state=Finding.State.OPEN, **key).first()
    if finding is None:
        finding, opened = _open_or_get(
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
    _seen_again(
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
        organisation=finding.organisation,
        changes={
            "inspection": inspection.pk,
            "evaluation": ev.pk,
            "amendment": amendment.pk if amendment is not None else None,
            "times_seen": finding.times_seen,
        },
    )
    return finding, False


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


TITLE_MAX: int = Finding._meta.get_field("title").max_length or 200


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
        finding, opened = _open_or_get(
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
        _seen_again(
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
    _close(locked, at=at, cause=cause, by=by, changes={"source": locked.source, "rule": locked.rule}, note=note)
    finding.state, finding.closed_at, finding.close_cause, finding.close_note = (
        locked.state,
        locked.closed_at,
        locked.close_cause,
        locked.close_note,
    )
    return True


def _findings_opened(*, inspection: Inspection, failing: list, seen_at, amendment) -> tuple[dict, dict, list]:
    """The unit's open findings, locked, in one query; and the new ones the failures need, opened in one insert.

    Returns (known, fresh) for ``_observe`` and the open findings as read (for ``findings_resolve``). Should
    another form open one of the same findings meanwhile (the unique constraint refuses the insert), nothing is
    opened here and each failure goes its own way, as ever.
    """
    known: dict = {}
    rows = list(
        Finding.objects.select_for_update(of=("self",)).filter(state=Finding.State.OPEN, ahu_id=inspection.ahu_id)
    )
    for f in rows:
        known.setdefault((f.component_id, f.problem), f)  # newest first, as .first() would pick
    fresh: dict = {}
    new: list[tuple[tuple, Finding]] = []
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
    *, inspection: Inspection, evaluations: list[Evaluation], results, by, amendment=None, opened_at=None
) -> list[Finding]:
    """The findings a form's failed evaluations observe, each once, in order; corrective work proposed for them.

    A failure updates the open finding of the same unit, part and problem (last seen, times seen, latest
    values) or, when there is none, opens one first seen now. With ``amendment`` the observation points to it
    and is made at ``opened_at`` (the amendment's time).

    Corrective work: at most one open corrective work order per unit and problem, where every failed step
    of a test that names a scheduling condition is that condition's problem (the failed steps of the freeze
    test share one "freeze protection" work order). A design-review finding proposes none. A failed
    freeze-protection test inside or up to 30 days before the site's freeze season gets an urgent corrective
    work order, approved at once (the scheduling service e-mails the supervisors after commit); other work
    waits for a supervisor's approval.
    """
    site = inspection.ahu.building.site
    seen_at = opened_at or inspection.finished_at
    by_template = _template_conditions()
    pairs = list(zip(evaluations, results, strict=True))
    labels = _step_labels({res.item for ev, res in pairs if ev.verdict == Verdict.FAIL and res.check in STEP_CHECKS})
    found: dict[int, Finding] = {}
    needs_work: dict[str, dict] = {}
    replaced = banks_replaced(results=results)
    failing = []
    for ev, res in pairs:
        if ev.verdict != Verdict.FAIL:
            continue
        if res.check == "filter_loading" and res.component is not None and res.component.pk in replaced:
            continue  # the old set, read before it was replaced on this visit: the replacement answers it
        condition = res.condition_code
        if not condition and res.check in STEP_CHECKS:
            condition = by_template.get(res.item.split(".", 1)[0], "")
        urgent = condition == "freeze_protection_failed" and freeze_season_near(
            site=site, on=seen_at.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date()
        )
        design_review = is_design_review(check=res.check, derived=ev.derived or {})
        parts = _text_parts(ev, res, ahu=inspection.ahu, design_review=design_review)
        values = {
            "problem": problem_of(check=res.check, item=res.item),
            "kind": Finding.Kind.DESIGN_REVIEW if design_review else Finding.Kind.CORRECTIVE,
            "severity": "critical" if urgent else severity_of(condition=condition, res=res, derived=ev.derived or {}),
            "title": _title(res, condition, labels, design_review=design_review),
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
            _withdraw_proposal_for_design_review(finding=finding, by=by)
            continue
        group = needs_work.setdefault(
            _known(condition) or f"problem:{finding.problem}", {"findings": {}, "urgent": False}
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
        _corrective_for_group(
            inspection=inspection,
            condition=key if not key.startswith("problem:") else "",
            findings=list(group["findings"].values()),
            urgent=group["urgent"],
            source_ref=source_ref,
            site=site,
            by=by,
        )
    return list(found.values())


RESOLVED_WITHDRAWN = "withdrawn: its findings were resolved on a later visit before the work was approved"
# Findings a later partial ok must not close: the freeze-protection test closes by the corrective retest.
NOT_RESOLVED_BY_LATER_OK = {"freeze_protection_failed"}


def banks_replaced(*, results) -> set[int]:
    """Filter banks whose filters the form says were replaced (the replacement step answered ok)."""
    return {
        res.component.pk
        for res in results
        if res.item == "filter_replace.replaced" and res.verdict == Verdict.OK and res.component is not None
    }


def _is_filter_finding(finding: Finding) -> bool:
    return finding.condition_code == "filter_loaded" or finding.problem.split(":", 1)[0] in FILTER_CHECKS


def findings_resolve(
    *, inspection: Inspection, evaluations, results, failed: set[int], at, by, open_rows: list | None = None
) -> list[Finding]:
    """Close the open findings of this unit that this visit (finished at ``at``) shows resolved.

    A finding is resolved when the visit judges the same check of the same part ok ("ok on a later visit"), or
    for a filter finding when that bank's filters were replaced ("filters replaced"); closed at ``at``, audited.
    Findings this visit saw fail (``failed``), findings seen on a visit after this one (an older form synced
    late), and freeze-protection findings (closed by the corrective retest) stay open. Corrective work still
    awaiting approval whose findings are then all closed is withdrawn.

    ``open_rows``: the unit's open findings as the caller read and locked them in this transaction (else read).
    """
    ok = {
        (problem_of(check=res.check, item=res.item), res.component.pk if res.component else None)
        for ev, res in zip(evaluations, results, strict=True)
        if ev.verdict == Verdict.OK
    }
    replaced = banks_replaced(results=results)
    if not ok and not replaced:
        return []
    closed = []
    if open_rows is None:
        open_rows = list(
            Finding.objects.select_for_update(of=("self",)).filter(ahu_id=inspection.ahu_id, state=Finding.State.OPEN)
        )
    candidates = sorted(
        (
            f
            for f in open_rows
            if f.state == Finding.State.OPEN and f.pk not in failed and f.condition_code not in NOT_RESOLVED_BY_LATER_OK
        ),
        key=lambda f: f.pk,
    )
    for finding in candidates:
        if finding.latest_inspection_id == inspection.pk or (finding.last_seen_at or finding.opened_at) > at:
            continue
        if finding.component_id in replaced and _is_filter_finding(finding):
            cause = Finding.CloseCause.REPLACED
        elif (finding.problem, finding.component_id) in ok:
            cause = Finding.CloseCause.OK_LATER
        else:
            continue
        _close(finding, at=at, cause=cause, by=by, changes={"inspection": inspection.pk})
        closed.append(finding)
    _withdraw_resolved(findings=closed, by=by)
    return closed


def _withdraw_resolved(*, findings: list[Finding], by) -> None:
    """Withdraw (cancel, audited) each corrective proposal still awaiting approval whose findings are all closed.
    Approved work is left to the supervisor."""
    from scheduling.models import WorkOrder
    from scheduling.services import work_order_cancel

    ids = {f.corrective_work_order_id for f in findings if f.corrective_work_order_id is not None}
    for wo in WorkOrder.objects.select_for_update().filter(pk__in=ids).order_by("pk"):
        if wo.approval != WorkOrder.Approval.PENDING or wo.state not in WorkOrder.OPEN_STATES:
            continue
        if Finding.objects.filter(corrective_work_order=wo, state=Finding.State.OPEN).exists():
            continue
        work_order_cancel(work_order=wo, by=by, reason=RESOLVED_WITHDRAWN)


DESIGN_REVIEW_WITHDRAWN = (
    "withdrawn: its findings are now design review items (the unit's design minimum outdoor air is below what "
    "the space needs), not monthly corrective work"
)


def _withdraw_proposal_for_design_review(*, finding: Finding, by) -> None:
    """A finding that has become a design review no longer asks for the corrective work proposed for it earlier:
    a proposal still awaiting approval whose open findings are all design reviews is cancelled (audited).
    Approved work is left to the supervisor."""
    from scheduling.models import WorkOrder
    from scheduling.services import work_order_cancel

    wo = finding.corrective_work_order
    if wo is None or wo.approval != WorkOrder.Approval.PENDING or wo.state not in WorkOrder.OPEN_STATES:
        return
    others = Finding.objects.filter(corrective_work_order=wo, state=Finding.State.OPEN).exclude(pk=finding.pk)
    if others.exclude(kind=Finding.Kind.DESIGN_REVIEW).exists():
        return
    work_order_cancel(work_order=wo, by=by, reason=DESIGN_REVIEW_WITHDRAWN)
    wo.refresh_from_db()


def _is_open_work(wo) -> bool:
    from scheduling.models import WorkOrder

    return (
        wo is not None
        and wo.kind == WorkOrder.Kind.CORRECTIVE
        and wo.state in WorkOrder.OPEN_STATES
        and wo.approval != WorkOrder.Approval.REJECTED
    )


def _corrective_for_group(*, inspection, condition: str, findings: list[Finding], urgent: bool, source_ref, site, by):
    """One corrective work order for the findings of one problem: the open one, or a new proposal."""
    from scheduling.services import corrective_work_order_propose

    waiting = [f for f in findings if not _is_open_work(f.corrective_work_order)]
    if not waiting:
        return
    components = {f.component_id for f in findings}
    component = findings[0].component if len(components) == 1 else None
    wo = _open_corrective_for(
        ahu_id=inspection.ahu_id, condition=condition, problem=findings[0].problem, component=component
    )
    if wo is not None and wo.component_id is not None and len(components) > 1:
        # Work for one part holds the findings of that part only: each part finds or proposes its own.
        for part in dict.fromkeys(f.component_id for f in findings):
            _corrective_for_group(
                inspection=inspection,
                condition=condition,
                findings=[f for f in findings if f.component_id == part],
                urgent=urgent,
                source_ref=source_ref,
                site=site,
                by=by,
            )
        return
    if wo is None:
        worst = max((f.severity for f in findings), key=SEVERITY_ORDER.index)
        if condition:
            title = CONDITION_TITLES.get(condition, findings[0].title)
            if all(f.title.startswith(FILTER_BYPASS_TITLE) for f in findings):
                title = FILTER_BYPASS_TITLE  # not a loaded filter: its media is missing, torn or bypassed
            title += f" — {component.name}" if component is not None else _parts_named(findings)
        else:
            title = findings[0].title
        # Work for several parts names each part before its finding's text (the title names no single part).
        reason = "; ".join(
            f"{f.component.name}: {f.reason}" if component is None and f.component is not None else f.reason
            for f in findings
        )
        if urgent:
            reason += f" — inside or within {FREEZE_LEAD_DAYS} days of the freeze season at {site.name}"
        wo = corrective_work_order_propose(
            ahu=inspection.ahu,
            title=title,
            reason=reason,
            condition_code=condition,
            priority="urgent" if urgent else PRIORITY[worst],
            component=component,
            source_ref=source_ref,
            by=by,
            approved=urgent,
            observed_on=inspection.finished_at.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date(),
        )
    Finding.objects.filter(pk__in=[f.pk for f in waiting]).update(corrective_work_order=wo)
    for finding in waiting:
        finding.corrective_work_order = wo


def _parts_named(findings: list[Finding]) -> str:
    """ " — A and B": the parts of work for several parts, when every finding it holds names its part."""
    if any(f.component is None for f in findings):
        return ""
    names = list(dict.fromkeys(f.component.name for f in findings))
    return " — " + (", ".join(names[:-1]) + " and " + names[-1] if len(names) > 1 else names[0])


def _open_corrective_for(*, ahu_id: int, condition: str, problem: str, component):
    """The open corrective work order of this unit for the same problem, if any (locked).

    The same problem is the same scheduling condition, or for failures without one (drain pan, belt, low
    outdoor air, coil balance, duct static, heat recovery…) the same problem of the findings it holds. A work
    order for the whole unit serves every part; a failure of the whole unit is served by the work order of
    any part. Open means not completed, verified or cancelled, and not rejected by a supervisor.
    """
    from django.db.models import Q

    from scheduling.models import WorkOrder

    qs = WorkOrder.objects.filter(
        ahu_id=ahu_id, kind=WorkOrder.Kind.CORRECTIVE, state__in=WorkOrder.OPEN_STATES
    ).exclude(approval=WorkOrder.Approval.REJECTED)
    if condition:
        qs = qs.filter(condition_code=condition)
    else:
        qs = qs.filter(condition_code="", source_findings__problem=problem)
    if component is not None:
        qs = qs.filter(Q(component=component) | Q(component__isnull=True))
    wo_id = qs.order_by("created_at", "pk").values_list("pk", flat=True).first()
    if wo_id is None:
        return None
    return WorkOrder.objects.select_for_update().get(pk=wo_id)


def _known(code: str) -> str:
    return code if code in KNOWN_CONDITIONS else ""


def _actor(by):
    return by if getattr(by, "is_authenticated", False) else None


def _close(finding: Finding, *, at: dt.datetime, cause: str, by, changes: dict, note: str = "") -> None:
    finding.state, finding.closed_at, finding.close_cause = Finding.State.CLOSED, at, cause
    finding.closed_by = _actor(by)
    finding.close_note = note[: Finding._meta.get_field("close_note").max_length]
    finding.save(update_fields=["state", "closed_at", "close_cause", "close_note", "closed_by", "cleared_by_amendment"])
    audit_record(
        actor=by,
        obj=finding,
        action="finding_close",
        organisation=finding.organisation,
        changes={"cause": cause, **({"note": note} if note else {}), **changes},
    )


def findings_close_corrected(*, work_order, by) -> list[Finding]:
    """Close the open findings whose corrective work order has just been completed, at its completion time.

    A finding the work order's own form saw failing again (a retest after the repair that still fails) is not
    corrected: it stays open and gets new corrective work, proposed as its first failure's was (urgent near the
    freeze season), so the fault never reads as closed while it is still there.
    """
    at = work_order.completed_at or timezone.now()
    # Locked plainly first: most completed work is corrective for nothing, and the joins cost more than the lock.
    # In id order (the rows are read in their own order below): no sort by the default ordering for every form.
    ids = list(
        Finding.objects.select_for_update()
        .filter(corrective_work_order=work_order, state=Finding.State.OPEN)
        .order_by("pk")
        .values_list("pk", flat=True)
    )
    found = (
        list(
            Finding.objects.filter(pk__in=ids).select_related(
                "latest_inspection__work_order", "ahu__building__site", "component"
            )
        )
        if ids
        else []
    )
    still_failing = [f for f in found if f.latest_inspection and f.latest_inspection.work_order_id == work_order.pk]
    closed = [f for f in found if f not in still_failing]
    for finding in closed:
        _close(
            finding, at=at, cause=Finding.CloseCause.CORRECTED, by=by, changes={"work_order": str(work_order.public_id)}
        )
    groups: dict[str, list[Finding]] = {}
    for finding in still_failing:
        finding.corrective_work_order = work_order  # completed now: no longer open work for it
        groups.setdefault(_known(finding.condition_code) or f"problem:{finding.problem}", []).append(finding)
    for key, group in groups.items():
        inspection = group[0].latest_inspection
        site = group[0].ahu.building.site
        _corrective_for_group(
            inspection=inspection,
            condition=key if not key.startswith("problem:") else "",
            findings=group,
            urgent=any(f.severity == "critical" for f in group),
            source_ref=f"inspection:{inspection.pk}",
            site=site,
            by=by,
        )
    return closed


def findings_reopen_for_rework(*, work_order, by) -> list[Finding]:
    """Corrective work sent back for rework: the findings its completion closed are open again.

    A finding of the building-automation trends stays closed with its fault: the trends judge the unit again
    each night, and a fault still there opens a new fault and finding, held by the open rework."""
    found = list(
        Finding.objects.select_for_update()
        .filter(corrective_work_order=work_order, state=Finding.State.CLOSED, close_cause=Finding.CloseCause.CORRECTED)
        .exclude(source=Finding.Source.BAS_TREND)
    )
    for finding in found:
        finding.state, finding.closed_at, finding.close_cause, finding.closed_by = Finding.State.OPEN, None, "", None
        finding.save(update_fields=["state", "closed_at", "close_cause", "closed_by"])
        audit_record(
            actor=by,
            obj=finding,
            action="finding_reopen",
            organisation=finding.organisation,
            changes={"work_order": str(work_order.public_id), "reason": "corrective work sent back for rework"},
        )
    return found


def findings_close_cleared(*, inspection: Inspection, amendment, results, by) -> list[Finding]:
    """Close the open findings last seen on this inspection whose check the amendment's corrected readings
    now pass (ok). A finding seen again on a later visit stays open: the later failure stands.

    Only an ok clears a finding: a watch (near a limit, or a check that cannot judge) leaves it open for the
    supervisor. The corrective work it proposed is left as it is; the supervisor may reject or cancel it.
    """
    passing = {
        (res.check, res.item, res.component.pk if res.component else None)
        for res in results
        if res.verdict == Verdict.OK
    }
    found = [
        f
        for f in Finding.objects.select_for_update(of=("self",))  # lock the findings, not their (nullable) parts
        .filter(latest_inspection=inspection, state=Finding.State.OPEN)
        .select_related("latest_evaluation", "component")
        if (f.latest_evaluation.check_name, f.latest_evaluation.item_key, f.latest_evaluation.component_id) in passing
    ]
    for finding in found:
        finding.cleared_by_amendment = amendment
        _close(
            finding,
            at=amendment.created_at,
            cause=Finding.CloseCause.AMENDED,
            by=by,
            changes={"amendment": amendment.pk},
        )
    return found


def work_order_moved(sender, *, work_order, before: str, by, **kwargs) -> None:
    """``scheduling.signals.work_order_moved`` receiver: completion closes findings, rework reopens them."""
    from scheduling.models import WorkOrder

    if work_order.state == WorkOrder.State.COMPLETED:
        findings_close_corrected(work_order=work_order, by=by)
    elif before == WorkOrder.State.COMPLETED and work_order.state == WorkOrder.State.IN_PROGRESS:
        findings_reopen_for_rework(work_order=work_order, by=by)


@transaction.atomic
def finding_work_order_attach(*, finding: Finding, work_order, by) -> Finding:
    """A supervisor's work order made for ``finding`` (frontend "Make a work order") becomes its corrective work:
    the findings page says its state, and completing it closes the finding as corrected
    (:func:`findings_close_corrected`). Refused when the finding already holds open corrective work, so one
    fault never has two repairs running; a design review is never given corrective work."""
    from django.core.exceptions import ValidationError

    locked = Finding.objects.select_for_update(of=("self",)).select_related("corrective_work_order").get(pk=finding.pk)
    if locked.state != Finding.State.OPEN:
        raise ValidationError({"finding": [f"Finding: “{locked.title}” is {locked.get_state_display().lower()}"]})
    if locked.kind == Finding.Kind.DESIGN_REVIEW:
        raise ValidationError(
            {"finding": [f"Finding: “{locked.title}” is a design review; it takes no corrective work"]}
        )
    held = locked.corrective_work_order
    if _is_open_work(held) and held.pk != work_order.pk:
        raise ValidationError(
            {
                "finding": [
                    f"Finding: “{locked.title}” already has open corrective work, “{held.title}” "
                    f"({held.state_words}); approve or assign that one instead"
                ]
            }
        )
    locked.corrective_work_order = work_order
    locked.save(update_fields=["corrective_work_order"])
    audit_record(
        actor=_actor(by),
        obj=locked,
        action="finding_work_order_attach",
        organisation=locked.organisation,
        changes={"work_order": str(work_order.public_id), "replaced": str(held.public_id) if held else None},
    )
    organisation_changed(organisation_id=locked.organisation_id)
    finding.corrective_work_order = work_order
    return locked
