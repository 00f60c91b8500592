"""Writes to the task library: install the shipped defaults, override, add, switch off per unit."""

from __future__ import annotations

from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.changes import every_organisation_changed, organisation_changed
from accounts.inputs import FieldErrors, check_text
from accounts.models import Organisation, User
from inventory.models import AHU, ComponentKind

from ..inputs import task_problems
from ..library import LIBRARY
from ..models import TaskDefinition, UnitTaskSetting

# Fields a supervisor may change on an override; identity fields (code, category) stay.
# A reason given for a unit's own rule or switch: at most its column's length (200 characters).
REASON_MAX: int = UnitTaskSetting._meta.get_field("reason").max_length or 200
OVERRIDABLE = {
    "name",
    "description",
    "interval_value",
    "interval_unit",
    "anchor",
    "grace_days",
    "run_hours",
    "lead_days",
    "estimated_minutes",
    "skill",
    "safety_notes",
    "enabled",
    "source",
}


def _validate_task(task: TaskDefinition) -> None:
    errors: dict[str, list[str]] = {}
    if task.component_kind and task.component_kind not in ComponentKind.values:
        errors["component_kind"] = [
            f"component_kind={task.component_kind!r} is not one of {', '.join(ComponentKind.values)} (or empty)"
        ]
    trig = task.trigger
    if trig == TaskDefinition.Trigger.INTERVAL:
        if not task.interval_value:
            errors["interval_value"] = [
                f"interval_value={task.interval_value!r}: an interval task needs a whole number ≥ 1"
            ]
        if task.interval_unit not in TaskDefinition.IntervalUnit.values:
            errors["interval_unit"] = [
                f"interval_unit={task.interval_unit!r} is not one of {', '.join(TaskDefinition.IntervalUnit.values)}"
            ]
    elif trig == TaskDefinition.Trigger.RUNTIME:
        if not task.run_hours:
            errors["run_hours"] = [f"run_hours={task.run_hours!r}: a run-hour task needs a whole number of hours ≥ 1"]
    elif trig == TaskDefinition.Trigger.SEASON:
        if task.season not in TaskDefinition.Season.values:
            errors["season"] = [f"season={task.season!r} is not one of {', '.join(TaskDefinition.Season.values)}"]
        if task.lead_days is None:
            errors["lead_days"] = ["lead_days is required for a season task (days before the season starts, ≥ 0)"]
    elif trig == TaskDefinition.Trigger.CONDITION and not task.condition_code:
        errors["condition_code"] = ["condition_code is required for a task raised only by a condition"]
    for name, message in task_problems(task).items():
        errors.setdefault(name, []).append(message)
    if errors:
        raise ValidationError(errors)
    task.full_clean(exclude=["organisation"] if task.organisation_id is None else None, validate_constraints=False)


@transaction.atomic
def task_library_install(*, organisation: Organisation | None = None) -> list[TaskDefinition]:
    """Install or refresh the shipped library (idempotent).

    Without an organisation the shared library rows are written; every
    organisation sees them unless it overrides a code. With an organisation,
    the library is copied into that organisation's own rows (only codes it does
    not have yet), so its supervisors can edit them freely.
    """
    existing = {t.code: t for t in TaskDefinition.objects.filter(organisation=organisation)}
    out: list[TaskDefinition] = []
    for item in LIBRARY:
        fields = {**item, "checklist_code": item["code"]}
        task = existing.get(item["code"])
        if task is None:
            task = TaskDefinition(organisation=organisation, **fields)
            _validate_task(task)
            task.save()
        elif organisation is None:
            # The shared rows follow the shipped data; organisation copies are the supervisors' own.
            changed = [k for k, v in fields.items() if getattr(task, k) != v]
            for k in changed:
                setattr(task, k, fields[k])
            if changed:
                task.save(update_fields=[*changed, "updated_at"])
        out.append(task)
    if organisation is None:
        every_organisation_changed()  # the shared rows are every organisation's unless overridden
    else:
        organisation_changed(organisation_id=organisation.pk)
    return out


@transaction.atomic
def task_definition_override(
    *, organisation: Organisation, code: str, by: User | None = None, reason: str = "", **changes: Any
) -> TaskDefinition:
    """Change a task for one organisation (e.g. its frequency), copying the library row on first change.

    ``reason`` (why, in the person's words) goes into the audit trail with the changes."""
    bad = set(changes) - OVERRIDABLE
    if bad:
        raise ValidationError({sorted(bad)[0]: [f"cannot be changed; allowed: {', '.join(sorted(OVERRIDABLE))}"]})
    task = TaskDefinition.objects.filter(organisation=organisation, code=code).first()
    if task is None:
        base = TaskDefinition.objects.filter(organisation__isnull=True, code=code).first()
        if base is None:
            raise ValidationError({"code": [f"task code {code!r} is not a task of the library or of {organisation}"]})
        task = TaskDefinition(
            **{
                f.name: getattr(base, f.name)
                for f in TaskDefinition._meta.concrete_fields
                if f.name not in {"id", "organisation", "created_at", "updated_at"}
            },
            organisation=organisation,
        )
    for k, v in changes.items():
        setattr(task, k, v)
    if {"interval_value", "interval_unit", "run_hours", "lead_days"} & set(changes) and "source" not in changes:
        task.source = f"Changed by the organisation{f' ({by})' if by else ''}; library default: {task.source}"
    _validate_task(task)
    task.save()
    if by is not None:
        from accounts.services import audit_record

        audited = _jsonable(changes) | ({"reason": reason} if reason else {})
        audit_record(actor=by, obj=task, action="task_override", changes=audited, organisation=organisation)
    organisation_changed(organisation_id=organisation.pk)
    return task


@transaction.atomic
def task_definition_create(*, organisation: Organisation, by: User | None = None, **fields: Any) -> TaskDefinition:
    """An organisation's own task. ``checklist_code`` defaults to the code."""
    fields.setdefault("checklist_code", fields.get("code", ""))
    fields.setdefault("source", "Set by the organisation")
    task = TaskDefinition(organisation=organisation, **fields)
    if TaskDefinition.objects.filter(organisation=organisation, code=task.code).exists():
        raise ValidationError({"code": [f"code={task.code!r} already exists in {organisation}"]})
    _validate_task(task)
    task.save()
    if by is not None:
        from accounts.services import audit_record

        audit_record(actor=by, obj=task, action="task_create", changes=_jsonable(fields), organisation=organisation)
    organisation_changed(organisation_id=organisation.pk)
    return task


@transaction.atomic
def unit_task_set(
    *, ahu: AHU, task_code: str, enabled: bool, reason: str = "", by: User | None = None
) -> UnitTaskSetting:
    """Switch one task off (or back on) for one unit; the reason is text without control characters."""
    errors = FieldErrors()
    checked = check_text(reason, key="reason", label="Reason", max_length=REASON_MAX, errors=errors)
    errors.raise_if_any()
    reason = checked or ""  # None only with an error, raised above
    setting, _ = UnitTaskSetting.objects.update_or_create(
        ahu=ahu, task_code=task_code, defaults={"enabled": enabled, "reason": reason}
    )
    if by is not None:
        from accounts.services import audit_record

        audit_record(
            actor=by,
            obj=setting,
            action="unit_task_set",
            changes={"task_code": task_code, "enabled": enabled, "reason": reason},
            organisation=ahu.building.site.organisation,
        )
    organisation_changed(organisation_id=ahu.building.site.organisation_id)
    return setting


def _jsonable(d: dict[str, Any]) -> dict[str, Any]:
    return {k: v if isinstance(v, (str, int, float, bool, type(None), list, dict)) else str(v) for k, v in d.items()}


# Which of a unit's own numbers each kind of rule has (an interval task has no lead time).
UNIT_NUMBERS_BY_TRIGGER: dict[str, tuple[str, ...]] = {
    TaskDefinition.Trigger.INTERVAL: ("interval_value", "interval_unit", "grace_days"),
    TaskDefinition.Trigger.RUNTIME: ("run_hours", "grace_days"),
    TaskDefinition.Trigger.SEASON: ("lead_days", "grace_days"),
    TaskDefinition.Trigger.CONDITION: ("grace_days",),
}


@transaction.atomic
def unit_task_rule_set(
    *, ahu: AHU, task: TaskDefinition, numbers: dict[str, Any], reason: str, by: User | None = None
) -> UnitTaskSetting:
    """Give one unit its own numbers for one rule (``task``: the organisation's rule in force).

    ``numbers`` holds fields of ``UnitTaskSetting.RULE_FIELDS``; None (or "" for the interval's unit) means
    "the organisation's". Bounds are the rule's own (``scheduling.inputs.task_problems``); a reason is required
    and audited with the change. Raises ValidationError keyed by field; nothing is saved then.
    """
    errors = FieldErrors()
    checked = check_text(reason, key="reason", label="Reason", max_length=REASON_MAX, errors=errors, required=True)
    allowed = UNIT_NUMBERS_BY_TRIGGER.get(task.trigger, ())
    for name in numbers:
        if name not in allowed:
            errors.add(name, f"{name}: not a number a {task.get_trigger_display().lower()} rule has")
    errors.raise_if_any()
    reason = checked or ""  # None only with an error, raised above
    own = {k: v for k, v in numbers.items() if v not in (None, "")}
    if own.get("interval_unit") and own["interval_unit"] not in TaskDefinition.IntervalUnit.values:
        units = ", ".join(TaskDefinition.IntervalUnit.values)
        raise ValidationError({"interval_unit": [f"Interval unit: {own['interval_unit']!r} is not one of {units}"]})
    probe = TaskDefinition(**{f: getattr(task, f) for f in ("name", "trigger", *UnitTaskSetting.RULE_FIELDS)})
    for name, value in own.items():
        setattr(probe, name, value)
    problems = task_problems(probe)
    if problems:
        raise ValidationError({name: [text] for name, text in problems.items()})
    setting = UnitTaskSetting.objects.select_for_update().filter(ahu=ahu, task_code=task.code).first()
    if setting is None:
        setting = UnitTaskSetting(ahu=ahu, task_code=task.code, enabled=True)
    before = {name: getattr(setting, name) for name in UnitTaskSetting.RULE_FIELDS}
    for name in UnitTaskSetting.RULE_FIELDS:
        if name in numbers:
            setattr(
                setting,
                name,
                numbers[name] if numbers[name] not in (None, "") else (None if name != "interval_unit" else ""),
            )
    setting.reason = reason
    setting.save()
    if by is not None:
        from accounts.services import audit_record

        after = {name: getattr(setting, name) for name in UnitTaskSetting.RULE_FIELDS}
        audit_record(
            actor=by,
            obj=setting,
            action="unit_task_rule_set",
            changes={"task_code": task.code, "before": before, "after": after, "reason": reason},
            organisation=ahu.building.site.organisation,
        )
    organisation_changed(organisation_id=ahu.building.site.organisation_id)
    return setting
