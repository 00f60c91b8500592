"""Work beyond the plan, made by a supervisor or administrator: a call-out from a phone call, ad-hoc work,
work for a finding (no approval needed: the supervisor made it), and "check freeze protection before tonight's
frost" for a whole site.

The form asks for the unit (grouped by site; each unit with its building), what is wrong, the priority, the day
and time it is due on the site's clock, the tasks (from the organisation's library for that unit, and/or one said
in words with its minutes and skill) and, if known, the technician. Before anything is saved with a technician,
the board's own check (scheduling.selectors.assignment_check: tasks plus travel against capacity, the skills,
the least-loaded qualified technician) is read for the new work: an overload or a missing skill is said and
nothing is kept until the supervisor confirms or takes the suggestion.
"""

from __future__ import annotations

import datetime as dt
import re
import zoneinfo

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db import transaction
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from accounts.clock import day_text, local_time_text
from accounts.inputs import DATE_FORMATS, FieldErrors, check_integer, day_refusal, parse_day, shown
from inspections.selectors import findings_visible_to, reason_for
from inspections.services.findings import finding_work_order_attach
from inventory.models import AHU
from inventory.selectors import sites_managed_by
from inventory.today import today_for
from scheduling.models import TaskDefinition, WorkOrder
from scheduling.selectors import assignment_check, effective_tasks, offered_day, weekday_on_or_near
from scheduling.services.made_work import (
    ONE_OFF_MINUTES,
    OneOffTask,
    frost_checks_create,
    made_work_fields_check,
    work_order_create,
)
from scheduling.targets import task_targets

from .staff import managed_organisation, organisation_technicians

PRIORITY_OF_SEVERITY = {"critical": "urgent", "high": "high", "medium": "normal", "low": "low"}
KIND_CHOICES = [
    (WorkOrder.Kind.CALL_OUT, "Call-out: someone called about a fault"),
    (WorkOrder.Kind.AD_HOC, "Ad hoc: extra work outside the plan"),
]
# The fields the form shows errors beside; any other refusal is said at the top.
SHOWN_AT_FIELD = frozenset(
    {"unit", "finding", "kind", "title", "description", "priority", "due_date", "due_time", "due_by", "tasks",
     "task_name", "task_minutes", "task_skill", "assignee"}
)  # fmt: skip
_TIME = re.compile(r"([01]\d|2[0-3]):([0-5]\d)")


class _NotYet(Exception):
    """Raised inside the saving transaction to take it back: the supervisor has a warning to read first."""


def _units(request):
    return (
        AHU.objects.filter(building__site__in=sites_managed_by(user=request.user))
        .select_related("building__site")
        .order_by("building__site__name", "building__name", "tag", "pk")
    )


def _unit_choices(request) -> list[tuple[str, list[AHU]]]:
    """Units by site, in-service first as the registry lists them; a retired unit is offered nowhere."""
    groups: dict[str, list[AHU]] = {}
    for ahu in _units(request).exclude(status=AHU.Status.RETIRED):
        groups.setdefault(ahu.building.site.name, []).append(ahu)
    return list(groups.items())


def _unit(request, raw) -> AHU | None:
    """The unit named by the form: None when not chosen, 404 when it is not one the person manages."""
    text = str(raw or "").strip()
    if not text:
        return None
    if not text.isdigit() or len(text) > 18:
        raise Http404("No such unit that you manage.")
    ahu = _units(request).filter(pk=int(text)).first()
    if ahu is None:
        raise Http404("No such unit that you manage.")
    return ahu


def _finding(request, raw):
    text = str(raw or "").strip()
    if not text:
        return None
    if not text.isdigit() or len(text) > 18:
        raise Http404("No such finding.")
    finding = (
        findings_visible_to(user=request.user)
        .filter(pk=int(text), ahu__building__site__in=sites_managed_by(user=request.user))
        .select_related("ahu__building__site", "component", "evaluation", "latest_evaluation")
        .first()
    )
    if finding is None:
        raise Http404("No such finding.")
    return finding


def _library_for(ahu: AHU) -> list[dict]:
    """The organisation's tasks done on this unit, with the parts they are done on and their safety notes."""
    components = list(ahu.components.all())
    out = []
    for task in sorted(
        effective_tasks(organisation=ahu.building.site.organisation).values(), key=lambda t: (t.category, t.name)
    ):
        targets = task_targets(task=task, ahu=ahu, components=components)
        if not targets:
            continue
        parts = ", ".join(c.name for c in targets if c is not None)
        out.append({"task": task, "parts": parts, "skill": task.get_skill_display()})
    return out


def _default_due(site, now: dt.datetime, *, priority: str) -> tuple[str, str]:
    """Two hours from now on the site's clock, on the hour; tomorrow noon when that runs past 22:00. On a weekend
    day the board's rule (``offered_day``) decides: urgent work due today stays today, weekend or not; other work
    moves to the Friday before, else the Monday after, at noon."""
    local = now.astimezone(zoneinfo.ZoneInfo(site.time_zone))
    due = (local + dt.timedelta(hours=2)).replace(minute=0, second=0, microsecond=0)
    if due.date() != local.date() or due.hour >= 22:
        due = (local + dt.timedelta(days=1)).replace(hour=12, minute=0, second=0, microsecond=0)
    day = offered_day(scheduled_for=None, due_date=due.date(), today=local.date(), priority=priority)
    if day == due.date():
        return due.date().isoformat(), f"{due:%H:%M}"
    if day <= local.date():
        # The Friday before a weekend due day is today here (the due day is at most tomorrow), whose noon may be
        # past: the Monday after.
        day = weekday_on_or_near(due.date(), today=local.date() + dt.timedelta(days=1))
    return day.isoformat(), "12:00"


def _due_by(post, site, errors: dict) -> dt.datetime | None:
    """The due moment from the day and time fields, on the site's clock; errors at the field otherwise."""
    raw_day = post.get("due_date", "").strip()
    raw_time = post.get("due_time", "").strip()
    day = clock = None
    if not raw_day:
        errors.setdefault("due_date", []).append(f"Due day is required; allowed: a date as {DATE_FORMATS}")
    else:
        day = parse_day(raw_day)
        if day is None:
            errors.setdefault("due_date", []).append(day_refusal(raw_day, label="Due day"))
    if not raw_time:
        errors.setdefault("due_time", []).append("Due time is required; allowed: a time as HH:MM, 00:00 to 23:59")
    else:
        match = _TIME.fullmatch(raw_time)
        if match is None:
            errors.setdefault("due_time", []).append(
                f"Due time: {shown(raw_time)} is not a time as HH:MM; allowed: 00:00 to 23:59 on the site's clock"
            )
        else:
            clock = dt.time(int(match[1]), int(match[2]))
    if day is None or clock is None:
        return None
    return dt.datetime.combine(day, clock, tzinfo=zoneinfo.ZoneInfo(site.time_zone))


def _one_off(post, errors: dict) -> list[OneOffTask]:
    name = post.get("task_name", "")
    minutes_raw = post.get("task_minutes", "").strip()
    skill = post.get("task_skill", "")
    if not name.strip() and not minutes_raw:
        return []
    lo, hi = ONE_OFF_MINUTES
    minutes = None
    if not minutes_raw:
        errors.setdefault("task_minutes", []).append(
            f"Estimated minutes are required for the task said in words; allowed: a whole number from {lo} to {hi}"
        )
    else:
        said = FieldErrors()
        minutes = check_integer(
            minutes_raw, key="task_minutes", label="Estimated minutes", minimum=lo, maximum=hi, errors=said
        )
        for key, messages in said.items():
            errors.setdefault(key, []).extend(messages)
    return [OneOffTask(name=name, minutes=minutes if minutes is not None else -1, skill=skill)]


def _context(request, *, ahu, values, errors, finding=None, org=None):
    org = org or managed_organisation(request)
    technicians = organisation_technicians(org)
    skill_names = dict(TaskDefinition.Skill.choices)
    for t in technicians:
        t.skill_words = ", ".join(skill_names.get(s, s).lower() for s in (t.skills or [])) or "no skills recorded"
    return {
        "ahu": ahu,
        "finding": finding,
        "values": values,
        "chosen_tasks": set(values.getlist("task") if hasattr(values, "getlist") else values.get("task", [])),
        "errors": errors,
        "general_errors": [t for key, texts in errors.items() if key not in SHOWN_AT_FIELD for t in texts],
        "unit_choices": _unit_choices(request),
        "library": _library_for(ahu) if ahu is not None else [],
        "priorities": WorkOrder.Priority.choices,
        "kinds": KIND_CHOICES,
        "skills": TaskDefinition.Skill.choices,
        "technicians": technicians,
        "sites": sites_managed_by(user=request.user).order_by("name"),
        "site_now": local_time_text(timezone.now(), zone=ahu.building.site.time_zone) if ahu else "",
        "minutes_range": ONE_OFF_MINUTES,
    }


def _initial(request, *, ahu, finding) -> dict:
    values: dict = {"kind": WorkOrder.Kind.CALL_OUT, "priority": _asked_priority(request), "task": []}
    if finding is not None:
        values.update(
            kind=WorkOrder.Kind.CORRECTIVE,
            priority=PRIORITY_OF_SEVERITY.get(finding.severity, WorkOrder.Priority.NORMAL),
            title=finding.title,
            description=reason_for(evaluation=finding, unit_system=request.user.unit_system),
            finding=str(finding.pk),
        )
    if ahu is not None:
        values["unit"] = str(ahu.pk)
        values["due_date"], values["due_time"] = _default_due(
            ahu.building.site, timezone.now(), priority=values["priority"]
        )
    return values


def _asked_priority(request) -> str:
    """The priority the unit was chosen with (``?priority=``, the first step's field), else High: a call-out is
    answered soon. It decides the default due day (``_default_due``)."""
    asked = request.GET.get("priority", "")
    return asked if asked in WorkOrder.Priority.values else WorkOrder.Priority.HIGH


def _say_due(wo: WorkOrder) -> str:
    site = wo.ahu.building.site
    when = wo.due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone))
    return f"due by {when:%H:%M} {when.tzname()} on {day_text(when.date(), today=today_for(site))}"


def _board_week(wo: WorkOrder) -> str:
    day = wo.scheduled_for or wo.due_date
    return reverse("frontend:board") + f"?week={(day - dt.timedelta(days=day.weekday())).isoformat()}"


@login_required
def work_new(request):
    """GET: choose the unit (``?unit=``), or start from a finding (``?finding=``); POST: make the work order."""
    org = managed_organisation(request)
    if request.method != "POST":
        finding = _finding(request, request.GET.get("finding"))
        ahu = finding.ahu if finding is not None else _unit(request, request.GET.get("unit"))
        values = _initial(request, ahu=ahu, finding=finding)
        errors = {}
        if ahu is None and "unit" in request.GET:  # "Continue" with no unit chosen
            errors["unit"] = ["Unit: none chosen; allowed: one of the units listed, by site and building"]
        return render(
            request,
            "frontend/new_work/new.html",
            _context(request, ahu=ahu, values=values, errors=errors, finding=finding, org=org),
        )
    post = request.POST
    finding = _finding(request, post.get("finding"))
    ahu = _unit(request, post.get("unit"))
    errors: dict[str, list[str]] = {}
    if ahu is None:
        errors["unit"] = ["Unit: none chosen; allowed: one of the units listed, by site and building"]
        return render(
            request, "frontend/new_work/new.html", _context(request, ahu=None, values=post, errors=errors, org=org)
        )
    if post.get("back"):
        # "Back to change it" from the confirm page: the form again with everything as it was typed.
        return render(
            request,
            "frontend/new_work/new.html",
            _context(request, ahu=ahu, values=post, errors={}, finding=finding, org=org),
        )
    site = ahu.building.site
    due_by = _due_by(post, site, errors)
    one_off = _one_off(post, errors)
    library = {row["task"].code: row["task"] for row in _library_for(ahu)}
    tasks = []
    for code in post.getlist("task"):
        if code in library:
            tasks.append(library[code])
        else:
            errors.setdefault("tasks", []).append(
                f"Tasks: {shown(code)} is not a task of your library done on {ahu.display_name}"
            )
    technician = None
    raw_assignee = post.get("assignee", "").strip()
    if raw_assignee:
        technician = next((t for t in organisation_technicians(org) if str(t.pk) == raw_assignee), None)
        if technician is None:
            errors.setdefault("assignee", []).append(
                f"Technician: no active technician {shown(raw_assignee)} in your organisation you can assign; "
                "choose one from the list"
            )
    kind = post.get("kind", "")
    if finding is not None:
        kind = WorkOrder.Kind.CORRECTIVE
    elif kind == WorkOrder.Kind.CORRECTIVE:
        errors.setdefault("kind", []).append("Kind: corrective work is made from a finding; allowed: call-out, ad hoc")
    if errors:
        # Said all at once: the service's own checks of the words, priority and unit beside the form's.
        more = FieldErrors()
        made_work_fields_check(
            errors=more, ahu=ahu, kind=kind, title=post.get("title", ""), description=post.get("description", ""),
            priority=post.get("priority", ""), due_by=due_by, now=timezone.now(),
        )  # fmt: skip
        for key, texts in more.items():
            errors.setdefault(key, []).extend(t for t in texts if t not in errors.get(key, []))
        return render(
            request,
            "frontend/new_work/new.html",
            _context(request, ahu=ahu, values=post, errors=errors, finding=finding, org=org),
        )
    check = None
    try:
        with transaction.atomic():
            wo = work_order_create(
                ahu=ahu, by=request.user, kind=kind, title=post.get("title", ""), priority=post.get("priority", ""),
                due_by=due_by, description=post.get("description", ""), tasks=tasks, one_off=one_off,
                component=finding.component if finding is not None else None, assignee=technician,
                source_ref=f"finding {finding.pk}: {finding.title}" if finding is not None else "",
            )  # fmt: skip
            if finding is not None:
                finding_work_order_attach(finding=finding, work_order=wo, by=request.user)
            if technician is not None:
                # The board's own check, for this work on its day, before anything is kept.
                check = assignment_check(work_order=wo, technician=technician, day=wo.scheduled_for)
                if (check.over or check.missing_skills) and not post.get("confirm"):
                    raise _NotYet
    except _NotYet:
        skill_names = dict(TaskDefinition.Skill.choices)
        return render(
            request,
            "frontend/new_work/confirm.html",
            {
                "wo": wo,
                "check": check,
                "missing": [skill_names.get(s, s).lower() for s in check.missing_skills],
                "due_words": _say_due(wo),
                "fields": [
                    (k, v) for k in post for v in post.getlist(k) if k not in {"csrfmiddlewaretoken", "assignee"}
                ],
            },
        )
    except ValidationError as exc:
        errors = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
        return render(
            request,
            "frontend/new_work/new.html",
            _context(request, ahu=ahu, values=post, errors=errors, finding=finding, org=org),
        )
    words = f"{wo.get_kind_display()} made: {ahu.display_name} at {site.name} — {wo.title}, {_say_due(wo)}"
    if technician is not None:
        words += f", assigned to {technician}"
        if check is not None and check.over:
            words += f", over capacity: {check.load.hours:.1f} h of {check.load.capacity_hours:.1f} h"
        if check is not None and check.missing_skills:
            words += f", without the skill {', '.join(check.missing_skills)}"
    else:
        words += "; assign it on the board"
    messages.success(request, words + ".")
    return redirect(_board_week(wo))


@login_required
@require_POST
def work_frost(request, site_pk):
    """One urgent freeze-protection check per in-service protected unit of the site, due before tonight."""
    managed_organisation(request)
    site = sites_managed_by(user=request.user).filter(pk=site_pk).first()
    if site is None:
        raise Http404("No such site that you manage.")
    result = frost_checks_create(site=site, by=request.user)
    when = result.due_by
    due = f"due by {when:%H:%M} {when.tzname()} today"
    lines = []
    if result.created:
        names = ", ".join(wo.ahu.display_name for wo in result.created)
        n = len(result.created)
        lines.append(
            f"Frost check at {site.name}: {n} urgent work order{'' if n == 1 else 's'} made, {due} ({result.due_why}): "
            f"{names}. Assign {'it' if n == 1 else 'them'} below."
        )
    if result.already_open:
        names = ", ".join(f"{wo.ahu.display_name} ({wo.title}, {wo.state_words})" for wo in result.already_open)
        lines.append(f"Already holding an open freeze-protection check, so none added: {names}.")
    if not lines:
        lines.append(
            f"Frost check at {site.name}: no in-service unit there has an electric preheater or a preheat water "
            "coil, so nothing was made."
        )
    for line in lines:
        messages.success(request, line)
    day = today_for(site)
    return redirect(reverse("frontend:board") + f"?week={(day - dt.timedelta(days=day.weekday())).isoformat()}")
