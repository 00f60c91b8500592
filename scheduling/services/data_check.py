"""Rows already stored that break the input policy: find them, and on request repair what can be repaired safely.

The checks are the input policy's own (accounts.inputs, inventory.inputs, scheduling.inputs), read over
stored rows: a unit's numbers not finite or out of range, dates outside 2000 to ten years ahead, rules out
of bounds, visits planned or due outside the window, meter readings no meter can show, component specs the
spec table refuses.

Repair (``repair=True``) changes only what is plainly not a value and may be empty: a non-finite number in an
optional field of a unit becomes empty, an optional date outside the window (a unit's service start, a
component's installation date, a visit's planned day) becomes empty. Nothing is clamped to a limit; every
other problem is reported for a person to correct. Each repair is written to the audit trail.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Callable
from dataclasses import dataclass, field

from django.db import connection, models, transaction
from django.db.models import Q
from django.utils import timezone

from accounts.changes import work_changed
from accounts.inputs import EARLIEST_DATE, date_problem, reading_time_problem
from accounts.services import audit_record
from inventory.inputs import AHU_DATES, AHU_NUMBERS, ahu_problems, component_date_problems
from inventory.models import AHU, Component, Site
from inventory.specs import SpecErrors, validate_specs
from inventory.today import today_for

from ..inputs import task_problem, visit_problem, visits_outside_window
from ..models import MeterReading, TaskDefinition, WorkOrder
from .meters import METER_HOURS_MAX


@dataclass
class DataCheckResult:
    problems: list[str] = field(default_factory=list)
    repaired: list[str] = field(default_factory=list)


def _unit_name(ahu: AHU) -> str:
    return f"{ahu.tag} at {ahu.building.site.name}"


def _label(name: str) -> str:
    return AHU_NUMBERS[name].label.lower() if name in AHU_NUMBERS else AHU_DATES.get(name, name).lower()


def _nullable(model: type[models.Model], name: str) -> bool:
    return model._meta.get_field(name).null


DayOf = Callable[[Site], dt.date]


@transaction.atomic
def stored_data_check(*, repair: bool = False, today: dt.date | None = None) -> DataCheckResult:
    """Every stored row that breaks the input policy, one line each; with ``repair`` the safe repairs done.

    Dates are judged on the today of each row's site (``inventory.today``), as the forms judged them when
    they were typed; ``today`` judges every row on that one day instead."""
    now = timezone.now()

    def day_of(site: Site) -> dt.date:
        return today or today_for(site, now=now)

    out = DataCheckResult()
    _check_units(out, repair=repair, day_of=day_of)
    _check_components(out, repair=repair, day_of=day_of)
    for task in TaskDefinition.objects.select_related("organisation").order_by("organisation_id", "code"):
        problem = task_problem(task)
        if problem:
            owner = task.organisation.name if task.organisation is not None else "the shared library"
            out.problems.append(f"maintenance rule of {owner}, {problem}")
    # No site's today is more than a day before the server's date (UTC-12), so no window ends earlier.
    earliest_today = today or today_for(None, now=now) - dt.timedelta(days=1)
    _check_visits(out, repair=repair, day_of=day_of, earliest_today=earliest_today)
    _check_readings(out)
    return out


def _check_units(out: DataCheckResult, *, repair: bool, day_of: DayOf) -> None:
    for ahu in AHU.objects.select_related("building__site__organisation").order_by("pk").iterator(chunk_size=500):
        problems = ahu_problems(ahu, today=day_of(ahu.building.site))
        if not problems:
            continue
        name = _unit_name(ahu)
        cleared: dict[str, str] = {}
        for key, message in problems.items():
            out.problems.append(f"{name}: {message}")
            value = getattr(ahu, key)
            if not repair or not _nullable(AHU, key):
                continue
            if (key in AHU_NUMBERS and isinstance(value, float) and not math.isfinite(value)) or key == "service_start":
                cleared[key] = str(value)
        if cleared:
            for key in cleared:
                setattr(ahu, key, None)
            ahu.save(update_fields=list(cleared))
            audit_record(
                actor=None, obj=ahu, action="data_repair", changes={"cleared": cleared},
                organisation=ahu.building.site.organisation,
            )  # fmt: skip
            out.repaired.extend(f"{name}: {_label(key)} {was} cleared (left empty)" for key, was in cleared.items())


def _check_components(out: DataCheckResult, *, repair: bool, day_of: DayOf) -> None:
    for comp in Component.objects.select_related("ahu__building__site__organisation").order_by("pk").iterator(500):
        name = f"{comp.name} of {_unit_name(comp.ahu)}"
        for message in component_date_problems(comp, today=day_of(comp.ahu.building.site)).values():
            out.problems.append(f"{name}: {message}")
            if repair and comp.installed_on is not None:  # the one date a part's problem is about
                was = comp.installed_on.isoformat()
                comp.installed_on = None
                comp.save(update_fields=["installed_on"])
                audit_record(
                    actor=None, obj=comp, action="data_repair", changes={"cleared": {"installed_on": was}},
                    organisation=comp.ahu.building.site.organisation,
                )  # fmt: skip
                out.repaired.append(f"{name}: installed on {was} cleared (left empty)")
        try:
            validate_specs(kind=comp.kind, specs=comp.specs)
        except SpecErrors as exc:
            out.problems.extend(f"{name}: {message}" for message in exc.errors.values())


def _check_visits(out: DataCheckResult, *, repair: bool, day_of: DayOf, earliest_today: dt.date) -> None:
    """Visits outside the plan window of their site's today; candidates read with the window of
    ``earliest_today``, the earliest today any site may have."""
    for wo in (
        WorkOrder.objects.filter(visits_outside_window(today=earliest_today))
        .select_related("ahu__building__site", "organisation")
        .order_by("pk")
    ):
        today = day_of(wo.ahu.building.site)
        problem = visit_problem(wo, today=today)
        if problem is None:
            continue
        name = f"{_unit_name(wo.ahu)}, {wo.title}"
        out.problems.append(f"{name}: {problem}")
        if (
            repair
            and wo.state in WorkOrder.OPEN_STATES
            and wo.scheduled_for is not None
            and date_problem(wo.scheduled_for, label="", today=today)
        ):
            was = wo.scheduled_for.isoformat()
            wo.scheduled_for = None
            wo.version += 1
            wo.save(update_fields=["scheduled_for", "version", "updated_at"])
            audit_record(
                actor=None, obj=wo, action="data_repair", changes={"cleared": {"scheduled_for": was}},
                organisation=wo.organisation,
            )  # fmt: skip
            work_changed(organisation_id=wo.organisation_id, people=[wo.assignee_id])  # the board and today show it
            out.repaired.append(f"{name}: planned day {was} cleared (plan it again)")


def _check_readings(out: DataCheckResult) -> None:
    now = timezone.now()
    earliest = dt.datetime.combine(EARLIEST_DATE, dt.time(), tzinfo=dt.UTC)
    outside = Q(hours__lt=0) | Q(hours__gt=METER_HOURS_MAX) | Q(taken_at__lt=earliest) | Q(taken_at__gt=now)
    if connection.vendor == "postgresql":
        outside |= Q(hours=math.nan)  # PostgreSQL keeps NaN (equal to itself there); SQLite stores none
    candidates = MeterReading.objects.filter(outside).select_related("ahu__building__site").order_by("pk")
    for r in candidates:
        name = f"run-hour reading of {_unit_name(r.ahu)}"
        if not (isinstance(r.hours, float) and math.isfinite(r.hours)) or not 0 <= r.hours <= METER_HOURS_MAX:
            out.problems.append(f"{name}: {r.hours} h is out of range; allowed: 0 to {METER_HOURS_MAX} h")
        problem = reading_time_problem(r.taken_at, label="reading time", now=now, tz=r.ahu.building.site.time_zone)
        if problem:
            out.problems.append(f"{name}: {problem}")
