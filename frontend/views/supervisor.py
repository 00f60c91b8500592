"""The supervisor's desk pages: board and assignment, registry, findings, corrective work, flagged forms."""

import datetime as dt
import uuid
from collections import defaultdict
from urllib.parse import urlencode

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import transaction
from django.db.models import Count, Prefetch
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from accounts.inputs import INT32_MAX, FieldErrors, check_integer, check_text, date_problem
from accounts.models import User
from accounts.selectors import MANAGING_ROLES, organisations_where, technicians_of
from inspections.selectors import (
    corrective_work_already_resolved,
    findings_visible_to,
    flagged_forms_for,
    reason_for,
)
from inspections.services import flagged_form_resolve, inspection_verify
from inventory.models import AHU
from inventory.selectors import ahus_visible_to, sites_managed_by
from inventory.today import today_for
from scheduling.inputs import stored_problems
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from scheduling.selectors import (
    BOARD_SECTIONS,
    board_page_for,
    board_suggestions,
    offered_day,
    technician_load,
    work_order_for,
    work_orders_managed_by,
    work_orders_to_verify,
)
from scheduling.services.assignment import OverCapacity, work_order_assign_and_plan
from scheduling.services.corrective import (
    REJECT_REASON_MAX,
    corrective_work_order_approve,
    corrective_work_order_reject,
)
from scheduling.services.work_orders import WorkOrderConflict, work_order_plan_words, work_order_verify

from .. import selectors
from ..forms import AssignForm

SKILL_WORDS = {str(v): str(label).lower() for v, label in TaskDefinition.Skill.choices}


def _organisation(request):
    org = organisations_where(user=request.user, roles=MANAGING_ROLES).order_by("pk").first()
    if org is None:
        raise PermissionDenied("Only a supervisor or administrator may open this page.")
    return org


def _week_start(raw: str | None, *, today: dt.date) -> dt.date:
    """Monday of the asked week; a week outside the plan window (say 9999-12-31) shows this week instead."""
    try:
        day = dt.date.fromisoformat(raw) if raw else today
    except ValueError:
        day = today
    if date_problem(day, label="week", today=today) is not None:
        day = today
    return day - dt.timedelta(days=day.weekday())


def _technicians(org):
    return technicians_of(organisation=org)


def version_seen(*, work_order: WorkOrder, raw) -> int:
    """The work order's version the page was read at (its hidden ``version`` field).

    A missing or unreadable one ('', 'x', '1.0', '1e309') is refused like a stale one (WorkOrderConflict),
    never read as "skip the check": a page form holds the same line as the API's 409."""
    version = check_integer(raw, key="version", label="Version", errors=FieldErrors(), minimum=1, maximum=INT32_MAX)
    if version is None:
        raise WorkOrderConflict(work_order=work_order, expected_version=0)
    return version


def _changed_meanwhile(wo) -> str:
    return f"{wo.ahu.display_name} — {wo.title}: someone changed it meanwhile; here it is as it is now."


def _still_as_read(*, work_order: WorkOrder, version: int) -> None:
    """Lock the work order's row; WorkOrderConflict when it moved on since the page read it (for changes the
    work order services do not check themselves, such as verifying its form)."""
    fresh = WorkOrder.objects.select_for_update(of=("self",)).get(pk=work_order.pk)
    if fresh.version != version:
        raise WorkOrderConflict(work_order=fresh, expected_version=version)


BOARD_PAGE = 100


def _board_sections(*, org, week: dt.date, today: dt.date, show_all: str) -> tuple[dict, list[dict]]:
    """The board API's read (``board_page_for``): a page of each section, the whole of ``show_all``'s."""
    data = board_page_for(organisation=org, week_start=week, today=today, limit=BOARD_PAGE)
    if show_all in BOARD_SECTIONS and data["counts"][show_all] > BOARD_PAGE:
        whole = board_page_for(
            organisation=org, week_start=week, today=today, limit=data["counts"][show_all], section=show_all
        )
        data[show_all] = whole[show_all]
    return data, [r for key in BOARD_SECTIONS for r in data[key]]


def _row_facts(rows: list[dict]) -> tuple[dict, dict, dict]:
    """What the page says beside the API's rows, read by their ids in three queries: each work order's id and
    site zone, the skills its tasks name, and the skills of the people assigned."""
    ids = [r["id"] for r in rows]
    facts = {
        f["public_id"]: f
        for f in WorkOrder.objects.filter(public_id__in=ids).values("public_id", "pk", "ahu__building__site__time_zone")
    }
    needed: dict = defaultdict(set)
    for public_id, skill in WorkOrderTask.objects.filter(work_order__public_id__in=ids).values_list(
        "work_order__public_id", "task__skill"
    ):
        needed[public_id].add(skill)
    people = {r["assignee"]["id"] for r in rows if r["assignee"]}
    skills = {pk: set(s or []) for pk, s in User.objects.filter(pk__in=people).values_list("pk", "skills")}
    return facts, needed, skills


@login_required
def board(request):
    org = _organisation(request)
    today = today_for(org)  # the day on the clock most of its sites keep
    week = _week_start(request.GET.get("week"), today=today)
    # A large portfolio's week can hold a thousand visits: the first page of each section, with the whole
    # count and a link to the rest.
    data, rows = _board_sections(org=org, week=week, today=today, show_all=request.GET.get("all", ""))
    board_suggestions(organisation=org, rows=rows)  # the least-loaded technician with the skills for its day
    facts, needed, skills = _row_facts(rows)
    # "Back to change it" from the over-capacity page: that row's form keeps the technician and day chosen.
    changing = request.GET.get("change", "")[:36]
    kept_assignee = request.GET.get("assignee", "")[:18]
    kept_day = _kept_day(request.GET.get("day", ""))
    zone_today: dict[str, dt.date] = {}
    for r in rows:
        # The day offered for the visit: its plan, else its due date, never a day already past where the
        # unit is (the service refuses a day before the site's today, which may differ from the organisation's).
        fact = facts[r["id"]]
        zone = fact["ahu__building__site__time_zone"]
        if zone not in zone_today:
            zone_today[zone] = today_for(zone)
        r["site_zone"], r["site_today"] = zone, zone_today[zone]
        r["plan_default"] = offered_day(scheduled_for=r["scheduled_for"], due_date=r["due_date"], today=r["site_today"])
        due = WorkOrder(state=r["state"], due_date=r["due_date"], overdue_on=r["overdue_on"])
        r["due_text"] = due.due_words_on(r["site_today"]) if r["due_date"] < r["site_today"] else ""
        r["kind_label"] = WorkOrder.Kind(r["kind"]).label
        r["state_label"] = WorkOrder.State(r["state"]).label
        kept = None
        if changing and str(r["id"]) == changing:
            r["plan_default"] = kept_day or r["plan_default"]
            kept = int(kept_assignee) if kept_assignee.isdigit() else None
        assignee_id = r["assignee"]["id"] if r["assignee"] else None
        r["selected_pk"] = kept or assignee_id or (r["suggested"]["id"] if r["suggested"] else None)
        # Work already with someone who lacks a skill its tasks name is marked, naming the skills.
        r["missing_skills"] = (
            [SKILL_WORDS.get(s, s) for s in sorted(needed[r["id"]] - skills.get(assignee_id, set()))]
            if assignee_id
            else []
        )
    # Approved corrective work whose findings a later visit already resolved: said beside it, left to the supervisor.
    resolved = corrective_work_already_resolved(
        work_order_ids=[facts[r["id"]]["pk"] for r in rows if r["kind"] == WorkOrder.Kind.CORRECTIVE]
    )
    for r in rows:
        r["findings_resolved"] = facts[r["id"]]["pk"] in resolved
    columns = [
        {"key": key, "title": title, "rows": data[key], "total": data["counts"][key]}
        for key, title in (("overdue", "Overdue"), ("due", "Due, not assigned"), ("assigned", "Assigned"))
    ]
    load = technician_load(organisation=org, start=week, days=7)
    to_verify = list(work_orders_to_verify(organisation=org))
    flagged = {f.work_order_id: f for f in flagged_forms_for(user=request.user)}
    for wo in to_verify:
        wo.flagged_form = flagged.get(wo.pk)
    return render(
        request,
        "frontend/supervisor/board.html",
        {
            "week": week,
            "today": today,
            "week_end": week + dt.timedelta(days=6),
            "prev_week": week - dt.timedelta(days=7),
            "next_week": week + dt.timedelta(days=7),
            "load": load,
            "days": [week + dt.timedelta(days=k) for k in range(7)],
            "technicians": _technicians(org),
            "columns": columns,
            "skipped": stored_problems(organisation=org, today=today),
            "to_verify": to_verify,
            "flagged": list(flagged.values()),
        },
    )


def _kept_day(raw: str) -> dt.date | None:
    """The day the over-capacity page hands back to the board's row form; None when it is not a day."""
    try:
        return dt.date.fromisoformat(raw) if len(raw) == 10 else None
    except ValueError:
        return None


@login_required
@require_POST
def assign(request, public_id):
    """The board's row form: a technician and the day the visit is planned for, saved together or not at all
    (``work_order_assign_and_plan``, as the API's assign route)."""
    wo = work_order_for(user=request.user, public_id=public_id, write=True)
    form = AssignForm(request.POST, technicians=_technicians(wo.organisation))
    back = reverse("frontend:board") + "?" + urlencode({"week": request.POST.get("week", "")})
    if not form.is_valid():
        for text in (t for texts in form.errors.values() for t in texts):
            messages.error(request, text)
        return redirect(back)
    technician, day, version = (form.cleaned_data[k] for k in ("assignee", "scheduled_for", "version"))
    try:
        if version is None:
            raise WorkOrderConflict(work_order=wo, expected_version=0)
        check = work_order_assign_and_plan(
            work_order=wo,
            assignee=technician,
            by=request.user,
            expected_version=version,
            plan=form.plan,
            day=day,
            confirm_over_capacity=form.cleaned_data["confirm_over_capacity"],
        )
    except OverCapacity as warning:
        # Nothing is saved: the supervisor sees the day it would make and chooses.
        raw_day = request.POST.get("scheduled_for", "").strip()
        return render(
            request,
            "frontend/supervisor/board_confirm.html",
            {
                "wo": wo,
                "check": warning.check,
                "week": request.POST.get("week", ""),
                "raw_day": raw_day if form.plan else None,
                "back": back,
                "change": back
                + "&"
                + urlencode({"change": str(wo.public_id), "assignee": technician.pk, "day": raw_day})
                + f"#row-{wo.public_id}",
            },
        )
    except ValidationError as exc:
        messages.error(request, f"{wo.ahu.display_name} — {wo.title}: {' '.join(exc.messages)}")
    except WorkOrderConflict:
        messages.error(request, _changed_meanwhile(wo))
    else:
        planned = f" {work_order_plan_words(work_order=wo, today=today_for(wo.ahu.building.site))}" if day else ""
        over = ""
        if check is not None and check.over:
            over = (
                f", over capacity: {check.load.hours:.1f} h of {check.load.capacity_hours:.1f} h on {check.day_words()}"
            )
        messages.success(request, f"{wo.ahu.display_name} — {wo.title} assigned to {technician}{planned}{over}.")
    return redirect(back)


def _managed_ahus(request):
    return AHU.objects.filter(building__site__in=sites_managed_by(user=request.user)).select_related("building__site")


@login_required
def registry(request):
    _organisation(request)
    units = _managed_ahus(request).annotate(n_components=Count("components")).order_by("building__site__name", "tag")
    sites = sites_managed_by(user=request.user).annotate(n_buildings=Count("buildings")).order_by("name")
    return render(request, "frontend/supervisor/registry.html", {"units": units, "sites": sites})


def _ahu(request, pk):
    """A unit of the registry: 404 when the person may not see it, 403 when they see it but do not manage it."""
    ahu = _managed_ahus(request).filter(pk=pk).first()
    if ahu is None:
        if ahus_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied("Only a supervisor or administrator of the organisation may change the registry.")
        raise Http404("No such unit that you manage.")
    return ahu


@login_required
def findings(request):
    """Open findings by severity, oldest first: one row per unit, part and problem, its age from the first
    observation, how often and when last seen, and the corrective work it holds (or that it is a design review)."""
    _organisation(request)
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
            )
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
    _organisation(request)
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
    _organisation(request)
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
                _still_as_read(work_order=wo, version=version)
                inspection_verify(inspection=inspection, by=request.user)
            else:
                work_order_verify(work_order=wo, by=request.user, expected_version=version)
    except WorkOrderConflict:
        messages.error(request, _changed_meanwhile(wo))
    except ValidationError as exc:
        # The form's refusals name the unit, the work and the day themselves.
        named = "" if inspection is not None else f"{wo.ahu.display_name} — {wo.title}: "
        messages.error(request, named + " ".join(exc.messages))
    else:
        messages.success(request, f"{wo.ahu.display_name} — {wo.title} verified.")
    return redirect("frontend:checklist", public_id=wo.public_id)
