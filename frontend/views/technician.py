"""The technician's phone pages: today's visits, a unit by its label code, the checklist."""

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET

from inventory.selectors import component_tree
from scheduling.models import WorkOrder
from scheduling.selectors import person_today

from .. import backends, selectors
from ..checklist_form import caution_blocks, cautions_for, form_sections, payload_from_post
from .records import LAYOUTS

CHECKLIST_API = "/api/inspections/work-orders/{}/checklist/"


def unit_records_context(*, ahu, system: str) -> dict:
    """What the unit history and label forms of a unit page need."""
    start, end = selectors.default_period()
    return {
        "form_id": f"unit-{ahu.pk}",
        "period_start": start,
        "period_end": end,
        "layouts": LAYOUTS,
        "label_units": [ahu.pk],
        "label_what": f"The label of {ahu.tag}, to print and stick on the unit.",
        "default_layout": "letter-3x10" if system == "us" else "a4-3x8",
    }


def offline_urls(visits) -> list[str]:
    """The day's pages and checklist JSON the service worker saves for a reload without signal."""
    urls = [reverse("frontend:today"), reverse("frontend:calculator")]
    for wo in (wo for visit in visits for wo in visit.work_orders):
        urls += [
            reverse("frontend:checklist", kwargs={"public_id": wo.public_id}),
            CHECKLIST_API.format(wo.public_id),
            reverse("frontend:unit", kwargs={"code": wo.ahu.label_code}),
        ]
    return urls


@login_required
@require_GET
def today(request):
    day = person_today(user=request.user)
    visits = backends.today_visits_for(technician=request.user, day=day)
    return render(
        request,
        "frontend/technician/today.html",
        {"visits": visits, "today": day, "offline_urls": offline_urls(visits)},
    )


@login_required
@require_GET
def unit_lookup(request):
    code = request.GET.get("code", "").strip().upper()
    if not code:
        return redirect("frontend:today")
    return redirect("frontend:unit", code=code)


@login_required
@require_GET
def checklist_result(request, public_id):
    """The server's evaluation of the work order's latest form, in the reader's units (fetched after a sync)."""
    wo = _work_order(request, public_id)
    inspection = selectors.latest_inspection(work_order=wo)
    if inspection is None:
        raise Http404("No form of this work order has reached the server yet.")
    labels = selectors.item_labels(backends.checklist_for(user=request.user, work_order=wo))
    result = selectors.result_for_display(result=inspection.sync_result, system=request.user.unit_system, labels=labels)
    return render(request, "frontend/technician/_result.html", {"result": result})


@login_required
@require_GET
def unit(request, code: str):
    ahu, component = backends.unit_for_label(user=request.user, code=code)
    if ahu is None:
        raise Http404(f"No unit or component with label code {code!r} that you may see.")
    work = (
        backends.work_orders_visible_to(user=request.user)
        .filter(ahu=ahu, state__in=WorkOrder.OPEN_STATES)
        .order_by("due_date")
    )
    return render(
        request,
        "frontend/technician/unit.html",
        {
            "ahu": ahu,
            "component": component,
            "tree": component_tree(ahu=ahu),
            "work": list(work),
            **unit_records_context(ahu=ahu, system=request.user.unit_system),
        },
    )


def _work_order(request, public_id):
    wo = backends.work_orders_visible_to(user=request.user).filter(public_id=public_id).first()
    if wo is None:
        raise Http404("No such work order that you may see.")
    return wo


@login_required
def checklist(request, public_id):
    wo = _work_order(request, public_id)
    data = backends.checklist_for(user=request.user, work_order=wo)
    system = request.user.unit_system
    result = None
    if request.method == "POST" and data is not None:
        form = payload_from_post(checklist=data, post=request.POST, files=request.FILES)
        result = backends.sync_forms(user=request.user, forms=[form])[0]
        wo.refresh_from_db()
    inspection = selectors.latest_inspection(work_order=wo)
    if result is None and inspection is not None:
        result = inspection.sync_result
    done = wo.state in (WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED)
    return render(
        request,
        "frontend/technician/checklist.html",
        {
            "wo": wo,
            "checklist": data,
            "sections": form_sections(data) if data else [],
            "cautions": cautions_for(data or {}),
            "caution_blocks": caution_blocks(cautions_for(data or {})),
            "started_at": timezone.now().isoformat(),
            "result": selectors.result_for_display(result=result, system=system, labels=selectors.item_labels(data)),
            "checklist_api": CHECKLIST_API.format(wo.public_id),
            "inspection": inspection,
            "can_report": done and inspection is not None,
            "can_verify": wo.state == WorkOrder.State.COMPLETED
            and backends.work_orders_managed_by(user=request.user).filter(pk=wo.pk).exists(),
        },
        status=200 if data is not None else 503,
    )
