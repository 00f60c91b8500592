"""Work beyond the plan: call-outs, ad-hoc work, work for a finding, the frost check before a freezing night."""

from __future__ import annotations

import datetime as dt
import uuid
import zoneinfo
from collections.abc import Sequence
from dataclasses import dataclass, field

from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from accounts.changes import organisation_changed, work_changed
from accounts.clock import local_date_of, local_time_text
from accounts.inputs import PLAN_YEARS_AHEAD, FieldErrors, check_text, latest_plan_date
from accounts.models import User
from accounts.services import audit_record
from engineering.sun import sunset_utc
from inventory.models import AHU, Component, Site
from inventory.today import today_for

from ..models import TaskCategory, TaskDefinition, WorkOrder, WorkOrderTask, overdue_day
from ..selectors import effective_tasks
from ..targets import task_targets
from ..task_rows import TaskOnPart, work_order_task_rows
from ..titles import TITLE_MAX
from .work_orders import State, assignee_check, priority_grace_days

# ---------------------------------------------------------------------------
# Work beyond the plan: call-outs, ad-hoc work, work from a finding, the frost check
# ---------------------------------------------------------------------------
ONE_OFF_PREFIX = "once-"  # code of a task written for one work order only (never in the organisation's task set)
ONE_OFF_MINUTES = (1, 960)  # a task of one visit: one minute to two working days
DESCRIPTION_MAX = 5000
MADE_KINDS = (WorkOrder.Kind.CALL_OUT, WorkOrder.Kind.AD_HOC, WorkOrder.Kind.CORRECTIVE)
ONE_OFF_SAFETY = (
    "Lock out and tag out the fan and any electric heater before opening the unit; hot coils and pipework can "
    "burn. Local codes, the manufacturer's instructions and licensed practice take precedence."
)


@dataclass(frozen=True)
class OneOffTask:
    """A task said in words on the phone: what to do, how long it takes and the skill it needs."""

    name: str
    minutes: int
    skill: str


def _local_text(when: dt.datetime, site: Site) -> str:
    return local_time_text(when, zone=site.time_zone)


def work_order_due_problem(*, due_by: dt.datetime, site: Site, now: dt.datetime) -> str | None:
    """What is wrong with a due time for work at ``site`` (in the past there, beyond the plan window), or None."""
    if due_by.tzinfo is None:
        return f"Due: {due_by.isoformat(timespec='minutes')} has no time zone; allowed: a time on the site's clock"
    if due_by <= now:
        return (
            f"Due: {_local_text(due_by, site)} is in the past at {site.name} (it is {_local_text(now, site)} there); "
            "allowed: a time later than now"
        )
    today = today_for(site, now=now)
    latest = latest_plan_date(today=today)
    if due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date() > latest:
        return (
            f"Due: {_local_text(due_by, site)} is more than {PLAN_YEARS_AHEAD} years ahead; "
            f"allowed: up to {local_date_of(latest)}"
        )
    return None


def made_work_fields_check(
    *,
    errors: FieldErrors,
    ahu: AHU,
    kind: object,
    title: object,
    description: object,
    priority: object,
    due_by: dt.datetime | None,
    now: dt.datetime,
    component: Component | None = None,
) -> tuple[str | None, str | None]:
    """The checks of :func:`work_order_create` on the words, kind, priority, unit and due time (skipped when
    ``due_by`` is None: a form whose day or time could not be read), added to ``errors``; a page calls it to say
    every refusal at once. Returns the title and description as they would be stored."""
    if kind not in MADE_KINDS:
        allowed = ", ".join(str(k.label).lower() for k in MADE_KINDS)
        errors.add("kind", f"Kind: {str(kind)[:40]!r} is not one of {allowed}")
    if ahu.status == AHU.Status.RETIRED:
        errors.add("unit", f"Unit: {ahu.display_name} is retired; allowed: a unit that is not retired")
    title_text = check_text(title, key="title", label="Title", max_length=TITLE_MAX, errors=errors, required=True)
    description_text = check_text(
        description, key="description", label="Description", max_length=DESCRIPTION_MAX, errors=errors, lines=True
    )
    if priority not in WorkOrder.Priority.values:
        errors.add(
            "priority",
            f"Priority: {str(priority)[:40]!r} is not one of "
            + ", ".join(str(p.label).lower() for p in WorkOrder.Priority),
        )
    problem = None if due_by is None else work_order_due_problem(due_by=due_by, site=ahu.building.site, now=now)
    if problem:
        errors.add("due_by", problem)
    if component is not None and component.ahu_id != ahu.pk:
        errors.add("component", f"Part: {component.name} belongs to another unit than {ahu.display_name}")
    return title_text, description_text


def _check_tasks(
    *, errors: FieldErrors, ahu: AHU, tasks: Sequence[TaskDefinition], one_off: Sequence[OneOffTask]
) -> list[TaskOnPart]:
    """(task, target component or None) rows of the library tasks chosen, refusing one not done on this unit."""
    organisation_id = ahu.building.site.organisation_id
    components = list(ahu.components.all())
    rows: list[TaskOnPart] = []
    for task in tasks:
        if task.organisation_id not in (None, organisation_id) or task.code.startswith(ONE_OFF_PREFIX):
            errors.add("tasks", f"Tasks: {task.name} is not a task of your organisation's library")
            continue
        targets = task_targets(task=task, ahu=ahu, components=components)
        if not targets:
            errors.add("tasks", f"Tasks: {task.name} is not done on {ahu.display_name} (it has no such part)")
        rows += [(task, target) for target in targets]
    for k, t in enumerate(one_off):
        key = "task_name" if len(one_off) == 1 else f"task_name_{k}"
        check_text(t.name, key=key, label="Task", max_length=200, errors=errors, required=True)
        lo, hi = ONE_OFF_MINUTES
        if not isinstance(t.minutes, int) or not lo <= t.minutes <= hi:
            errors.add(
                "task_minutes",
                f"Estimated minutes: {t.minutes!r} is out of range; allowed: a whole number from {lo} to {hi}",
            )
        if t.skill not in TaskDefinition.Skill.values:
            errors.add(
                "task_skill",
                f"Skill: {str(t.skill)[:40]!r} is not one of "
                + ", ".join(str(s.label).lower() for s in TaskDefinition.Skill),
            )
    if not tasks and not one_off:
        errors.add("tasks", "Tasks: none chosen; allowed: at least one task from the library or one written in words")
    return rows


@transaction.atomic
def work_order_create(
    *,
    ahu: AHU,
    by: User | None,
    kind: str,
    title: str,
    priority: str,
    due_by: dt.datetime,
    description: str = "",
    tasks: Sequence[TaskDefinition] = (),
    one_off: Sequence[OneOffTask] = (),
    component: Component | None = None,
    assignee: User | None = None,
    source_ref: str = "",
    now: dt.datetime | None = None,
) -> WorkOrder:
    """A work order a supervisor makes outside the plan: a call-out from a phone call, ad-hoc work, or work for a
    finding (``kind`` corrective; made by a supervisor, it needs no approval).

    Due by ``due_by`` (an aware moment, read on the site's clock; its date is the due date and the day it is
    planned for, so it shows in that day's board week, the technician's today and the calendar). The tasks are
    library tasks done on the unit (one row per part they apply to) and/or tasks said in words
    (``one_off``: each becomes a task of this work order only, with its minutes and skill, so the board's
    day load and the skills check read it like any other). With ``assignee`` it is assigned at once; a
    deactivated person or someone who is not a technician of the organisation is refused. Every refusal is
    keyed to its field; nothing is saved unless everything is right.
    """
    now = now or timezone.now()
    errors = FieldErrors()
    site = ahu.building.site
    organisation = site.organisation
    title_text, description_text = made_work_fields_check(
        errors=errors, ahu=ahu, kind=kind, title=title, description=description, priority=priority,
        due_by=due_by, now=now, component=component,
    )  # fmt: skip
    rows = _check_tasks(errors=errors, ahu=ahu, tasks=list(tasks), one_off=list(one_off))
    if assignee is not None:
        try:
            assignee_check(WorkOrder(organisation=organisation), assignee)
        except ValidationError as exc:
            for message in exc.message_dict.get("assignee", exc.messages):
                errors.add("assignee", f"Technician: {message}")
    errors.raise_if_any()
    local_due = due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone))
    day = local_due.date()
    wo = WorkOrder(
        organisation=organisation,
        ahu=ahu,
        component=component,
        kind=kind,
        priority=priority,
        title=title_text or "",  # None only with an error, raised above
        reason=description_text or "",
        source_ref=source_ref[:200],
        due_date=day,
        due_by=due_by,
        scheduled_for=day,
        overdue_on=overdue_day(day, priority_grace_days(priority)),
        approval=WorkOrder.Approval.APPROVED if kind == WorkOrder.Kind.CORRECTIVE else WorkOrder.Approval.NOT_NEEDED,
        assignee=assignee,
        state=State.ASSIGNED if assignee is not None else State.PLANNED,
    )
    wo.full_clean()
    wo.save()
    key = f"made:{wo.public_id.hex[:12]}"
    for t in one_off:
        task = TaskDefinition(
            organisation=organisation,
            code=f"{ONE_OFF_PREFIX}{uuid.uuid4().hex[:16]}",
            name=t.name.strip(),
            description=f"Written for one work order: {wo.title}",
            category=TaskCategory.CONTROLS_VENTILATION,
            trigger=TaskDefinition.Trigger.CONDITION,
            condition_code="one_off",
            checklist_code="visit",
            estimated_minutes=t.minutes,
            skill=t.skill,
            safety_notes=ONE_OFF_SAFETY,
            source="Written by a supervisor for one work order",
            enabled=False,
        )
        task.full_clean()
        task.save()
        rows.append((task, None))
    WorkOrderTask.objects.bulk_create(work_order_task_rows(work_order=wo, tasks_on=rows, due=day, occurrence_key=key))
    audit_record(
        actor=by,
        obj=wo,
        action="work_order_create",
        changes={
            "kind": kind,
            "priority": priority,
            "due_by": due_by.isoformat(),
            "tasks": sorted({task.code for task, _ in rows}),
            "assignee": assignee.pk if assignee is not None else None,
            "source_ref": source_ref[:200],
        },
        organisation=organisation,
    )
    if one_off:
        organisation_changed(organisation_id=organisation.pk)  # task definitions were written: the broader move
    else:
        work_changed(organisation_id=organisation.pk, people=[wo.assignee_id])
    return wo


FROST_TASK = "preheater_freeze"
FROST_TITLE = "Check freeze protection before tonight's frost"
FROST_FALLBACK = dt.time(16, 0)  # where the sun does not set (polar night): the working day's end


@dataclass
class FrostChecks:
    """What the frost action did at one site: the work orders it made, the units already holding an open check."""

    due_by: dt.datetime
    due_why: str = "sunset there"  # how the due time was chosen, in words
    created: list[WorkOrder] = field(default_factory=list)
    already_open: list[WorkOrder] = field(default_factory=list)


def frost_due_by(*, site: Site, now: dt.datetime) -> tuple[dt.datetime, str]:
    """Due time of tonight's frost check and how it was chosen: sunset today on the site's clock
    (engineering.sun); once the sun has set (or within half an hour of it), one hour from now."""
    zone = zoneinfo.ZoneInfo(site.time_zone)
    today = today_for(site, now=now)
    sunset = sunset_utc(latitude=site.latitude, longitude=site.longitude, day=today)
    why = "sunset there"
    if sunset is None:
        sunset = dt.datetime.combine(today, FROST_FALLBACK, tzinfo=zone)
        why = "the end of the working day: the sun does not set or rise there today"
    due = sunset.replace(second=0, microsecond=0)
    if due <= now + dt.timedelta(minutes=30):
        due = (now + dt.timedelta(hours=1)).replace(second=0, microsecond=0)
        why = "within the hour: the sun has set there"
    return due.astimezone(zone), why


@transaction.atomic
def frost_checks_create(*, site: Site, by: User | None, now: dt.datetime | None = None) -> FrostChecks:
    """ "Check freeze protection before tonight's frost" at ``site``: one urgent ad-hoc work order per in-service
    unit whose freeze-protection task (the library's ``preheater_freeze``: an electric preheater or a preheat
    water coil) applies to it, with that task on each protected part, due before sunset today on the site's
    clock. A unit that already holds an open freeze-protection check (this action's or the corrective retest of
    a failed test) gets no second one: it is named in ``already_open``."""
    now = now or timezone.now()
    organisation = site.organisation
    task = effective_tasks(organisation=organisation, include_disabled=True).get(FROST_TASK)
    due_by, why = frost_due_by(site=site, now=now)
    out = FrostChecks(due_by=due_by, due_why=why)
    if task is None:
        return out
    units = (
        AHU.objects.select_for_update(of=("self",))
        .filter(building__site=site, status=AHU.Status.IN_SERVICE)
        .select_related("building__site")
        .prefetch_related("components")
        .order_by("building__name", "tag", "pk")
    )
    for ahu in units:
        targets = task_targets(task=task, ahu=ahu, components=list(ahu.components.all()))
        if not targets:
            continue
        open_check = (
            WorkOrder.objects.filter(ahu=ahu, state__in=WorkOrder.OPEN_STATES)
            .exclude(approval__in=[WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED])
            .filter(Q(tasks__task_code=FROST_TASK) | Q(condition_code="freeze_protection_failed"))
            .exclude(kind=WorkOrder.Kind.PREVENTIVE, due_date__gt=today_for(site, now=now))
            .order_by("due_date", "id")
            .first()
        )
        if open_check is not None:
            out.already_open.append(open_check)
            continue
        out.created.append(
            work_order_create(
                ahu=ahu, by=by, kind=WorkOrder.Kind.AD_HOC, title=FROST_TITLE, priority=WorkOrder.Priority.URGENT,
                due_by=due_by, tasks=[task], now=now, source_ref=f"frost check at {site.name}"[:200],
                description=(
                    "Frost tonight: prove the preheater stages, its limits and the frost thermostat's trip "
                    "before the evening's cold."
                ),
            )
        )  # fmt: skip
    audit_record(
        actor=by,
        obj=site,
        action="frost_checks_create",
        changes={
            "due_by": due_by.isoformat(),
            "created": [str(wo.public_id) for wo in out.created],
            "already_open": [str(wo.public_id) for wo in out.already_open],
        },
        organisation=organisation,
    )
    return out
