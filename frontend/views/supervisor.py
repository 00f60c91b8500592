"""The supervisor's review pages: the registry's units, open findings, proposed corrective work to approve or
reject, flagged forms to resolve, and verifying completed work. The board is ``board``; what the staff pages share,
``staff``."""

import uuid

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Count, Prefetch
from django.http import Http404
from django.shortcuts import redirect, render
from django.utils import timezone
from django.views.decorators.http import require_POST

from accounts.inputs import FieldErrors, check_text
from inspections.selectors import findings_visible_to, flagged_forms_for, reason_for
from inspections.services import flagged_form_resolve, inspection_verify
from inventory.selectors import sites_managed_by
from inventory.today import today_for
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.selectors import work_order_for, work_orders_managed_by
from scheduling.services.corrective import (
    REJECT_REASON_MAX,
    corrective_work_order_approve,
    corrective_work_order_reject,
)
from scheduling.services.work_orders import WorkOrderConflict, work_order_verify

from .. import selectors
from .staff import changed_meanwhile, managed_ahus, managed_organisation, still_as_read, version_seen


@login_required
def registry(request):
    managed_organisation(request)
    units = managed_ahus(request).annotate(n_components=Count("components")).order_by("building__site__name", "tag")
    sites = sites_managed_by(user=request.user).annotate(n_buildings=Count("buildings")).order_by("name")
    return render(request, "frontend/supervisor/registry.html", {"units": units, "sites": sites})


@login_required
def findings(request):
    """Open findings by severity, oldest first: one row per unit, part and problem, its age from the first
    observation, how often and when last seen, and the corrective work it holds (or that it is a design review)."""
    managed_organisation(request)
    rows = (
        findings_visible_to(user=request.user)
        .filter(state="open")
        .select_related("ahu__building__site", "component", "corrective_work_order", "latest_evaluation", "evaluation")
    )
    order = {"critical": 0, "high": 1, "medium": 2, "low": 3}
    now = timezone.now()
    rows = sorted(rows, key=lambda f: (order.get(f.severity, 9), f.opened_at))
    groups = {}
    for f in rows:
        f.age = f.age_days(now=now)
        f.reason_display = reason_for(evaluation=f, unit_system=request.user.unit_system)
        groups.setdefault(f.get_severity_display(), []).append(f)
    return render(request, "frontend/supervisor/findings.html", {"groups": groups})


def _field_messages(exc: ValidationError) -> list[str]:
    """Every message of a refusal, each beginning with the field it is about ('Reason: …')."""
    if not hasattr(exc, "error_dict"):
        return exc.messages
    out = []
    for key, texts in exc.message_dict.items():
        label = key.replace("_", " ").capitalize()
        out += [t if t.startswith(label) or key == "__all__" else f"{label}: {t}" for t in texts]
    return out


def _corrective_page(request, pending, *, errors=None, typed=None, status=200):
    """The proposals awaiting approval, each with the findings it would fix in the reader's units."""
    proposals = list(
        pending.order_by("due_date")
        .select_related("ahu__building__site", "component")
        .prefetch_related(
            Prefetch(
                "source_findings",
                queryset=findings_visible_to(user=request.user)
                .filter(state="open")
                .select_related("latest_evaluation", "evaluation", "component")
                .order_by("opened_at", "pk"),
                to_attr="open_findings",
            ),
            # What approving it puts on someone's day: its tasks, each with its part.
            Prefetch(
                "tasks",
                queryset=WorkOrderTask.objects.select_related("task", "component").order_by("pk"),
                to_attr="task_rows",
            ),
        )
    )
    for wo in proposals:
        for f in wo.open_findings:
            f.reason_display = reason_for(evaluation=f, unit_system=request.user.unit_system)
        wo.field_errors = (errors or {}).get(str(wo.public_id), [])
        wo.typed_reason = (typed or {}).get(str(wo.public_id), "")
        # Approval moves a due date already behind the site's today to that day (corrective_work_order_approve).
        site_today = today_for(wo.ahu.building.site)
        wo.due_on_approval = site_today if wo.due_date < site_today else None
    return render(request, "frontend/supervisor/corrective.html", {"pending": proposals}, status=status)


@login_required
def corrective(request):
    managed_organisation(request)
    pending = work_orders_managed_by(user=request.user).filter(
        kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING, state__in=WorkOrder.OPEN_STATES
    )
    if request.method == "POST":
        try:
            wo = pending.filter(public_id=uuid.UUID(request.POST.get("work_order", ""))).first()
        except ValueError:  # not a UUID: the same answer as an unknown one, not a server error
            wo = None
        if wo is None:
            raise Http404("No such proposed work order that you manage.")
        reason = request.POST.get("reason", "")
        try:
            if request.POST.get("decision") == "approve":
                corrective_work_order_approve(work_order=wo, by=request.user)
                messages.success(request, f"Approved: {wo.title}.")
            else:
                checked = FieldErrors()
                check_text(reason, key="reason", label="Reason", max_length=REJECT_REASON_MAX, errors=checked)
                checked.raise_if_any()
                corrective_work_order_reject(work_order=wo, by=request.user, reason=reason)
                messages.success(request, f"Rejected: {wo.title}.")
        except ValidationError as exc:
            # Refused: the page again, the message beside the field it is about, the typed reason kept.
            return _corrective_page(
                request,
                pending,
                errors={str(wo.public_id): _field_messages(exc)},  # every message, each naming its field
                typed={str(wo.public_id): reason},
                status=400,
            )
        return redirect("frontend:corrective")
    return _corrective_page(request, pending)


# The longest note or reason a page takes in one field (the text inputs say so with maxlength).
NOTE_MAX = 2000


@login_required
def flagged(request):
    managed_organisation(request)
    forms = (
        flagged_forms_for(user=request.user)
        .select_related("ahu__building__site", "technician", "work_order")
        .prefetch_related(Prefetch("findings"))
    )
    if request.method == "POST":
        raw = request.POST.get("inspection", "")
        form = forms.filter(pk=int(raw)).first() if raw.isdigit() else None
        if form is None:
            raise Http404("No such flagged form that you may resolve.")
        checked = FieldErrors()
        note = check_text(
            request.POST.get("note", ""), key="note", label="Note", max_length=NOTE_MAX, errors=checked, lines=True
        )
        try:
            checked.raise_if_any()
            flagged_form_resolve(inspection=form, by=request.user, note=note or "")
        except ValidationError as exc:
            messages.error(request, " ".join(exc.messages))
        else:
            messages.success(request, f"Flag resolved: {form.display_name}.")
        return redirect("frontend:flagged")
    return render(request, "frontend/supervisor/flagged.html", {"forms": list(forms), "note_max": NOTE_MAX})


@login_required
@require_POST
def verify(request, public_id):
    """A supervisor verifies completed work: its latest form through inspections, else the work order itself."""
    wo = work_order_for(user=request.user, public_id=public_id, write=True)
    inspection = selectors.record_inspection(work_order=wo)
    try:
        with transaction.atomic():
            version = version_seen(work_order=wo, raw=request.POST.get("version"))
            if inspection is not None:
                still_as_read(work_order=wo, version=version)
                inspection_verify(inspection=inspection, by=request.user)
            else:
                work_order_verify(work_order=wo, by=request.user, expected_version=version)
    except WorkOrderConflict:
        messages.error(request, changed_meanwhile(wo))
    except ValidationError as exc:
        # The form's refusals name the unit, the work and the day themselves.
        named = "" if inspection is not None else f"{wo.ahu.display_name} — {wo.title}: "
        messages.error(request, named + " ".join(exc.messages))
    else:
        messages.success(request, f"{wo.ahu.display_name} — {wo.title} verified.")
    return redirect("frontend:checklist", public_id=wo.public_id)
