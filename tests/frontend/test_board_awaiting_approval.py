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


def test_the_board_api_lists_the_same_overdue_work_awaiting_approval_as_the_page(clock, login, api_client):
    """The board API's answer carries the page's list (``overdue_awaiting``, from the one function): the same work
    orders in the same order with the same words, typed in the schema; another organisation's proposed work is in
    neither, and a technician is refused the board."""
    clock.move_to(SATURDAY)
    scenario = scenario_module.build()

    def proposed(title, due, ahu=scenario.unit_a):
        return WorkOrderFactory(
            ahu=ahu,
            title=title,
            due_date=due,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.PENDING,
            state=WorkOrder.State.PLANNED,
        )

    late = proposed("Replace seized damper actuator", dt.date(2026, 9, 20))
    later = proposed("Straighten bent coil fins", dt.date(2026, 11, 2), ahu=scenario.unit_b)
    proposed("Re-seal filter frame", dt.date(2026, 12, 10))  # not overdue: on neither
    stranger = WorkOrderFactory(  # another organisation's overdue proposed work
        title="Someone else's damper",
        due_date=dt.date(2026, 9, 1),
        kind=WorkOrder.Kind.CORRECTIVE,
        approval=WorkOrder.Approval.PENDING,
        state=WorkOrder.State.PLANNED,
    )

    html = login(scenario.supervisor).get("/board/").content.decode()
    section = html.split("data-overdue-awaiting>")[1].split("</section>")[0]
    on_page = [line.split('"')[0] for line in section.split('data-work-order="')[1:]]

    api_client.force_authenticate(scenario.supervisor)
    answer = api_client.get("/api/scheduling/board/").json()
    listed = answer["overdue_awaiting"]
    assert [row["id"] for row in listed] == on_page == [str(late.public_id), str(later.public_id)]
    assert str(stranger.public_id) not in html and str(stranger.public_id) not in str(answer)
    first = listed[0]
    assert first["due_words"] == "due 20 Sep 2026, 75 days overdue (since 21 Sep 2026)"
    assert f'{first["unit"]["name"]} <span class="muted">{first["site"]["name"]}</span>' in section
    assert (first["kind"], first["priority"], first["due_date"]) == ("corrective", late.priority, "2026-09-20")
    assert first["version"] == late.version and first["site"]["name"] == "Harbour House"

    api_client.force_authenticate(scenario.technician)
    assert api_client.get("/api/scheduling/board/").status_code == 403
