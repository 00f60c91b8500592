"""Inspection report for one work order: the record of a visit, for the client's file.

Readings are shown in the reader's units (the requester's unit system, stored
with the report so the text never changes), with verdicts and reasons,
derived values, photos, findings and the corrective work they opened,
signatures, verification, amendments and the safety cautions.
"""

from __future__ import annotations

from collections.abc import Callable

from django.core.exceptions import ValidationError
from django.db.models import Prefetch
from django.http import Http404

from inspections import checklists, display, reasons
from inspections.display import VERDICT_WORDS
from inspections.models import Amendment, Evaluation, Inspection, Photo, Reading
from inspections.selectors import (
    check_label,
    findings_seen_on,
    item_labels,
    reason_for,
    work_order_cautions,
    work_order_for,
)
from reports.rendering import html_render, paper_for, stored_file_data_uri
from scheduling.models import WorkOrder, WorkOrderTask

from . import Built, Prepared
from .common import unit_system

CHECK_VALUES = {"ok": "OK", "not_ok": "Not OK", "na": "N/A"}
# Verdicts in words, as the phone and the record page say them (inspections.display).
VERDICTS = {code: words for code, words in VERDICT_WORDS.items() if code}


def prepare(*, user, parameters: dict, requested_at) -> Prepared:
    raw = parameters.get("work_order")
    if raw in (None, ""):
        raise ValidationError({"work_order": "work_order: the work order's public id is required"})
    try:
        wo = work_order_for(user=user, public_id=str(raw))
    except Http404:
        raise Http404(f"work_order: no work order {raw} among those you may see") from None
    return Prepared(
        parameters={"work_order": str(wo.public_id), "unit_system": unit_system(parameters, user)},
        site_ids=[wo.ahu.building.site_id],
        organisation_id=wo.organisation_id,
    )


def reading_value(reading: Reading, system: str) -> str:
    item = reading.item
    if reading.value_text == "na":
        return "N/A"
    if item.kind == item.Kind.NUMBER:
        if reading.value_si is None:
            return "—"
        label = checklists.display_unit_label(item.quantity, system)
        if item.quantity in reasons.DECIMALS:
            # The quantity's usual precision, grouped as the reasons group it ("16,500 h", "1200 cfm").
            return f"{reasons.display_number(reading.value_si, item.quantity, system)} {label}".strip()
        value = checklists.to_display(reading.value_si, item.quantity, system)
        decimals = item.decimals
        if system == "us" and item.quantity == "pressure":
            decimals = max(decimals, 2)
        return f"{value:.{decimals}f} {label}".strip()
    if item.kind == item.Kind.CHECK:
        return CHECK_VALUES.get(reading.value_text, reading.value_text)
    if item.kind == item.Kind.CHOICE:
        labels = {c.get("value"): c.get("label") for c in item.choices or []}
        return labels.get(reading.value_text, reading.value_text)
    return reading.value_text or "—"


def _inspections(wo: WorkOrder) -> list[Inspection]:
    return list(
        Inspection.objects.filter(work_order=wo)
        .select_related("technician", "verified_by", "flag_resolved_by")
        .prefetch_related(
            Prefetch(
                "readings",
                queryset=Reading.objects.select_related("item__template", "component").order_by(
                    "item__template__code", "item__position", "component__position", "pk"
                ),
            ),
            Prefetch("evaluations", queryset=Evaluation.objects.select_related("component").order_by("pk")),
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
    read and the template cautions met, for the PDF's tables. The PDF and the work order's
    page both show this, so they tell the same record.
    """
    visits = []
    components: dict[int, object] = {}
    template_cautions: list[str] = []
    inspections = _inspections(work_order)
    # Each visit lists the findings its failures observed (a finding gathers every visit that saw it).
    seen = findings_seen_on(inspections=inspections)
    labels = item_labels(
        api_keys={e.item_key for i in inspections for e in i.evaluations.all()}
        | {ph.item_key for i in inspections for ph in i.photos.all() if ph.item_key}
    )
    for insp in inspections:
        groups: dict[str, list] = {}
        for r in insp.readings.all():
            if r.component_id:
                components[r.component_id] = r.component
            groups.setdefault(r.item.template.title, []).append(
                {
                    "label": r.item.label,
                    "component": r.component,
                    "value": reading_value(r, system),
                    "verdict": VERDICTS.get(r.verdict, ""),
                    "verdict_code": r.verdict,
                    # The row names the part: its reason does not begin with it again.
                    "reason": reasons.text_without_subject(
                        reason_for(evaluation=r, unit_system=system), r.component.name if r.component_id else None
                    ),
                    "note": r.note,
                    "improbable": r.improbable,
                }
            )
        for r in insp.readings.all():
            for c in r.item.template.cautions or []:
                if c not in template_cautions:
                    template_cautions.append(c)
        visits.append(
            {
                "inspection": insp,
                "groups": list(groups.items()),
                "evaluations": [
                    {
                        "e": e,
                        "verdict": VERDICTS.get(e.verdict, e.verdict),
                        "check": check_label(check=e.check_name, item=e.item_key, labels=labels),
                        "reason": reasons.text_without_subject(
                            reason_for(evaluation=e, unit_system=system), e.component.name if e.component_id else None
                        ),
                        "derived": display.derived_rows(e.derived or {}, system, item=e.item_key),
                    }
                    for e in insp.evaluations.all()
                ],
                "findings": _with_reasons(seen.get(insp.pk, []), system),
                "photos": [
                    {"p": ph, "src": photo_src(ph), "label": labels.get(ph.item_key, "")} for ph in insp.photos.all()
                ],
                "signature": signature_src(insp),
                "amendments": [{"a": a, "changes": _changes(a, system)} for a in insp.amendments.all()],
            }
        )
    return visits, components, template_cautions


def build(*, report) -> Built:
    p = report.parameters
    system = p["unit_system"]
    wo = WorkOrder.objects.select_related("organisation", "ahu__building__site", "assignee").get(
        public_id=p["work_order"]
    )
    tasks = list(
        WorkOrderTask.objects.filter(work_order=wo)
        .select_related("task", "component")
        .order_by("task__category", "task__code", "pk")
    )
    visits, components, template_cautions = visit_records(
        work_order=wo,
        system=system,
        photo_src=lambda ph: stored_file_data_uri(ph.thumbnail or ph.image, max_px=360),
        signature_src=lambda insp: stored_file_data_uri(insp.signature_image, max_px=400),
    )
    # The safety box is the checklist's, each caution once, as the phone and the page show it.
    cautions = work_order_cautions(work_order=wo)
    ahu = wo.ahu
    title = f"Inspection report — {ahu.tag}, {ahu.building.site.name}, {wo.title}"
    html = html_render(
        template="reports/inspection.html",
        context={
            "wo": wo,
            "ahu": ahu,
            "site": ahu.building.site,
            "organisation": wo.organisation,
            "tasks": tasks,
            "visits": visits,
            "components": sorted(components.values(), key=lambda c: (c.position, c.pk)),
            "cautions": cautions,
            "template_cautions": template_cautions,
            "system_label": "US customary (in. w.c., °F, cfm)" if system == "us" else "SI (Pa, °C, L/s)",
        },
        title=title,
        paper=paper_for(system),
        generated_at=report.created_at,
        zone=ahu.building.site.time_zone,
        subject=f"Record of work order {wo.public_id}",
    )
    return Built(html=html, title=title)


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
        quantity, decimals, name = "", 1, key
        if "." in key:
            code, item_key = key.split(".", 1)
            item = (
                ChecklistItem.objects.filter(template__code=code, key=item_key).order_by("-template__version").first()
            )
            quantity = item.quantity if item else ""
            name = item.label if item else key
            decimals = max(item.decimals, 2 if system == "us" and quantity == "pressure" else 0) if item else 1

        before = _change_value(change.get("before"), quantity, decimals, system)
        after = _change_value(change.get("after"), quantity, decimals, system)
        line = f"{name}: {before} → {after}"
        if change.get("note"):
            line += f" ({change['note']})"
        lines.append(line)
    return lines


def _change_value(value, quantity: str, decimals: int, system: str) -> str:
    if isinstance(value, dict):
        number = value.get("value_si")
        value = number if number is not None else value.get("value_text", value.get("value"))
        value = CHECK_VALUES.get(value, value) if isinstance(value, str) else value
    if isinstance(value, int | float) and not isinstance(value, bool) and quantity:
        shown_value = checklists.to_display(value, quantity, system)
        return f"{shown_value:.{decimals}f} {checklists.display_unit_label(quantity, system)}".strip()
    return "—" if value in (None, "") else str(value)
