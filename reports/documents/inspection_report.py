"""Inspection report for one work order: the record of a visit, for the client's file.

Readings are shown in the reader's units (the requester's unit system, stored
with the report so the text never changes), on the reader's paper (A4, or US Letter
for US units). A header names the site, building, unit (label code, its address and
QR code), work order, technician, and the arrival and signature on the site's clock;
a one-line result counts the verdicts and findings and, where the visit tested freeze
protection, gives the unit's readiness. Each reading appears once, in one table by
part, with the band it was judged against and only what its judgement adds; methods
are numbered notes. Then findings and their corrective work, photos, the signature,
verification and amendments, each once; the safety cautions the technician acknowledged come once, right after
the first result, so they never stand alone on a last page.
"""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.http import Http404

from engineering.units import UnitSystem
from inspections.freeze import TEMPLATE as FREEZE_TEMPLATE
from inspections.freeze import freeze_readiness
from inspections.selectors import work_order_cautions
from inventory.services import label_absolute_url, label_qr_svg
from reports.rendering import html_render, paper_for, stored_file_data_uri, svg_data_uri
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.selectors import work_order_for

from . import Built, Prepared
from .common import unit_system
from .visit_record import visit_records
from .visit_table import COUNTED


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
    visits, _components, _template_cautions = visit_records(
        work_order=wo,
        system=system,
        photo_src=lambda ph: stored_file_data_uri(ph.thumbnail or ph.image, max_px=360),
        signature_src=lambda insp: stored_file_data_uri(insp.signature_image, max_px=400),
    )
    for visit in visits:
        visit["result"] = _result_line(visit, wo)
    # The safety box is the checklist's, each caution once, as the phone and the page show it.
    cautions = work_order_cautions(work_order=wo)
    ahu = wo.ahu
    title = f"Inspection report — {ahu.tag}, {ahu.building.site.name}, {wo.title}"
    html_text = html_render(
        template="reports/inspection.html",
        context={
            "wo": wo,
            "ahu": ahu,
            "site": ahu.building.site,
            "organisation": wo.organisation,
            "tasks": tasks,
            "visits": visits,
            "cautions": cautions,
            # The unit's label: its address and QR code, from the registry's own label functions (vector SVG).
            "label_url": label_absolute_url(code=ahu.label_code),
            "label_qr": svg_data_uri(label_qr_svg(code=ahu.label_code)),
            "system_label": "US customary (in. w.c., °F, cfm)" if system == UnitSystem.US else "SI (Pa, °C, L/s)",
        },
        title=title,
        paper=paper_for(system),
        generated_at=report.created_at,
        zone=ahu.building.site.time_zone,
        subject=f"Record of work order {wo.public_id}",
    )
    return Built(html=html_text, title=title)


def _plural(n: int, one: str, many: str) -> str:
    return f"{n or 'no'} {one if n == 1 else many}"


def _result_line(visit: dict, wo: WorkOrder) -> dict:
    """The visit's outcome in one line: verdict counts, findings opened (and seen again), and where the visit
    tested freeze protection, the unit's readiness at its signature (inspections.freeze, the one judgement)."""
    insp = visit["inspection"]
    counts = visit["counts"]
    opened = sum(1 for f in visit["findings"] if f.inspection_id == insp.pk)
    again = len(visit["findings"]) - opened
    findings = _plural(opened, "finding opened", "findings opened")
    if again:
        findings += f", {again} seen again"
    freeze = None
    if any(r.item.template.code == FREEZE_TEMPLATE for r in insp.readings.all()) and insp.finished_at:
        readiness = freeze_readiness(units=[wo.ahu], as_of=insp.finished_at)
        if readiness:
            freeze = {"label": readiness[0].label, "why": readiness[0].why, "ready": readiness[0].ready}
    return {
        "checks": " · ".join(f"{counts[v]} {v}" for v in COUNTED),  # "3 ok · 1 watch · 0 fail"
        "findings": findings,
        "freeze": freeze,
    }
