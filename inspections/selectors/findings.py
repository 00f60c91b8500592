"""Reads of findings: a finding's shape and reason in the reader's units, the plain names of checks, the
findings a visit saw, and a finding's observations and photos."""

from __future__ import annotations

from engineering.controls import Verdict
from engineering.units import SYSTEMS, UnitSystem

from ..models import ChecklistItem, Evaluation, Finding, Photo


def reason_for(*, evaluation, unit_system: str) -> str:
    """The reason of an evaluation (or a reading's verdict) in the reader's units ("si" or "us").

    Renders ``reason_parts`` through engineering.formatting (inspections.reasons);
    rows stored before reasons had parts fall back to the stored SI text.
    Accepts an Evaluation, a Reading, or a Finding (its own text, from its latest observation).
    """
    from .. import reasons

    if unit_system not in SYSTEMS:
        unit_system = UnitSystem.SI
    if isinstance(evaluation, Finding):
        # The finding's own text (its latest observation); findings stored before it had one: the latest
        # judgement's reason.
        if evaluation.reason_parts:
            return reasons.render(evaluation.reason_parts, unit_system)
        if evaluation.latest_evaluation_id is None and evaluation.evaluation_id is None:
            return evaluation.reason  # a finding of another source with no judgement row: its own text
        evaluation = evaluation.latest_evaluation or evaluation.evaluation
    parts = getattr(evaluation, "reason_parts", None)
    if not parts:
        return evaluation.reason
    return reasons.render(parts, unit_system)


def finding_shape(*, finding: Finding, unit_system: str) -> dict:
    """One finding as every API answer shows it: plain title and text in the reader's units, first and last
    seen, how many visits (or, from the trends, days) saw it, its kind and its corrective work (none for a design
    review); who saw it (``source``, ``source_words``), and for a trend finding the rule and its evidence."""
    wo = finding.corrective_work_order
    evidence = None
    if finding.source != Finding.Source.INSPECTION:
        e = finding.evidence or {}
        evidence = {
            "section": e.get("section") or "",
            "window_start": e.get("start"),
            "window_end": e.get("end"),
            "share": e.get("share"),
            "days": e.get("days") or finding.times_seen,
            "lowest_supply_air_c": e.get("lowest_c"),
        }
    return {
        "id": finding.pk,
        "kind": finding.kind,
        "kind_label": finding.get_kind_display(),
        "severity": finding.severity,
        "state": finding.state,
        "title": finding.title,
        "text": reason_for(evaluation=finding, unit_system=unit_system),
        "first_seen": finding.opened_at.isoformat(),
        "last_seen": (finding.last_seen_at or finding.opened_at).isoformat(),
        "times_seen": finding.times_seen,
        "corrective_work_order": str(wo.public_id) if wo is not None else None,
        "source": finding.source,
        "source_words": finding.source_words,
        "rule": finding.rule,
        "evidence": evidence,
    }


# Plain names of the checks over several readings, for people (never the check's code).
CHECK_LABELS = {
    "filter_loading": "Filter loading at design airflow",
    "filter_after_change": "Filter pressure drop after change",
    "oa_fraction_temperature": "Outdoor-air fraction by temperatures",
    "oa_fraction_co2": "Outdoor-air fraction by CO2",
    "coil_balance": "Coil heat balance",
    "supply_temperature": "Supply-air temperature against set point",
    "duct_static": "Duct static pressure against set point",
    "damper_position": "Damper position against command",
    "sensor_drift": "Sensor against reference meter",
    "heat_recovery": "Heat-recovery effectiveness",
}


def item_labels(*, api_keys) -> dict[str, str]:
    """{"<template code>.<key>": the item's label (latest template version)} for the given api keys."""
    wanted = {k.partition(".")[0]: set() for k in api_keys if "." in k}
    for k in api_keys:
        if "." in k:
            wanted[k.partition(".")[0]].add(k.partition(".")[2])
    out: dict[str, str] = {}
    rows = (
        ChecklistItem.objects.filter(template__code__in=list(wanted))
        .order_by("template__code", "key", "template__version")
        .values_list("template__code", "key", "label")
    )
    for code, key, label in rows:  # latest version last, so it wins
        if key in wanted.get(code, ()):
            out[f"{code}.{key}"] = label
    return out


def check_label(*, check: str, item: str, labels: dict[str, str]) -> str:
    """The plain name of a judgement: the check's name, or for a single answer the checklist item's label."""
    if check in CHECK_LABELS:
        return CHECK_LABELS[check]
    return labels.get(item) or "Checklist answer"


def findings_seen_on(*, inspections) -> dict[int, list[Finding]]:
    """{inspection id: the findings its failed judgements observed}, each finding once, oldest first.

    A finding gathers the visits that saw it, so a visit's record lists the finding that was open for each of its
    failures at the time (same unit, part and problem), not only the findings it opened.
    """
    from ..services.findings import problem_of

    by_id = {i.pk: i for i in inspections}
    if not by_id:
        return {}
    failed = list(
        Evaluation.objects.filter(inspection_id__in=by_id, verdict=Verdict.FAIL).values_list(
            "inspection_id", "check_name", "item_key", "component_id"
        )
    )
    ahu_ids = {i.ahu_id for i in by_id.values()}
    candidates = list(
        Finding.objects.filter(ahu_id__in=ahu_ids)
        .exclude(close_cause=Finding.CloseCause.MERGED)
        .select_related("component", "corrective_work_order", "evaluation", "latest_evaluation")
        .order_by("opened_at", "pk")
    )
    out: dict[int, list[Finding]] = {pk: [] for pk in by_id}
    for f in candidates:  # the first and the latest visit that saw it
        for insp_id in {f.inspection_id, f.latest_inspection_id} & set(by_id):
            out[insp_id].append(f)
    for insp_id, check, item, component_id in failed:
        insp = by_id[insp_id]
        problem = problem_of(check=check, item=item)
        # Amendment failures open at the amendment's time, after the visit: the finding's own first
        # inspection counts too.
        match = next(
            (
                f
                for f in candidates
                if f.ahu_id == insp.ahu_id
                and f.component_id == component_id
                and f.problem == problem
                and (
                    f.inspection_id == insp_id
                    or (f.opened_at <= insp.finished_at and (f.closed_at is None or f.closed_at > insp.finished_at))
                )
            ),
            None,
        )
        if match is not None and match not in out[insp_id]:
            out[insp_id].append(match)
    for found in out.values():
        found.sort(key=lambda f: (f.opened_at, f.pk))
    return out


# Causes that close a finding without its corrective work: the problem is gone, the work may no longer be needed.
RESOLVED_WITHOUT_WORK = {Finding.CloseCause.OK_LATER, Finding.CloseCause.REPLACED, Finding.CloseCause.AMENDED}


def corrective_work_already_resolved(*, work_order_ids) -> set[int]:
    """Of ``work_order_ids``, the corrective work orders whose findings are all closed without the work (ok on a
    later visit, filters replaced, or cleared by an amendment): approved work the supervisor may cancel."""
    held: dict[int, bool] = {}
    for wo_id, state, cause in Finding.objects.filter(corrective_work_order_id__in=set(work_order_ids)).values_list(
        "corrective_work_order_id", "state", "close_cause"
    ):
        done = state == Finding.State.CLOSED and cause in RESOLVED_WITHOUT_WORK
        held[wo_id] = held.get(wo_id, True) and done
    return {wo_id for wo_id, done in held.items() if done}


def finding_observations(*, finding: Finding) -> list[Evaluation]:
    """The failed judgements that observed ``finding``, oldest visit first: on its unit and part, of its problem,
    from its first visit until it closed (the visits of duplicates merged into it included). Each carries its
    inspection (with work order and technician) for the finding's history."""
    from ..services.findings import problem_of

    if finding.source != Finding.Source.INSPECTION:
        return []  # seen by another source (the trends): no visit observed it
    merged = set(Finding.objects.filter(merged_into=finding).values_list("inspection_id", "latest_inspection_id"))
    own = {finding.inspection_id, finding.latest_inspection_id} | {i for pair in merged for i in pair}
    candidates = Evaluation.objects.filter(
        inspection__ahu_id=finding.ahu_id, component_id=finding.component_id, verdict=Verdict.FAIL
    ).select_related("inspection__work_order", "inspection__technician", "component", "amendment")
    out = []
    for e in candidates:
        if finding.problem:
            if problem_of(check=e.check_name, item=e.item_key) != finding.problem:
                continue
        elif e.pk not in (finding.evaluation_id, finding.latest_evaluation_id):
            continue  # stored before findings had a problem: only its own two judgements are known to be it
        seen = e.amendment.created_at if e.amendment is not None else e.inspection.finished_at
        within = (
            seen is not None and finding.opened_at <= seen and (finding.closed_at is None or seen < finding.closed_at)
        )
        if e.inspection_id in own or within:
            out.append(e)
    out.sort(key=lambda e: (e.inspection.finished_at or e.inspection.received_at, e.pk))
    return out


def finding_photos(*, finding: Finding, inspection_ids) -> list[Photo]:
    """The photos taken on the visits ``inspection_ids`` of the part the finding is about (or, for a finding of
    the whole unit, of the task it came from), oldest first."""
    task = (finding.evaluation.item_key if finding.evaluation_id else "").partition(".")[0]
    out = []
    for photo in Photo.objects.filter(inspection_id__in=set(inspection_ids)).select_related("component"):
        same_task = photo.item_key.partition(".")[0] == task
        if finding.component_id is not None:
            if photo.component_id == finding.component_id or (photo.component_id is None and same_task):
                out.append(photo)
        elif same_task:
            out.append(photo)
    return out
