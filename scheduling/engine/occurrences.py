"""Every due occurrence of every rule on one unit: interval (fixed or floating), run hours, season."""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

from ..inputs import task_problem
from ..models import TaskDefinition
from ..selectors import task_for_unit
from ..services.seasons import SEASON_LOOKBACK_DAYS
from ..targets import TaskTargets
from .dates import add_interval, calendar_occurrences, local_date
from .rows import Occ, Trigger, UnitRow


@dataclass(slots=True)
class SiteDay:
    tz: zoneinfo.ZoneInfo
    today: dt.date
    end: dt.date
    seasons: dict[str, tuple[dt.date | None, str]]  # season -> (start, occurrence key)


class Rules:
    """The organisation's generated tasks with what the loop needs of each, worked out once per run."""

    def __init__(self, tasks: list[TaskDefinition], skipped: list[str] | None = None):
        # A rule stored out of bounds (an interval of 1,000,000 months) is left out and named, not run.
        self.items = []
        for task in tasks:
            problem = task_problem(task)
            if problem is not None:
                if skipped is not None:
                    skipped.append(f"maintenance rule {problem}")
                continue
            self.items.append((task, TaskTargets(task)))
        self._grid: dict[tuple, list[dt.date]] = {}

    def grid(self, anchor: dt.date, task: TaskDefinition, start: dt.date, end: dt.date) -> list[dt.date]:
        key = (anchor, task.interval_value, task.interval_unit, start, end)
        days = self._grid.get(key)
        if days is None:
            days = self._grid[key] = calendar_occurrences(
                anchor=anchor, value=task.interval_value, unit=task.interval_unit, start=start, end=end
            )
        return days


def unit_occurrences(
    *,
    unit: UnitRow,
    site: SiteDay,
    rules: Rules,
    disabled,
    last_done,
    meters,
    skipped: list[str],
    where: str = "",
    own_numbers: dict | None = None,
) -> list[Occ]:
    """Every due occurrence of every (enabled) task on one unit within the site's horizon.

    A task whose dates cannot be worked out for this unit (date arithmetic past the calendar's end, from a
    row stored before the input policy) is left out and named in ``skipped``; the unit's other tasks stay.
    ``own_numbers`` ((unit id, code) -> numbers) are a unit's own interval, grace, lead time or run-hours,
    which hold for that unit instead of the organisation's (a unit's number out of bounds skips that rule)."""
    out: list[Occ] = []
    meter = False  # not looked up yet
    for task, targets in rules.items:
        if (unit.pk, task.code) in disabled:
            continue
        numbers = (own_numbers or {}).get((unit.pk, task.code))
        if numbers:
            task = task_for_unit(task=task, numbers=numbers)
            problem = task_problem(task)
            if problem is not None:
                skipped.append(f"{where or unit.tag}, maintenance rule {problem} (this unit's own value)")
                continue
        try:
            found, meter = _task_occurrences(
                unit=unit,
                task=task,
                targets=targets,
                site=site,
                rules=rules,
                last_done=last_done,
                meters=meters,
                meter=meter,
            )
        except (OverflowError, ValueError) as exc:
            skipped.append(f"{where or unit.tag}, {task.name}: its next date cannot be worked out ({exc})")
            continue
        out.extend(found)
    return out


def _task_occurrences(*, unit: UnitRow, task, targets, site: SiteDay, rules: Rules, last_done, meters, meter):
    """The due occurrences of one task on one unit, and the unit's meter (looked up once, on first need)."""
    out: list[Occ] = []
    today, end = site.today, site.end
    comps = targets.components_grouped(ahu=unit, components_by_kind=unit.by_kind, order=lambda c: c.position)
    if not comps:
        return out, meter
    trigger = task.trigger
    if trigger == Trigger.INTERVAL:
        if task.anchor == TaskDefinition.Anchor.FLOATING:
            for comp in comps:
                ck = comp.pk if comp else 0
                done = last_done.get((unit.pk, task.code, ck))
                basis = local_date(done, site.tz) if done else unit.anchor
                due = max(add_interval(basis, task.interval_value, task.interval_unit), today)
                if due <= end:
                    out.append(Occ(unit, task, ck, due, f"after:{basis.isoformat()}", False))
        else:
            days = rules.grid(unit.anchor, task, today, end)
            for comp in comps:
                ck = comp.pk if comp else 0
                out.extend(Occ(unit, task, ck, due, f"c:{due.isoformat()}", False) for due in days)
    elif trigger == Trigger.RUNTIME:
        for comp in comps:
            ck = comp.pk if comp else 0
            done = last_done.get((unit.pk, task.code, ck))
            basis, tag = meters.basis_for(unit, last_done=done)
            if basis is None:
                continue
            proj = meters.projection(basis, run_hours=task.run_hours, last_done=done, tag=tag)
            if proj is None:
                continue
            key, when = proj
            natural = local_date(when, site.tz)
            if natural <= end:
                out.append(Occ(unit, task, ck, max(natural, today), key, True, natural < today))
    elif trigger == Trigger.SEASON:
        start, key = site.seasons.get(task.season, (None, ""))
        if start is None or start < today - dt.timedelta(days=SEASON_LOOKBACK_DAYS):
            return out, meter
        natural = start - dt.timedelta(days=task.lead_days or 0)
        if natural <= end:
            due, clamped = max(natural, today), natural < today
            out.extend(Occ(unit, task, comp.pk if comp else 0, due, key, True, clamped) for comp in comps)
    return out, meter
