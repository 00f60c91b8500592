"""One meaning of the overdue day: the first day after the grace window (due + grace + 1 day)."""

import datetime as dt
import importlib

import pytest
from django.apps import apps as django_apps
from django.core import mail

from scheduling.engine import work_orders_generate
from scheduling.models import TaskDefinition, WorkOrder
from scheduling.selectors import board_page_for
from scheduling.services import corrective_work_order_propose, overdue_escalation_send
from tests.factories.inventory import AHUFactory, ComponentFactory
from tests.factories.scheduling import WorkOrderFactory, make_supervisor

pytestmark = pytest.mark.django_db


@pytest.fixture
def filter_visit(library):
    """A generated visit: the monthly filter check (7 grace days) due 1 March 2025, nothing else."""
    TaskDefinition.objects.exclude(code="filter_check").update(enabled=False)
    ahu = AHUFactory(service_start=dt.date(2025, 2, 1))
    ComponentFactory(ahu=ahu, kind="filter_bank", name="Final filters")
    organisation = ahu.building.site.organisation
    work_orders_generate(organisation=organisation, today=dt.date(2025, 2, 20), horizon_days=15)
    wo = WorkOrder.objects.get(ahu=ahu)
    assert wo.due_date == dt.date(2025, 3, 1)
    return wo


def test_generated_visit_is_overdue_the_day_after_its_grace(filter_visit):
    """Due 1 March with 7 grace days: 8 March is still on time, 9 March is the first overdue day."""
    assert filter_visit.overdue_on == dt.date(2025, 3, 9)


def test_escalation_mails_from_the_first_day_after_grace(filter_visit, django_capture_on_commit_callbacks):
    """The overdue e-mail leaves nothing on 8 March and reports the visit on 9 March."""
    org = filter_visit.organisation
    make_supervisor(org, email="lead@example.invalid")
    with django_capture_on_commit_callbacks(execute=True):
        assert overdue_escalation_send(organisation=org, today=dt.date(2025, 3, 8)) == 0
        assert overdue_escalation_send(organisation=org, today=dt.date(2025, 3, 9)) == 1
    # Said as every page says it: counted from the first overdue day it names.
    assert "due 1 Mar 2025, grace to 8 Mar 2025, overdue since today (9 Mar 2025)" in mail.outbox[-1].body


def test_board_counts_overdue_from_the_first_day_after_grace(filter_visit):
    """On the board the visit is due, not overdue, on 8 March, and overdue on 9 March."""
    org = filter_visit.organisation
    week = dt.date(2025, 3, 3)
    on_8th = board_page_for(organisation=org, week_start=week, today=dt.date(2025, 3, 8))
    on_9th = board_page_for(organisation=org, week_start=dt.date(2025, 3, 3), today=dt.date(2025, 3, 9))
    assert filter_visit.public_id not in {r["id"] for r in on_8th["overdue"]}
    assert filter_visit.public_id in {r["id"] for r in on_9th["overdue"]}


def test_corrective_work_is_overdue_the_day_after_its_grace(library):
    """Normal-priority corrective work (14 grace days) raised today is overdue on day 15."""
    ahu = AHUFactory()
    wo = corrective_work_order_propose(ahu=ahu, title="Loose belt", reason="belt slips", approved=True)
    assert wo.overdue_on == wo.due_date + dt.timedelta(days=15)


def test_migration_moves_stored_overdue_days_one_day_later():
    """Rows written with the old meaning (due + grace) move to due + grace + 1 day; rows without one stay empty."""
    old = WorkOrderFactory(due_date=dt.date(2025, 3, 1), overdue_on=dt.date(2025, 3, 8))
    none = WorkOrderFactory(due_date=dt.date(2025, 3, 1), overdue_on=None)
    migration = importlib.import_module("scheduling.migrations.0003_overdue_on_after_grace")
    migration.forwards(django_apps, None)
    old.refresh_from_db()
    none.refresh_from_db()
    assert old.overdue_on == dt.date(2025, 3, 9) and none.overdue_on is None
    migration.backwards(django_apps, None)
    old.refresh_from_db()
    assert old.overdue_on == dt.date(2025, 3, 8)
