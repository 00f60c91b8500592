"""What giving a work order to a technician for a day does to their day (``assignment_check``), and the day a row
offers.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from accounts.clock import day_text
from inventory.today import today_for

from ..models import TaskDefinition, WorkOrder
from .load import (
    WEEKEND,
    DayLoad,
    capacity_on,
    least_loaded,
    skills_needed,
    technician_day_loads,
    weekday_on_or_near,
)

WARNING_CODES = ("over_capacity", "missing_skill", "after_due_date")  # in the order of AssignmentCheck.warnings


@dataclass(frozen=True)
class AssignmentCheck:
    """What giving ``work_order`` to ``technician`` for ``day`` does to their day, said before it is saved."""

    technician: object
    day: dt.date
    load: DayLoad
    missing_skills: tuple[str, ...]
    suggestion: tuple | None  # (user, DayLoad with the work added) of the least-loaded qualified technician
    today: dt.date
    due_date: dt.date | None = None
    overdue_from: dt.date | None = None  # the first day the work counts as overdue (WorkOrder.overdue_from)
    priority: str = WorkOrder.Priority.NORMAL

    @property
    def over(self) -> bool:
        return self.load.over

    @property
    def late(self) -> bool:
        """Planned after its due date, where a day no later was still to be had (overdue work planned for today,
        the soonest day there is, is not late)."""
        return self.due_date is not None and self.day > max(self.due_date, self.today)

    @property
    def needs_confirm(self) -> bool:
        """Something to read before the assignment is saved: over capacity, a skill missing, or planned late."""
        return self.over or bool(self.missing_skills) or self.late

    def codes(self) -> list[str]:
        """The code of each warning, in the order of :meth:`warnings` (the API's 409 lists them so)."""
        on = (self.over, bool(self.missing_skills), self.late)
        return [code for code, warns in zip(WARNING_CODES, on, strict=True) if warns]

    def said_of_suggestion(self) -> list[str]:
        """The codes of the warnings already said of the suggested technician with this check: the day after the
        due date (whoever does the work) and their day over capacity (:meth:`suggestion_words`). Never a missing
        skill: the suggestion has every skill the work needs. Choosing them instead carries these as read."""
        if self.suggestion is None:
            return []
        on = {"over_capacity": self.suggestion[1].over, "after_due_date": self.late}
        return [code for code in WARNING_CODES if on.get(code)]

    def skill_words(self) -> list[str]:
        names = {str(v): str(label).lower() for v, label in TaskDefinition.Skill.choices}
        return [names.get(s, s) for s in self.missing_skills]

    def late_words(self) -> str:
        """ "Urgent work due 5 Dec would be planned for Sun 6 Dec, after its due date: ..." """
        due = day_text(self.due_date, today=self.today) if self.due_date else ""
        words = f"{WorkOrder.Priority(self.priority).label} work due {due} would be planned for {self.day_words()}, "
        words += "after its due date"
        if self.priority == WorkOrder.Priority.URGENT:
            return words + ": urgent work is meant to be done by then."
        if self.overdue_from is not None and self.day >= self.overdue_from:
            return words + f"; it will show overdue from {day_text(self.overdue_from, today=self.today)}."
        return words + "; it will show past due."

    def warnings(self) -> list[str]:
        """Each thing to confirm, in words naming the technician, the skill, the day and the due date."""
        out = [self.message()] if self.over else []
        if self.missing_skills:
            skills = self.skill_words()
            out.append(
                f"{self.technician} lacks the skill{'s' if len(skills) > 1 else ''} this work needs: "
                f"{', '.join(skills)}."
            )
        if self.late:
            out.append(self.late_words())
        return out

    def day_words(self) -> str:
        return f"{self.day:%a} {day_text(self.day, today=self.today)}"

    def load_words(self, load: DayLoad | None = None) -> str:
        """ "8.4 h: 7.7 h of tasks and 43 min of travel (22 km between 2 sites)" """
        load = load or self.load
        words = f"{load.hours:.1f} h: {load.task_minutes / 60:.1f} h of tasks"
        if load.sites > 1:
            words += (
                f" and {load.travel_minutes:.0f} min of travel ({load.travel_km:.0f} km between {load.sites} sites)"
            )
        else:
            words += ", no travel between sites"
        return words

    def message(self) -> str:
        """The warning: the technician, the day, the hours and the capacity."""
        return (
            f"{self.technician} on {self.day_words()} would have {self.load_words()}, "
            f"over the capacity of {self.load.capacity_hours:.1f} h a day."
        )

    def suggestion_words(self) -> str:
        if self.suggestion is None:
            return "No technician of the organisation has every skill this work needs."
        user, load = self.suggestion
        if user == self.technician:
            return f"{user} is already the least loaded of those with the skills."
        state = "over capacity too" if load.over else "within capacity"
        return (
            f"Least loaded with the skills: {user}, {load.hours:.1f} h of {load.capacity_hours:.1f} h "
            f"on {self.day_words()} with this work ({state})."
        )


def assignment_check(*, work_order: WorkOrder, technician, day: dt.date) -> AssignmentCheck:
    """The day ``technician`` would have if given ``work_order`` on ``day`` (tasks plus travel, against their
    capacity), the skills they lack, whether the day is after the due date, and the least-loaded technician who
    has every skill the work needs (smallest share of their capacity with the work added; ties by name). Reads
    only; nothing is saved."""
    loads = technician_day_loads(
        organisation=work_order.organisation, start=day, days=1, adding=work_order, adding_day=day
    )
    needed = skills_needed(work_order=work_order)
    chosen = next((load for user, (load,) in loads if user.pk == technician.pk), None)
    if chosen is None:  # not a technician of the organisation: the service refuses it in its own words
        chosen = DayLoad(date=day, capacity_hours=capacity_on(technician, day))
    suggestion = least_loaded([(user, load) for user, (load,) in loads if needed <= set(user.skills or [])])
    return AssignmentCheck(
        technician=technician,
        day=day,
        load=chosen,
        missing_skills=tuple(sorted(needed - set(technician.skills or []))),
        suggestion=suggestion,
        today=today_for(work_order.ahu.building.site),
        due_date=work_order.due_date,
        overdue_from=work_order.overdue_from,
        priority=work_order.priority,
    )


def offered_day(*, scheduled_for: dt.date | None, due_date: dt.date, today: dt.date, priority: str) -> dt.date:
    """The day a board row offers for its visit: its plan, else its due date, never a day already past at its
    site (``today`` is the site's: the schedule service refuses a day before it) nor a weekend day
    (:func:`weekday_on_or_near`). Urgent work already due or overdue is offered ``today`` itself, weekend or
    not: it is not pushed past a weekend (freeze protection on a frosty Saturday)."""
    if scheduled_for:
        return scheduled_for
    if priority == WorkOrder.Priority.URGENT and due_date <= today:
        return today
    return weekday_on_or_near(max(due_date, today), today=today)


def weekend_plan_words(*, day: dt.date | None, due_date: dt.date, today: dt.date, priority: str) -> str:
    """The warning beside a plan for a Saturday or Sunday that :func:`offered_day`'s rule would not offer (anything
    but urgent work already due, planned for the site's ``today``), else "". The plan is kept: weekend work is
    allowed (a shutdown out of hours, a technician on a weekend rota); the words make sure it was meant."""
    if day is None or day.weekday() not in WEEKEND:
        return ""
    if day == today and offered_day(scheduled_for=None, due_date=due_date, today=today, priority=priority) == day:
        return ""
    return (
        f"Day {day.isoformat()} is a {day:%A}: kept as typed, but the board offers a weekday (Monday to Friday), "
        "and a Saturday or Sunday only to urgent work already due, on the site's today; make sure the technician "
        "works that day"
    )
