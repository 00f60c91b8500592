"""Proposed corrective work awaiting approval and overdue is on the supervisor's board, with the way to approve it:
the board's sections leave unapproved work out, while the property manager's dashboard and the compliance PDF count
it overdue (the one rule, WorkOrder.is_overdue_on)."""

import datetime as dt

import pytest

from scheduling.models import WorkOrder
from tests.factories.scheduling import WorkOrderFactory

from . import scenario as scenario_module

pytestmark = pytest.mark.django_db
SATURDAY = dt.datetime(2026, 12, 5, 10, tzinfo=dt.UTC)  # 11:00 in Amsterdam, the sites' zone


def test_overdue_work_awaiting_approval_is_on_the_board_with_a_link_to_approve_it(clock, login):
    clock.move_to(SATURDAY)
    scenario = scenario_module.build()

    def proposed(title, due, **fields):
        return WorkOrderFactory(
            ahu=scenario.unit_a,
            title=title,
            due_date=due,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.PENDING,
            state=WorkOrder.State.PLANNED,
            **fields,
        )

    late = proposed("Replace seized damper actuator", dt.date(2026, 9, 20))  # overdue since 21 Sep: 75 days
    not_yet = proposed("Re-seal filter frame", dt.date(2026, 12, 10))
    in_grace = proposed("Clean drain pan", dt.date(2026, 12, 1), overdue_on=dt.date(2026, 12, 8))
    due_today = proposed("Tighten belt", dt.date(2026, 12, 5))
    cancelled = proposed("Replace fan bearing", dt.date(2026, 9, 1))
    WorkOrder.objects.filter(pk=cancelled.pk).update(state=WorkOrder.State.CANCELLED)
    site_today = dt.date(2026, 12, 5)
    for wo in (late, not_yet, in_grace, due_today):
        wo.refresh_from_db()
        assert wo.is_overdue_on(site_today) == (wo == late)  # the rule the page must follow

    response = login(scenario.supervisor).get("/board/")
    html = response.content.decode()
    section = html.split("data-overdue-awaiting>")[1].split("</section>")[0]
    assert "Overdue, awaiting your approval (1)" in section
    assert f'data-work-order="{late.public_id}"' in section
    assert "due 20 Sep 2026, 75 days overdue (since 21 Sep 2026)" in section
    assert f'href="/corrective/#wo-{late.public_id}">Approve or reject it</a>' in section
    for wo in (not_yet, in_grace, due_today, cancelled):
        assert str(wo.public_id) not in html
    # The corrective page it links to lists it with that anchor.
    corrective = login(scenario.supervisor).get("/corrective/").content.decode()
    assert f'id="wo-{late.public_id}"' in corrective


def test_no_overdue_work_awaiting_approval_shows_no_section(clock, login):
    clock.move_to(SATURDAY)
    scenario = scenario_module.build()
    html = login(scenario.supervisor).get("/board/").content.decode()
    assert "data-overdue-awaiting" not in html and "awaiting your approval" not in html
