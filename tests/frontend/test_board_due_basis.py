"""A run-hour task's due date on the supervisor's board says which meter it was projected from: the supply fan's
run-hours in the building-automation trends, with the day of their last reading, or the unit's typed meter
(``scheduling.due_basis.basis_words``, the one phrase).

Trend world: the supply fan runs 06:00–18:00 each day from Mon 12 Jan 2026 for four days (a site kept in UTC); the
nightly judging feeds its meter 12 h a day, the last reading counting Thu 15 Jan. The filter change every 4,000
run-hours is projected from that meter (engine.TREND_METER_CURRENT_DAYS: a trend reading at most a week old).
Typed world: two readings typed on the unit's own meter, 1,000 h and 1,240 h ten days apart (24 h a day). The
clock is set for each step.
"""

import datetime as dt
import re

import pytest
import time_machine

from accounts.models import Role
from automation.judging import trends_judge
from scheduling.due_basis import basis_words
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrderTask
from scheduling.services import meter_reading_record, task_library_install
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
DAY1 = dt.date(2026, 1, 12)
NOW = dt.datetime(2026, 1, 16, 2, tzinfo=dt.UTC)


def _unit(tag: str):
    org = OrganisationFactory(name=f"Basis Air {tag}")
    site = SiteFactory(organisation=org, name="Dune Offices", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag=tag)
    task_library_install()
    boss = make_person(organisation=org, role=Role.SUPERVISOR)
    return ahu, boss


def _board_row(client, boss, ahu) -> str:
    """The board's row of the unit's run-hour visit, in the week it is due, as text."""
    task = WorkOrderTask.objects.filter(ahu=ahu, task_code="filter_replace", occurrence_key__startswith="h:").first()
    assert task is not None, "the runtime rule projected a date"
    client.force_login(boss)
    with time_machine.travel(NOW, tick=False):
        html = client.get("/board/", {"week": task.due_date.isoformat()}).content.decode()
    row = html.split(f'data-work-order="{task.work_order.public_id}"')[1].split("</tr>")[0]
    return " ".join(re.sub(r"<[^>]+>", " ", row).replace("&#x27;", "'").split())


def test_a_date_from_the_fans_trend_says_so_with_its_last_reading(client):
    ahu, boss = _unit("AHU-T1")
    points = map_points(ahu)
    for i in range(4):
        start = dt.datetime.combine(DAY1 + dt.timedelta(days=i), dt.time(), tzinfo=dt.UTC)
        put_day(points, start, {"SF-STS": lambda t: 1 if 6 <= t.hour < 18 else 0})
    with time_machine.travel(NOW, tick=False):
        trends_judge(site=ahu.building.site, start=DAY1, end=DAY1 + dt.timedelta(days=3))
        work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)
    row = _board_row(client, boss, ahu)
    said = "Run-hours projected from the supply fan's run-hours in the building-automation trends (last reading 15 Jan)"
    assert said in row, row
    assert "typed run-hour meter" not in row


def test_the_api_work_order_says_the_same_basis(api_client):
    """The work order's API answer (one, and the list) carries the same words in ``due_basis``; work with no run-hour
    task says none."""
    ahu, boss = _unit("AHU-T3")
    for day, hours in ((dt.date(2026, 1, 3), 1000), (dt.date(2026, 1, 13), 1240)):
        at = dt.datetime.combine(day, dt.time(9), tzinfo=dt.UTC)
        with time_machine.travel(at, tick=False):
            meter_reading_record(ahu=ahu, hours=hours, taken_at=at)
    with time_machine.travel(NOW, tick=False):
        work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)
    task = WorkOrderTask.objects.filter(ahu=ahu, task_code="filter_replace", occurrence_key__startswith="h:").first()
    api_client.force_authenticate(boss)
    with time_machine.travel(NOW, tick=False):
        one = api_client.get(f"/api/scheduling/work-orders/{task.work_order.public_id}/").json()
        listed = api_client.get("/api/scheduling/work-orders/").json()
    assert one["due_basis"] == "from the unit's typed run-hour meter"
    by_id = {w["id"]: w["due_basis"] for w in listed}
    assert by_id[str(task.work_order.public_id)] == one["due_basis"]
    runtime = {str(p) for p in WorkOrderTask.objects.filter(occurrence_key__startswith="h:").values_list(
        "work_order__public_id", flat=True)}  # fmt: skip
    calendar = [w for w in listed if w["id"] not in runtime]
    assert calendar and all(w["due_basis"] == "" for w in calendar)
    assert all(w["due_basis"] == "from the unit's typed run-hour meter" for w in listed if w["id"] in runtime)


def test_a_date_from_the_typed_meter_says_so(client):
    ahu, boss = _unit("AHU-T2")
    for day, hours in ((dt.date(2026, 1, 3), 1000), (dt.date(2026, 1, 13), 1240)):
        at = dt.datetime.combine(day, dt.time(9), tzinfo=dt.UTC)
        with time_machine.travel(at, tick=False):
            meter_reading_record(ahu=ahu, hours=hours, taken_at=at)
    with time_machine.travel(NOW, tick=False):
        work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)
    row = _board_row(client, boss, ahu)
    assert "Run-hours projected from the unit's typed run-hour meter" in row
    assert "building-automation trends" not in row


def test_the_phrase_is_made_from_the_occurrence_key():
    """``h:<reset>:<target>`` is the typed meter; ``h:<reset>:<target>:fan<id>`` the trend-fed meter of that fan;
    any other key (a calendar date) has no run-hour basis."""
    assert basis_words("h:0:4000") == "from the unit's typed run-hour meter"
    assert basis_words("h:0:4000:fan7", last_day=dt.date(2026, 12, 2), today=dt.date(2026, 12, 4)) == (
        "from the supply fan's run-hours in the building-automation trends (last reading 2 Dec)"
    )
    assert basis_words("h:0:4000:fan7", fan_name="Fan B", supply=False) == (
        "from the Fan B's run-hours in the building-automation trends"
    )
    assert basis_words("2026-12-01") == ""
