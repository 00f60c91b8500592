"""Maintenance rules in the pages: interval, grace, lead time and run-hours per organisation and per unit.

Each rule shows the library's default and its source beside the value in force (and, on a unit, whether
that value is the unit's own, the organisation's or the library's). A change needs a reason, which goes
into the audit trail with it. The numbers are checked at their field with the rule bounds of
``scheduling.inputs`` (an interval of at most ten years); a refused form keeps what was typed and saves
nothing. Writes go through ``scheduling.services.library`` (``task_definition_override`` for the
organisation, ``unit_task_rule_set`` and ``unit_task_set`` for a unit).
"""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import redirect, render

from accounts.inputs import FieldErrors, check_integer, check_text
from scheduling.inputs import GRACE_DAYS_MAX, INTERVAL_MAX, LEAD_DAYS_MAX, RUN_HOURS_MAX
from scheduling.models import TaskDefinition, UnitTaskSetting
from scheduling.selectors import effective_tasks, task_for_unit
from scheduling.services.library import (
    UNIT_NUMBERS_BY_TRIGGER,
    task_definition_override,
    unit_task_rule_set,
    unit_task_set,
)

from .staff import managed_ahu, managed_organisation

Trigger = TaskDefinition.Trigger
REASON_MAX = UnitTaskSetting._meta.get_field("reason").max_length
UNITS = TaskDefinition.IntervalUnit
# (field, label, lowest, highest, unit words) of the plain whole numbers; the interval's highest depends on its unit.
NUMBERS = {
    "grace_days": ("Grace days before overdue", 0, GRACE_DAYS_MAX, "days"),
    "lead_days": ("Lead time before the season (days)", 0, LEAD_DAYS_MAX, "days"),
    "run_hours": ("Run-hours between tasks (h)", 1, RUN_HOURS_MAX, "h"),
}

LABELS = {
    "interval_value": "Interval",
    "interval_unit": "Interval unit",
    **{name: label for name, (label, *_) in NUMBERS.items()},
}


# ---------------------------------------------------------------------------
# Words
# ---------------------------------------------------------------------------
def _plural(value: int, one: str, many: str) -> str:
    return f"{value} {one if value == 1 else many}"


def rule_words(task: TaskDefinition) -> str:
    """'Every 3 months (fixed to the calendar); overdue after 7 days' grace' — a rule's numbers in words."""
    if task.trigger == Trigger.INTERVAL and task.interval_value:
        unit = str(task.interval_unit).rstrip("s")
        when = f"Every {_plural(task.interval_value, unit, unit + 's')} ({task.get_anchor_display().lower()})"
    elif task.trigger == Trigger.RUNTIME and task.run_hours:
        when = f"Every {task.run_hours} run-hours"
    elif task.trigger == Trigger.SEASON:
        season = task.get_season_display().lower() or "season"
        when = f"{_plural(task.lead_days or 0, 'day', 'days')} before the {season} starts"
    else:
        return "Only when a reading calls for it"
    return f"{when}; overdue after {_plural(task.grace_days, 'day', 'days')} of grace"


def _library_rows() -> dict[str, TaskDefinition]:
    return {t.code: t for t in TaskDefinition.objects.filter(organisation__isnull=True)}


def _fields_of(task: TaskDefinition) -> tuple[str, ...]:
    """The numbers a person may set for this rule (a rule raised by readings has none)."""
    if task.trigger == Trigger.CONDITION:
        return ()
    return UNIT_NUMBERS_BY_TRIGGER[task.trigger]


# ---------------------------------------------------------------------------
# Checking a row's form
# ---------------------------------------------------------------------------
def rule_numbers_check(post, *, task: TaskDefinition, errors: FieldErrors, blank_follows: bool) -> dict:
    """The numbers typed for ``task``'s row, checked at their fields (bounds: scheduling.inputs).

    ``blank_follows``: an empty field means "the organisation's" (a unit's page), else it is required.
    """
    clean: dict = {}
    fields = _fields_of(task)
    if "interval_unit" in fields:
        raw_unit = post.get("interval_unit", "").strip()
        if raw_unit and raw_unit not in UNITS.values:
            shown = repr(raw_unit[:20])
            errors.add("interval_unit", f"Interval unit: {shown} is not offered; allowed: days, weeks, months")
            raw_unit = ""
        elif not raw_unit and not blank_follows:
            errors.add("interval_unit", "Interval unit is required; allowed: days, weeks, months")
        clean["interval_unit"] = raw_unit
        unit = raw_unit or task.interval_unit
        clean["interval_value"] = check_integer(
            post.get("interval_value", ""),
            key="interval_value",
            label="Interval",
            errors=errors,
            minimum=1,
            maximum=INTERVAL_MAX.get(unit, INTERVAL_MAX[UNITS.DAYS]),
            unit=f"{unit} (ten years)",
            required=not blank_follows,
        )
    for name in fields:
        if name in NUMBERS:
            label, lowest, highest, unit = NUMBERS[name]
            clean[name] = check_integer(
                post.get(name, ""),
                key=name,
                label=label,
                errors=errors,
                minimum=lowest,
                maximum=highest,
                unit=unit,
                required=not blank_follows,
            )
    return clean


def _reason(post, errors: FieldErrors) -> str | None:
    return check_text(
        post.get("reason", ""), key="reason", label="Reason", max_length=REASON_MAX, errors=errors, required=True
    )


def _messages(exc: ValidationError) -> dict[str, list[str]]:
    return exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}


# ---------------------------------------------------------------------------
# Rows
# ---------------------------------------------------------------------------
def _row(task, *, library, typed=None, errors=None, unit_numbers=None, setting=None) -> dict:
    """What one rule's card shows: the library default and source, what is in force, and its form."""
    base = library.get(task.code)
    in_force = task_for_unit(task=task, numbers=unit_numbers)
    fields = _fields_of(task)
    shown = typed if typed is not None else _initial(task, fields, unit_numbers)
    return {
        "task": task,
        "code": task.code,
        "library": rule_words(base) if base else None,
        "source": base.source if base else task.source,
        "own_task": base is None,
        "organisation": rule_words(task),
        "organisation_changed": base is not None and rule_words(base) != rule_words(task),
        "in_force": rule_words(in_force),
        "unit_own": sorted(unit_numbers or {}),
        "fields": fields,
        "inputs": [
            {
                "name": name,
                "label": LABELS[name],
                "value": shown.get(name, ""),
                "errors": (errors or {}).get(name, []),
                "placeholder": "" if getattr(task, name) is None else getattr(task, name),
            }
            for name in fields
        ],
        "errors": errors or {},
        "other_errors": [t for k, texts in (errors or {}).items() if k not in fields and k != "reason" for t in texts],
        "setting": setting,
        "enabled": setting.enabled if setting is not None else True,
        "units": UNITS.choices,
    }


def _initial(task, fields, unit_numbers) -> dict:
    if unit_numbers is not None:  # a unit's page: its own numbers, empty where it follows the organisation
        return {name: "" if unit_numbers.get(name) is None else unit_numbers[name] for name in fields}
    return {name: "" if getattr(task, name) is None else getattr(task, name) for name in fields}


def _typed(post, fields) -> dict:
    return {name: "".join(c for c in post.get(name, "")[:40] if c.isprintable()) for name in fields}


# ---------------------------------------------------------------------------
# The organisation's rules
# ---------------------------------------------------------------------------
@login_required
def organisation_rules(request):
    org = managed_organisation(request)
    tasks = effective_tasks(organisation=org)
    library = _library_rows()
    status, refused = 200, None
    if request.method == "POST":
        code = request.POST.get("task_code", "")
        task = tasks.get(code)
        if task is None:
            messages.error(request, f"Rule {code[:60]!r} is not one of the organisation's rules; nothing changed.")
            return redirect("frontend:rules")
        errors = FieldErrors()
        numbers = rule_numbers_check(request.POST, task=task, errors=errors, blank_follows=False)
        reason = _reason(request.POST, errors)
        changes = {k: v for k, v in numbers.items() if getattr(task, k) != v}
        if not errors and not changes:
            messages.info(request, f"{task.name}: these values are already in force; nothing changed.")
            return redirect(f"{request.path}#rule-{code}")
        if not errors:
            try:
                task_definition_override(organisation=org, code=code, by=request.user, reason=reason, **changes)
            except ValidationError as exc:
                errors.update(_messages(exc))
            else:
                messages.success(request, f"{task.name}: {rule_words(effective_tasks(organisation=org)[code])}.")
                return redirect(f"{request.path}#rule-{code}")
        status, refused = 400, (code, _typed(request.POST, _fields_of(task)), dict(errors), request.POST)
    rows = []
    for code, task in tasks.items():
        if refused and refused[0] == code:
            row = _row(task, library=library, typed=refused[1], errors=refused[2])
            row["reason"] = refused[3].get("reason", "")[:REASON_MAX]
        else:
            row = _row(task, library=library)
        rows.append(row)
    return render(request, "frontend/rules/organisation.html", {"org": org, "rows": rows}, status=status)


# ---------------------------------------------------------------------------
# One unit's rules
# ---------------------------------------------------------------------------
@login_required
def unit_rules(request, pk):
    ahu = managed_ahu(request, pk)
    org = ahu.building.site.organisation
    tasks = effective_tasks(organisation=org)
    library = _library_rows()
    settings_by_code = {s.task_code: s for s in UnitTaskSetting.objects.filter(ahu=ahu)}
    status, refused = 200, None
    if request.method == "POST":
        code = request.POST.get("task_code", "")
        task = tasks.get(code)
        if task is None:
            messages.error(request, f"Rule {code[:60]!r} is not one of the organisation's rules; nothing changed.")
            return redirect("frontend:registry_rules", pk=ahu.pk)
        if request.POST.get("action") == "numbers":
            errors = FieldErrors()
            numbers = rule_numbers_check(request.POST, task=task, errors=errors, blank_follows=True)
            reason = _reason(request.POST, errors)
            current = _own_numbers(settings_by_code.get(code))
            if not errors and {k: v for k, v in numbers.items() if v not in (None, "")} == current:
                messages.info(request, f"{task.name} on {ahu.tag}: these values are already in force; nothing changed.")
                return redirect(f"{request.path}#rule-{code}")
            if not errors:
                try:
                    unit_task_rule_set(ahu=ahu, task=task, numbers=numbers, reason=reason, by=request.user)
                except ValidationError as exc:
                    errors.update(_messages(exc))
                else:
                    setting = UnitTaskSetting.objects.get(ahu=ahu, task_code=code)
                    words = rule_words(task_for_unit(task=task, numbers=_own_numbers(setting)))
                    messages.success(request, f"{task.name} on {ahu.tag}: {words}.")
                    return redirect(f"{request.path}#rule-{code}")
            status, refused = 400, (code, _typed(request.POST, _fields_of(task)), dict(errors), request.POST)
        else:
            enabled = request.POST.get("enabled") == "1"
            try:
                unit_task_set(
                    ahu=ahu, task_code=code, enabled=enabled, reason=request.POST.get("reason", ""), by=request.user
                )
            except ValidationError as exc:
                messages.error(request, f"{task.name} was not changed: {'; '.join(exc.messages)}")
            else:
                messages.success(request, f"{task.name} {'switched on' if enabled else 'switched off'} for {ahu.tag}.")
            return redirect("frontend:registry_rules", pk=ahu.pk)
    rows = []
    for code, task in tasks.items():
        setting = settings_by_code.get(code)
        own = _own_numbers(setting)
        if refused and refused[0] == code:
            row = _row(task, library=library, typed=refused[1], errors=refused[2], unit_numbers=own, setting=setting)
            row["reason"] = refused[3].get("reason", "")[:REASON_MAX]
        else:
            row = _row(task, library=library, unit_numbers=own, setting=setting)
        rows.append(row)
    return render(request, "frontend/rules/unit.html", {"ahu": ahu, "rows": rows}, status=status)


def _own_numbers(setting: UnitTaskSetting | None) -> dict:
    if setting is None:
        return {}
    return {
        name: getattr(setting, name) for name in UnitTaskSetting.RULE_FIELDS if getattr(setting, name) not in (None, "")
    }
