"""Periodic Celery tasks, run in-process (eager, as with no broker): nightly generation, season refresh,
overdue e-mails. Each is safe to run twice."""

import datetime as dt

import pytest
import time_machine
from django.conf import settings
from django.core import mail

from config.celery_app import app
from scheduling import tasks
from scheduling.models import WorkOrder, WorkOrderTask
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor

pytestmark = pytest.mark.django_db
MORNING = dt.datetime(2025, 3, 3, 6, 30, tzinfo=dt.UTC)


@pytest.fixture(autouse=True)
def no_forecast_url(settings):
    settings.PLENUM_FORECAST_URL = ""  # the season refresh must not reach for the network


def test_every_beat_entry_names_a_registered_task():
    """The beat schedule only names tasks the worker knows (a typo would silently never run)."""
    app.loader.import_default_modules()
    names = {entry["task"] for entry in settings.CELERY_BEAT_SCHEDULE.values()}
    assert {"scheduling.nightly_generation", "scheduling.nightly_seasons", "scheduling.daily_escalation"} <= names
    assert names <= set(app.tasks)


@time_machine.travel(MORNING, tick=False)
def test_nightly_generation_creates_each_organisations_work_once(library):
    """The nightly fan-out generates for every organisation; run again, it creates nothing new."""
    one = make_full_unit(service_start=dt.date(2024, 12, 15))
    two = make_full_unit(service_start=dt.date(2024, 12, 15))
    assert one.building.site.organisation != two.building.site.organisation
    assert tasks.nightly_generation.delay().get() >= 2
    counts = {ahu.pk: WorkOrderTask.objects.filter(ahu=ahu).count() for ahu in (one, two)}
    assert all(n > 0 for n in counts.values())
    tasks.nightly_generation.delay().get()
    assert {ahu.pk: WorkOrderTask.objects.filter(ahu=ahu).count() for ahu in (one, two)} == counts


def test_generation_task_reports_what_it_did(library):
    """The generation task takes an organisation id and a day and returns the counts of its run and what it
    skipped (nothing here)."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    org_id = ahu.building.site.organisation_id
    first = tasks.work_orders_generate.delay(org_id, 30, "2025-03-03").get()
    assert first["created"] == WorkOrderTask.objects.filter(ahu=ahu).count() > 0
    assert tasks.work_orders_generate.delay(org_id, 30, "2025-03-03").get() == {
        "created": 0,
        "moved": 0,
        "unchanged": first["created"],
        "skipped": [],
    }


@time_machine.travel(dt.datetime(2025, 9, 1, 1, tzinfo=dt.UTC), tick=False)
def test_nightly_seasons_sets_each_sites_freeze_start_from_its_normals():
    """With no forecast configured the nightly refresh stores every site's season starts from its normals."""
    ahu = make_full_unit()
    site = ahu.building.site
    assert site.freeze_season_start is None
    assert tasks.nightly_seasons.delay().get() >= 1
    site.refresh_from_db()
    assert site.season_source == "normals"
    assert dt.date(2025, 9, 1) < site.freeze_season_start < dt.date(2026, 3, 1)
    again = tasks.site_seasons_refresh.delay(site.pk, "2025-09-01").get()
    assert again == {"freeze_season_start": str(site.freeze_season_start), "source": "normals"}


@time_machine.travel(MORNING, tick=False)
def test_daily_escalation_mails_the_supervisors_once(django_capture_on_commit_callbacks):
    """Overdue work reaches the organisation's supervisors by e-mail after commit; the same morning again
    sends nothing, and work that is not yet overdue is not mentioned."""
    late = WorkOrderFactory(due_date=dt.date(2025, 2, 10), overdue_on=dt.date(2025, 2, 18), title="Late visit")
    WorkOrderFactory(ahu=late.ahu, due_date=dt.date(2025, 3, 1), overdue_on=dt.date(2025, 3, 9), title="Fresh visit")
    make_supervisor(late.organisation, email="lead@example.invalid")
    with django_capture_on_commit_callbacks(execute=True):
        tasks.daily_escalation.delay().get()
    assert len(mail.outbox) == 1
    message = mail.outbox[0]
    assert message.to == ["lead@example.invalid"] and message.subject == "1 overdue work order"
    assert "Late visit" in message.body and "Fresh visit" not in message.body
    late.refresh_from_db()
    assert late.escalated_on == dt.date(2025, 3, 3)
    with django_capture_on_commit_callbacks(execute=True):
        assert tasks.overdue_escalation_send.delay(late.organisation_id).get() == 0
    assert len(mail.outbox) == 1
    assert WorkOrder.objects.get(pk=late.pk).state == WorkOrder.State.PLANNED
