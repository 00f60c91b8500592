"""The supervisor's board: the week's overdue, due and assigned work with a suggested technician for each, and the
row form that assigns a technician and plans the day (``work_order_assign_and_plan``, as the API's assign route)."""

import datetime as dt
from collections import defaultdict
from urllib.parse import urlencode

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_POST

from accounts.inputs import date_problem, day_refusal, parse_day
from accounts.models import User
from inspections.selectors import corrective_work_already_resolved, flagged_forms_for
from inventory.today import today_for
from scheduling.due_basis import due_bases
from scheduling.inputs import stored_problems
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from scheduling.selectors import (
    BOARD_SECTIONS,
    board_page_for,
    board_suggestions,
    offered_day,
    overdue_awaiting_rows,
    technician_load,
    weekend_plan_words,
    work_order_for,
    work_orders_to_verify,
)
from scheduling.services.assignment import AssignmentWarnings, work_order_assign_and_plan
from scheduling.services.work_orders import WorkOrderConflict, plan_day_refusal, work_order_plan_words

from ..forms import AssignForm
from .staff import changed_meanwhile, managed_organisation, organisation_technicians

REFUSAL_KEY = "board_refusal"  # the session's refused day of one row, said beside its Day field once
SKILL_WORDS = {str(v): str(label).lower() for v, label in TaskDefinition.Skill.choices}


def _week_start(raw: str | None, *, today: dt.date) -> dt.date:
    """Monday of the asked week; a week outside the plan window (say 9999-12-31) shows this week instead."""
    try:
        day = dt.date.fromisoformat(raw) if raw else today
    except ValueError:
        day = today
    if date_problem(day, label="week", today=today) is not None:
        day = today
    return day - dt.timedelta(days=day.weekday())


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
        for f in WorkOrder.objects.filter(public_id__in=ids).values(
            "public_id", "pk", "ahu__building__site__time_zone", "ahu__building__site__name"
        )
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
    org = managed_organisation(request)
    today = today_for(org)  # the day on the clock most of its sites keep
    week = _week_start(request.GET.get("week"), today=today)
    # A large portfolio's week can hold a thousand visits: the first page of each section, with the whole
    # count and a link to the rest.
    data, rows = _board_sections(org=org, week=week, today=today, show_all=request.GET.get("all", ""))
    board_suggestions(organisation=org, rows=rows)  # the least-loaded technician with the skills for its day
    facts, needed, skills = _row_facts(rows)
    # "Back to change it" from the warnings page, or a day refused (unreadable, past, outside the plan window):
    # that row's form keeps the technician and the day as typed, with the refusal beside the day, said there
    # only (never another day in its place).
    changing = request.GET.get("change", "")[:36]
    kept_assignee = request.GET.get("assignee", "")[:18]
    kept_text = request.GET.get("day", "")[:40]
    kept_day = parse_day(kept_text)
    refusal = request.session.pop(REFUSAL_KEY, None) or {}
    zone_today: dict[str, dt.date] = {}
    for r in rows:
        # The day offered for the visit: its plan, else its due date, never a day already past where the
        # unit is (the service refuses a day before the site's today, which may differ from the organisation's).
        fact = facts[r["id"]]
        zone = fact["ahu__building__site__time_zone"]
        if zone not in zone_today:
            zone_today[zone] = today_for(zone)
        r["site_zone"], r["site_today"] = zone, zone_today[zone]
        r["plan_default"] = offered_day(
            scheduled_for=r["scheduled_for"], due_date=r["due_date"], today=r["site_today"], priority=r["priority"]
        )
        due = WorkOrder(state=r["state"], due_date=r["due_date"], overdue_on=r["overdue_on"])
        r["due_text"] = due.due_words_on(r["site_today"]) if r["due_date"] < r["site_today"] else ""
        r["kind_label"] = WorkOrder.Kind(r["kind"]).label
        r["state_label"] = WorkOrder.State(r["state"]).label
        kept = None
        if changing and str(r["id"]) == changing:
            r["plan_default"] = kept_day or r["plan_default"]
            said = refusal.get("text", "") if refusal.get("row") == changing else ""
            if not said and kept_text.strip():  # said from the day itself, whatever became of the session's words
                said = _day_refused(kept_text, kept_day, today=r["site_today"], site=fact["ahu__building__site__name"])
            if said:
                r["plan_text"], r["plan_refusal"] = kept_text, said
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
    # A run-hour task's due date says the meter it was projected from (scheduling.due_basis).
    bases = due_bases(work_order_ids=[facts[r["id"]]["pk"] for r in rows], today=today)
    for r in rows:
        r["findings_resolved"] = facts[r["id"]]["pk"] in resolved
        r["due_basis"] = bases.get(facts[r["id"]]["pk"], "")
    columns = [
        {"key": key, "title": title, "rows": data[key], "total": data["counts"][key]}
        for key, title in (("overdue", "Overdue"), ("due", "Due, not assigned"), ("assigned", "Assigned"))
    ]
    # Overdue proposed work the sections leave out until it is approved: shown, with the way to approve it.
    awaiting = overdue_awaiting_rows(organisation=org)  # as the board API lists it
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
            "technicians": organisation_technicians(org),
            "columns": columns,
            "skipped": stored_problems(organisation=org, today=today),
            "to_verify": to_verify,
            "overdue_awaiting": awaiting,
            "flagged": list(flagged.values()),
        },
    )


def _day_refused(text: str, day: dt.date | None, *, today: dt.date, site: str) -> str:
    """The refusal of a row's typed Day: unreadable (``day_refusal``), or a day the schedule service refuses there
    (``plan_day_refusal``: past at the site, beyond the plan window); "" for a day it takes."""
    if day is None:
        return f"{day_refusal(text, label='Day')}."
    refused = plan_day_refusal(day=day, today=today, site_name=site)
    return f"{refused}." if refused else ""


def _refused_at_row(request, wo, back: str, text: str):
    """Back to the row with the technician and the day as they were typed, the refusal said once, beside the
    day; the top of the page only points to it. Nothing is saved."""
    request.session[REFUSAL_KEY] = {"row": str(wo.public_id), "text": text}
    messages.error(request, f"{wo.ahu.display_name} — {wo.title}: not saved; the day is refused beside it.")
    kept = {"change": str(wo.public_id), "assignee": request.POST.get("assignee", "")[:18]}
    kept["day"] = request.POST.get("scheduled_for", "")[:40]
    return redirect(f"{back}&{urlencode(kept)}#row-{wo.public_id}")


def _warned(request, wo, form, check, back: str):
    """The warnings page: each warning (capacity, skill, due date), "Assign anyway" and the way back; nothing is
    saved yet."""
    raw_day = request.POST.get("scheduled_for", "").strip()
    return render(
        request,
        "frontend/supervisor/board_confirm.html",
        {
            "wo": wo,
            "check": check,
            "warnings": check.warnings(),
            "week": request.POST.get("week", ""),
            "raw_day": raw_day if form.plan else None,
            "back": back,
            "change": back
            + "&"
            + urlencode({"change": str(wo.public_id), "assignee": check.technician.pk, "day": raw_day})
            + f"#row-{wo.public_id}",
        },
    )


def _saved_words(wo, technician, day, check) -> str:
    planned = f" {work_order_plan_words(work_order=wo, today=today_for(wo.ahu.building.site))}" if day else ""
    words = f"{wo.ahu.display_name} — {wo.title} assigned to {technician}{planned}"
    if check is not None and check.over:
        words += (
            f", over capacity: {check.load.hours:.1f} h of {check.load.capacity_hours:.1f} h on {check.day_words()}"
        )
    if check is not None and check.missing_skills:
        words += f", without the skill {', '.join(check.skill_words())}"
    return words + "."


@login_required
@require_POST
def assign(request, public_id):
    """The board's row form: a technician and the day the visit is planned for, saved together or not at all
    (``work_order_assign_and_plan``, as the API's assign route). An assignment that warns (over capacity, a skill
    missing, after the due date) shows the warnings first; a refused day goes back to its row, said beside it."""
    wo = work_order_for(user=request.user, public_id=public_id, write=True)
    form = AssignForm(request.POST, technicians=organisation_technicians(wo.organisation))
    back = reverse("frontend:board") + "?" + urlencode({"week": request.POST.get("week", "")})
    if not form.is_valid():
        for key, texts in form.errors.items():
            if key != "scheduled_for":
                for text in texts:
                    messages.error(request, text)
        if "scheduled_for" in form.errors:
            return _refused_at_row(request, wo, back, " ".join(form.errors["scheduled_for"]))
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
            confirm=form.confirmed,
            seen=form.seen,
        )
    except AssignmentWarnings as warning:
        return _warned(request, wo, form, warning.check, back)
    except ValidationError as exc:
        said = exc.message_dict if hasattr(exc, "error_dict") else {}
        if "scheduled_for" in said:
            return _refused_at_row(request, wo, back, " ".join(said["scheduled_for"]))
        messages.error(request, f"{wo.ahu.display_name} — {wo.title}: {' '.join(exc.messages)}")
    except WorkOrderConflict:
        messages.error(request, changed_meanwhile(wo))
    else:
        messages.success(request, _saved_words(wo, technician, day, check))
        site_today = today_for(wo.ahu.building.site)
        weekend = weekend_plan_words(day=day, due_date=wo.due_date, today=site_today, priority=wo.priority)
        if weekend:
            messages.warning(request, f"{wo.ahu.display_name} — {wo.title}: {weekend}.")
    return redirect(back)
