"""The technician's phone pages: today's visits, a unit by its label code, the checklist."""

import uuid

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST

from accounts.clock import zone_clock
from accounts.inputs import FieldErrors, check_text
from inspections import selectors as inspection_selectors
from inspections.done_today import done_today_for
from inspections.services import inspection_amend, inspection_sync
from inventory.selectors import component_tree
from inventory.today import time_zone_for, today_for
from reports.documents.visit_record import visit_records
from reports.rendering import stored_file_data_uri
from scheduling.models import WorkOrder
from scheduling.selectors import (
    next_visit_day,
    today_visits_for,
    work_order_for,
    work_orders_managed_by,
    work_orders_visible_to,
)

from .. import selectors
from ..checklist_form import caution_blocks, cautions_for, form_sections, payload_from_post, typed_number
from ..phone_form import site_where, with_last_values
from ..work_origins import work_order_origins
from .records import LAYOUTS
from .visit_start import may_start


def checklist_api_url(public_id: uuid.UUID) -> str:
    """The checklist document's API address (the phone fetches and caches it)."""
    return reverse("inspections_api:checklist", kwargs={"public_id": public_id})


def unit_records_context(*, ahu, system: str) -> dict:
    """What the unit history and label forms of a unit page need."""
    start, end = selectors.default_period(today=today_for(ahu.building.site))
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
    for wo in (wo for visit in visits for wo in visit["work_orders"]):
        urls += [
            reverse("frontend:checklist", kwargs={"public_id": wo["id"]}),
            checklist_api_url(wo["id"]),
            reverse("frontend:unit", kwargs={"code": wo["unit"]["label_code"]}),
        ]
    return urls


def _with_page_words(visits: list[dict], *, now) -> list[dict]:
    """The API's answer, with what the page says beside each work order: the unit with its building and place
    (and its site's clock for a due time), and the words of its kind, priority and state."""
    units = selectors.ahus_by_id(ids={wo["unit"]["id"] for visit in visits for wo in visit["work_orders"]})
    for wo in (wo for visit in visits for wo in visit["work_orders"]):
        wo["ahu"] = units[wo["unit"]["id"]]
        wo["kind_label"] = WorkOrder.Kind(wo["kind"]).label
        wo["priority_label"] = WorkOrder.Priority(wo["priority"]).label
        wo["state_label"] = WorkOrder.State(wo["state"]).label
        # Past due: in grace or overdue by whole days, as the board and the PDFs say it (WorkOrder.due_words_on).
        site_day = today_for(wo["ahu"].building.site, now=now)
        late = WorkOrder(state=wo["state"], due_date=wo["due_date"], overdue_on=wo["overdue_on"])
        wo["due_text"] = late.due_words_on(site_day) if wo["due_date"] and wo["due_date"] < site_day else ""
        wo["overdue"] = late.is_overdue_on(site_day)
    return visits


@login_required
@require_GET
def today(request):
    now = timezone.now()
    zone = time_zone_for(request.user)  # the clock the person works by (inventory.today)
    day = today_for(zone, now=now)
    visits = _with_page_words(today_visits_for(technician=request.user, day=day, today=day), now=now)
    # Nothing today (a weekend, a day off): the next day with visits, to look at and prepare (and saved for
    # offline like today's, for a phone that goes out of signal on the way).
    next_day = None if visits else next_visit_day(technician=request.user, after=day)
    coming = (
        _with_page_words(today_visits_for(technician=request.user, day=next_day, today=day), now=now)
        if next_day
        else []
    )
    return render(
        request,
        "frontend/technician/today.html",
        {
            "visits": visits,
            "next_day": next_day,
            "next_visits": coming,
            # The forms they signed today, each on its site's clock (inspections/done_today.py).
            "done_today": done_today_for(technician=request.user, now=now),
            "today": day,
            "offline_urls": offline_urls(visits or coming),
            # The outbox bar's times on the clock the person works by (the phone has no other idea of it).
            "site_clock": zone_clock(zone, around=now),
        },
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
    labels = selectors.item_labels(inspection_selectors.checklist_for(work_order=wo, user=request.user))
    result = selectors.result_for_display(
        result=stored_result(inspection=inspection, work_order=wo), system=request.user.unit_system, labels=labels
    )
    return render(request, "frontend/technician/_result.html", {"result": result})


@login_required
@require_GET
def unit(request, code: str):
    ahu, component = selectors.unit_for_label(user=request.user, code=code)
    if ahu is None:
        raise Http404(f"No unit or component with label code {code!r} that you may see.")
    work = (
        work_orders_visible_to(user=request.user).filter(ahu=ahu, state__in=WorkOrder.OPEN_STATES).order_by("due_date")
    )
    return render(
        request,
        "frontend/technician/unit.html",
        {
            "ahu": ahu,
            "component": component,
            "tree": component_tree(ahu=ahu),
            "work": list(work),
            "site_clock": zone_clock(ahu.building.site.time_zone, around=timezone.now()),
            **unit_records_context(ahu=ahu, system=request.user.unit_system),
        },
    )


def _work_order(request, public_id):
    return work_order_for(user=request.user, public_id=public_id)


# The longest reason the amendment form takes (its input says so with maxlength).
AMEND_TEXT_MAX = 2000
DONE_STATES = (WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED)
# Plain words a person may type for a check when amending, and the value stored.
CHECK_WORDS = {
    "ok": "ok",
    "not ok": "not_ok",
    "not_ok": "not_ok",
    "n/a": "na",
    "na": "na",
    "n.a.": "na",
    "not applicable": "na",
}


def photo_urls(client_uuid: uuid.UUID) -> dict[str, str]:
    """A photo's thumbnail and full image, from the API routes that check who may see them."""
    kwargs = {"client_uuid": client_uuid}
    return {
        "thumb": reverse("inspections_api:photo-thumb", kwargs=kwargs),
        "full": reverse("inspections_api:photo", kwargs=kwargs),
    }


def stored_result(*, inspection, work_order) -> dict:
    """A stored form's first answer with the status it has now (verified, or flagged only while unresolved)."""
    return {
        **(inspection.sync_result or {}),
        "status": inspection_selectors.inspection_status(inspection=inspection),
        "work_order_state": work_order.get_state_display().lower(),
    }


def record_context(*, request, wo) -> dict:
    """The signed record of each stored form of the work order, in the reader's units and the site's zone."""
    visits, _components, _cautions = visit_records(
        work_order=wo,
        system=request.user.unit_system,
        photo_src=lambda ph: photo_urls(ph.client_uuid),
        signature_src=lambda insp: stored_file_data_uri(insp.signature_image, max_px=400),
    )
    for visit in visits:
        insp = visit["inspection"]
        visit["status"] = inspection_selectors.inspection_status(inspection=insp)
        # Each reading shows its own verdict; below it, only the judgements that computed something more.
        visit["judgements"] = [ev for ev in visit["evaluations"] if ev["derived"] or ev["e"].method]
        visit["may_amend"] = inspection_selectors.amendment_allowed(user=request.user, inspection=insp)
        visit["amendable"] = [
            {"value": f"{row_key}", "label": row_label} for row_key, row_label in _amendable_readings(insp)
        ]
    return {"visits": visits, "site_zone": wo.ahu.building.site.time_zone}


def _amendable_readings(inspection) -> list[tuple[str, str]]:
    """(item|component code, "Label — component") for each reading of the form, in the record's order."""
    out = []
    for r in inspection.readings.all():
        if r.item.kind in ("photo", "text"):
            continue
        code = r.component.label_code if r.component else ""
        label = r.item.label + (f" — {r.component.name}" if r.component else "")
        out.append((f"{r.item.api_key}|{code}", label))
    return out


@login_required
def checklist(request, public_id):
    """A work order's page: its signed record once done (read-only), the form while it is open.

    Only people who fill forms for the organisation get the form; a property manager reads.
    """
    wo = _work_order(request, public_id)
    done = wo.state in DONE_STATES
    may_submit = inspection_selectors.submission_allowed(user=request.user, work_order=wo)
    if request.method == "POST" and not may_submit:
        raise PermissionDenied("Property managers read work orders; only the people who do the work fill the form.")
    data = inspection_selectors.checklist_for(work_order=wo, user=request.user)
    system = request.user.unit_system
    result = None
    if request.method == "POST" and data is not None and may_submit and not done:
        form = payload_from_post(checklist=data, post=request.POST, files=request.FILES)
        result = inspection_sync(user=request.user, forms=[form])[0]
        wo.refresh_from_db()
        done = wo.state in DONE_STATES
    inspection = selectors.record_inspection(work_order=wo)
    sections = (
        with_last_values(form_sections(data), work_order=wo, system=system, before=timezone.now()) if data else []
    )
    if result is None and inspection is not None:
        result = stored_result(inspection=inspection, work_order=wo)
    flag_open = inspection is not None and inspection.flag_open
    manages = work_orders_managed_by(user=request.user).filter(pk=wo.pk).exists()
    return render(
        request,
        "frontend/technician/checklist.html",
        {
            "wo": wo,
            "done": done,
            "show_form": not done and may_submit and data is not None,
            "can_start": not done and may_submit and data is not None and may_start(work_order=wo, user=request.user),
            "checklist": data,
            # Each reading with its value on the unit's last visit, in the reader's units (frontend/phone_form.py).
            "sections": sections,
            "askable_total": sum(s["askable"] for s in sections),
            "site_where": site_where(wo.ahu.building.site),
            # Why corrective work exists: the findings or faults that proposed it, as the supervisor reads them.
            "origins": work_order_origins(work_order=wo, unit_system=system)
            if wo.kind == WorkOrder.Kind.CORRECTIVE
            else [],
            "cautions": cautions_for(data or {}),
            "caution_blocks": caution_blocks(cautions_for(data or {})),
            # The visit's start: when "Start visit" was pressed, else when this page was opened (WorkOrder.arrived_by).
            "started_at": wo.arrived_by(timezone.now()).isoformat(),
            # The phone writes the times it shows (a form waiting in the outbox, the last sync) on the site's clock.
            "site_clock": zone_clock(wo.ahu.building.site.time_zone, around=timezone.now()),
            "result": None
            if done
            else selectors.result_for_display(result=result, system=system, labels=selectors.item_labels(data)),
            "checklist_api": checklist_api_url(wo.public_id),
            "evaluation_context": (data or {}).get("evaluation") if not done and may_submit else None,
            "inspection": inspection,
            "can_report": done and inspection is not None,
            # While the form's flag is unresolved the supervisor is sent to resolve it; Verify would be refused.
            "can_verify": wo.state == WorkOrder.State.COMPLETED and not flag_open and manages,
            "can_resolve_flag": flag_open and manages,
            **(record_context(request=request, wo=wo) if inspection is not None else {"visits": []}),
        },
        status=200 if data is not None or done else 503,
    )


def _amend_value(raw: str, item):
    """The corrected value as the sync reads it: a number, or the stored word of a check or choice."""
    text = raw.strip()
    if item.kind == "number":
        return typed_number(text) if text.lower() not in CHECK_WORDS else "na"
    if item.kind == "check":
        return CHECK_WORDS.get(text.lower(), text)
    if item.kind == "choice":
        if CHECK_WORDS.get(text.lower()) == "na":
            return "na"
        for choice in item.choices or []:
            if text.lower() in (str(choice.get("label", "")).lower(), str(choice.get("value", "")).lower()):
                return choice.get("value")
    return text


@login_required
@require_POST
def amend(request, public_id):
    """An amendment to a signed form of the work order, from its record (inspections' amend service)."""
    wo = _work_order(request, public_id)
    back = redirect("frontend:checklist", public_id=wo.public_id)
    raw = str(request.POST.get("inspection", ""))
    if not raw.isdigit():
        raise Http404("No such signed form of this work order that you may see.")
    inspection = inspection_selectors.inspection_for(user=request.user, pk=int(raw), queryset=wo.inspections.all())
    if not inspection_selectors.amendment_allowed(user=request.user, inspection=inspection):
        raise PermissionDenied("Only the technician who signed the form or a supervisor of the site may amend it.")
    key, _, code = request.POST.get("item", "").partition("|")
    reading = next(
        (
            r
            for r in inspection.readings.select_related("item__template", "component")
            if r.item.api_key == key and (r.component.label_code if r.component else "") == code
        ),
        None,
    )
    if reading is None:
        messages.error(request, "The amendment was not saved: choose the reading to correct from the list.")
        return back
    checked = FieldErrors()
    reason = check_text(
        request.POST.get("reason", ""), key="reason", label="Why it is corrected", max_length=AMEND_TEXT_MAX,
        errors=checked,
    )  # fmt: skip
    if reason is None:
        messages.error(request, "The amendment was not saved: " + " ".join(checked["reason"]))
        return back
    correction = {
        "item": key,
        "component": code or None,
        "value": _amend_value(request.POST.get("value", ""), reading.item),
        "note": request.POST.get("note", "").strip(),
    }
    try:
        inspection_amend(
            inspection=inspection,
            by=request.user,
            reason=reason,
            readings=[correction],
            unit_system=request.user.unit_system,
        )
    except PermissionDenied:
        messages.error(request, "Only the technician who signed the form or a supervisor of the site may amend it.")
    except ValidationError as exc:
        messages.error(request, "The amendment was not saved: " + " ".join(exc.messages))
    else:
        messages.success(request, f"Amendment to {reading.item.label} saved beside the signed record.")
    return back
