"""Journey: a supervisor imports a unit's trend log through the API, the trends are judged, and the schedule and the
manager's site page follow.

A unit with a typed run-hour meter (10,000 h on 1 October 2026, 11,020 h on 11 January 2027, 102 days later:
10 h a day) and the
usual automation points. The supervisor uploads four days of 15-minute samples (12 to 15 January 2027: supply fan
on all day at 80 % speed, the final filters' pressure drop 150, 160, 170 and 176 Pa); ``manage.py judge_trends``
judges them. Then:

- the property manager's site page shows the bank's chart with its four points named as building-automation trend
  days;
- the filter change every 4,000 run-hours is due by the trend-fed supply-fan meter: 96 h on 16 January at 24 h a
  day, (4,000 − 96) / 24 = 162.7 days later → 27 June 2027 (by the typed meter it was (12,000 − 11,020) / 10 =
  98 days after 11 January → 19 April 2027).

The clock is set for every step.
"""

import datetime as dt

import pytest
import time_machine
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command
from django.test import Client

from accounts.models import Role
from accounts.services import site_grant
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrderTask
from scheduling.services import meter_reading_record, task_library_install
from tests.automation.trend_builders import map_points
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
UTC = dt.UTC
DAY1 = dt.date(2027, 1, 12)
FILTER_DP = [150, 160, 170, 176]


def _csv(tag: str) -> bytes:
    lines = [f"timestamp,{tag}.SF-STS,{tag}.SF-SPD,{tag}.FILT-DP"]
    for i, dp in enumerate(FILTER_DP):
        start = dt.datetime.combine(DAY1 + dt.timedelta(days=i), dt.time())
        for k in range(96):
            lines.append(f"{(start + dt.timedelta(minutes=15 * k)):%Y-%m-%d %H:%M},1,80,{dp}")
    return ("\n".join(lines) + "\n").encode()


def _filter_change(ahu):
    return WorkOrderTask.objects.get(
        ahu=ahu,
        task_code="filter_replace",
        component__name="Final filters",
        completed_at__isnull=True,
        occurrence_key__startswith="h:",
    )


def test_imported_trends_label_the_filter_chart_and_move_the_runtime_task():
    org = OrganisationFactory(name="Journey Air", slug="journey-air")
    site = SiteFactory(organisation=org, code="fen", name="Fen Court", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-21")
    supervisor = make_person(organisation=org, role=Role.SUPERVISOR, username="journey-super")
    manager = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="journey-pm")
    site_grant(user=manager, site=site)
    task_library_install()
    map_points(ahu, names=["SF-STS", "SF-SPD", "FILT-DP"])
    with time_machine.travel(dt.datetime(2027, 1, 11, 12, tzinfo=UTC), tick=False):
        meter_reading_record(ahu=ahu, hours=10_000, taken_at=dt.datetime(2026, 10, 1, tzinfo=UTC))
        meter_reading_record(ahu=ahu, hours=11_020, taken_at=dt.datetime(2027, 1, 11, tzinfo=UTC))
        work_orders_generate(organisation=org, horizon_days=400)
    assert _filter_change(ahu).due_date == dt.date(2027, 4, 19)  # by the typed meter

    now = dt.datetime(2027, 1, 16, 1, tzinfo=UTC)
    with time_machine.travel(now, tick=False):
        client = Client()
        client.force_login(supervisor)
        res = client.post(
            f"/api/automation/sites/{site.pk}/trends/",
            {
                "layout": "wide",
                "units": "si",
                "background": "false",
                "file": SimpleUploadedFile("t.csv", _csv(ahu.tag)),
            },
        )
        assert res.status_code == 200, res.content
        call_command("judge_trends", "fen", DAY1.isoformat(), (DAY1 + dt.timedelta(days=3)).isoformat())
        work_orders_generate(organisation=org, horizon_days=400)

    # The runtime task moved to the trend's hours: 96 h on 16 January, 24 h a day.
    task = _filter_change(ahu)
    assert task.due_date == (now + dt.timedelta(days=(4000 - 96) / 24)).date() == dt.date(2027, 6, 27)
    assert task.occurrence_key.endswith(f":fan{ahu.components.get(name='Supply fan').pk}")

    # The property manager's site page: the bank's chart says its points are trend days.
    with time_machine.travel(now, tick=False):
        pm = Client()
        pm.force_login(manager)
        page = pm.get(f"/dashboard/site/{site.pk}/")
    assert page.status_code == 200
    text = page.content.decode()
    assert "Points: 4 building-automation trend days." in text
