"""Each stored form of a work order as its record, in the reader's units: readings, judgements, findings,
photos, signature, verification and amendments. The inspection report (PDF) and the work order's page both
show it, so they tell the same record."""

from __future__ import annotations

from collections.abc import Callable

from django.db.models import Prefetch

from accounts.clock import time_zone
from accounts.models import AuditEvent
from inspections import reasons
from inspections.display import place_heading, place_words
from inspections.evaluation import own_judgement
from inspections.models import Amendment, Evaluation, Inspection, Photo, Reading
from inspections.selectors import check_label, findings_seen_on, item_labels, item_runs, reason_for
from scheduling.models import WorkOrder

from .visit_table import verdict_counts, visit_parts
from .visit_words import (
    CHECK_VALUES,
    VERDICTS,
    derived_for_visit,
    derived_text_for_visit,
    number_shown,
    reading_value,
    reading_verdict,
    reading_verdict_code,
    reason_as_of,
    row_reason,
    run_hours_words,
)


def readings_and_judgements() -> tuple[Prefetch, Prefetch]:
    """A visit's readings in the checklist's order (template, item, part) and its judgements in theirs, each with
    the item and part its row names: the reads of every record of visits (this one, the unit history)."""
    return (
        Prefetch(
            "readings",
            queryset=Reading.objects.select_related("item__template", "component").order_by(
                "item__template__code", "item__position", "component__position", "pk"
            ),
        ),
        Prefetch("evaluations", queryset=Evaluation.objects.select_related("component").order_by("pk")),
    )


def _inspections(wo: WorkOrder) -> list[Inspection]:
    return list(
        Inspection.objects.filter(work_order=wo)
        .select_related("technician", "verified_by", "flag_resolved_by")
        .prefetch_related(
            *readings_and_judgements(),
            Prefetch("photos", queryset=Photo.objects.select_related("component").order_by("uploaded_at", "pk")),
            Prefetch(
                "amendments", queryset=Amendment.objects.select_related("created_by").order_by("created_at", "pk")
            ),
        )
        .order_by("finished_at", "pk")
    )


def visit_records(
    *, work_order: WorkOrder, system: str, photo_src: Callable, signature_src: Callable
) -> tuple[list[dict], dict[int, object], list[str]]:
    """Each stored form of the work order as its record, in the reader's units ("si" or "us").

    One visit per inspection, oldest first: readings grouped by template with their values,
    verdicts and reasons, evaluations with derived values, findings, photos, the signature
    and amendments. ``photo_src(photo)`` and ``signature_src(inspection)`` say how an image is
    shown (a data URI in the PDF, the checked photo view on the page). Also the components
    read and the template cautions met. The PDF and the work order's page both show this,
    so they tell the same record.

    Each visit also carries its readings as one table by part (``parts``: each reading once with
    the band it was judged against and only what its judgement adds), the methods those judgements
    name (``methods``, numbered once each) and its verdict counts (``counts``), for the PDF.
    """
    visits = []
    components: dict[int, object] = {}
    template_cautions: list[str] = []
    inspections = _inspections(work_order)
    zone = time_zone(work_order.ahu.building.site.time_zone)
    # Each visit lists the findings its failures observed (a finding gathers every visit that saw it).
    seen = findings_seen_on(inspections=inspections)
    labels = item_labels(
        api_keys={e.item_key for i in inspections for e in i.evaluations.all()}
        | {ph.item_key for i in inspections for ph in i.photos.all() if ph.item_key}
    )
    work_order_verification = _work_order_verification(work_order)
    for insp in inspections:
        visit_day = insp.finished_at.astimezone(zone).date() if insp.finished_at else None
        groups: dict[str, list] = {}
        # A check of several readings (a coil's heat balance) judges none of them (its own row, ``visit_parts``).
        judged = {(e.item_key, e.component_id) for e in insp.evaluations.all() if own_judgement(e.check_name)}
        meter = run_hours_words(insp, ahu=work_order.ahu, zone=zone)  # as the phone said it, at the finish
        for r in in_checklist_order(list(insp.readings.all())):
            if r.component_id:
                components[r.component_id] = r.component
            groups.setdefault(r.item.template.title, []).append(
                {
                    "label": r.item.label,
                    "component": r.component,
                    # Where it belongs (its part, or the whole unit), as the PDFs say it; the visit's own readings
                    # (run-hours, airflow, notes) are the unit's by their group.
                    "place": "" if r.item.template.code == "visit" else place_words(r.component),
                    "value": reading_value(r, system),
                    "verdict": (
                        said := reading_verdict(
                            r,
                            judged=(r.item.api_key, r.component_id) in judged,
                            meter=meter,
                            system=system,
                        )
                    )[0],
                    "unjudged": said[1],
                    "verdict_code": reading_verdict_code(r, meter=meter),
                    # The row names the part: its reason does not begin with it again.
                    # …and a reason that only repeats the row ("confirmed: <item>", "<item>: Clean") is not shown.
                    "reason": row_reason(r, system, visit_day),
                    "note": r.note,
                    "improbable": r.improbable,
                }
            )
        for r in insp.readings.all():
            for c in r.item.template.cautions or []:
                if c not in template_cautions:
                    template_cautions.append(c)
        evaluations = [
            {
                "e": e,
                "verdict": VERDICTS.get(e.verdict, e.verdict),
                "check": check_label(check=e.check_name, item=e.item_key, labels=labels),
                "reason": reasons.text_without_label_end(
                    reason_as_of(e, system, visit_day), check_label(check=e.check_name, item=e.item_key, labels=labels)
                ),
                "derived": derived_for_visit(e.derived or {}, system, item=e.item_key, visit_day=visit_day),
                # The record page reads them as sentences (display.derived_text), never "label: value; …".
                "derived_text": derived_text_for_visit(e.derived or {}, system, item=e.item_key, visit_day=visit_day),
            }
            for e in insp.evaluations.all()
        ]
        parts, methods = visit_parts(insp, evaluations, system, meter=meter)
        visits.append(
            {
                "inspection": insp,
                "groups": [(title, place_blocks(rows)) for title, rows in groups.items()],
                "evaluations": evaluations,
                "parts": parts,
                "methods": methods,
                "counts": verdict_counts(parts),
                "findings": _with_reasons(seen.get(insp.pk, []), system),
                "photos": [
                    {"p": ph, "src": photo_src(ph), "label": labels.get(ph.item_key, "")} for ph in insp.photos.all()
                ],
                "signature": signature_src(insp),
                "verification": _verification(insp, work_order_verification),
                "amendments": [{"a": a, "changes": _changes(a, system)} for a in insp.amendments.all()],
            }
        )
    return visits, components, template_cautions


def in_checklist_order(readings: list[Reading]) -> list[Reading]:
    """A visit's readings in the order its checklist asked them (``inspections.selectors.checklist_build``):
    template by template, a run of per-part items part by part (every item of the first coil, then of the next),
    never the first item of each coil, then the second of each."""
    order: dict[int, tuple[int, int]] = {}
    for code in dict.fromkeys(r.item.template.code for r in readings):
        items = sorted(
            {r.item.pk: r.item for r in readings if r.item.template.code == code}.values(), key=lambda i: i.position
        )
        for run_at, run in enumerate(item_runs(items)):
            order.update((item.pk, (run_at, item.position)) for item in run)

    def key(r: Reading) -> tuple:
        run_at, position = order[r.item.pk]
        place = (r.component.position, r.component.pk) if r.component_id else (0, 0)
        return (r.item.template.code, run_at, place, position)

    return sorted(readings, key=key)


def place_blocks(rows: list[dict]) -> list[dict]:
    """A checklist's rows on the record page cut into runs of one place, each headed as the phone's form heads it
    (``inspections.display.place_heading``) where the checklist asks items of a part; one run without a heading
    where it asks only the unit's."""
    if not any(r["component"] is not None for r in rows):
        return [{"heading": None, "rows": rows}]
    blocks: list[dict] = []
    for r in rows:
        if not blocks or blocks[-1]["rows"][-1]["component"] != r["component"]:
            blocks.append({"heading": place_heading(r["component"]), "rows": []})
        blocks[-1]["rows"].append(r)
    return blocks


def _work_order_verification(work_order: WorkOrder) -> dict | None:
    """Who verified the work order and when: its own time, and the person from its audit trail (the work order
    keeps no person of its own)."""
    if work_order.verified_at is None:
        return None
    event = (
        AuditEvent.objects.filter(
            object_type=WorkOrder._meta.label_lower,
            object_id=str(work_order.pk),
            action="transition",
            changes__to=WorkOrder.State.VERIFIED,
        )
        .select_related("actor")
        .order_by("-at", "-pk")
        .first()
    )
    by = event.actor if event is not None and event.actor is not None else None
    return {"by": str(by) if by is not None else "", "at": work_order.verified_at}


def _verification(insp: Inspection, work_order_verification: dict | None) -> dict | None:
    """One verification per record: the inspection's own when a supervisor verified the form, otherwise the work
    order's (verified from the board or the API) for the form that completed it, so the header's state and the
    sign-off never disagree."""
    if insp.verified_at is not None:
        return {"by": str(insp.verified_by) if insp.verified_by_id else "", "at": insp.verified_at}
    # A form sent after the work was done (kept and flagged) is not the record the work order's verification covers.
    return work_order_verification if insp.work_order_completed else None


def _with_reasons(findings: list, system: str) -> list:
    """Findings with their reason rendered in the reader's units (``reason_display``)."""
    for finding in findings:
        finding.reason_display = reason_for(evaluation=finding, unit_system=system)
    return findings


def _changes(amendment: Amendment, system: str) -> list[str]:
    """Each change of an amendment as one line: item, before → after (numbers in the reader's units)."""
    from inspections.models import ChecklistItem

    lines = []
    for change in amendment.changes or []:
        if not isinstance(change, dict):
            lines.append(str(change))
            continue
        key = str(change.get("item", ""))
        quantity, name = "", key
        if "." in key:
            code, item_key = key.split(".", 1)
            item = (
                ChecklistItem.objects.filter(template__code=code, key=item_key).order_by("-template__version").first()
            )
            quantity = item.quantity if item else ""
            name = item.label if item else key

        before = _change_value(change.get("before"), quantity, system)
        after = _change_value(change.get("after"), quantity, system)
        line = f"{name}: {before} → {after}"
        if change.get("note"):
            line += f" ({change['note']})"
        lines.append(line)
    return lines


def _change_value(value, quantity: str, system: str) -> str:
    if isinstance(value, dict):
        number = value.get("value_si")
        value = number if number is not None else value.get("value_text", value.get("value"))
        value = CHECK_VALUES.get(value, value) if isinstance(value, str) else value
    if isinstance(value, int | float) and not isinstance(value, bool) and quantity:
        return number_shown(value, quantity, system)
    return "—" if value in (None, "") else str(value)
