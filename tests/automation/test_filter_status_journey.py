"""Journey: a bank a visit judged ok loads up in the building-automation trend, and the property manager is told.

AHU-01 of Wharf House (site kept in UTC) has its final filters read on a visit on 5 January 2026: 130 Pa at design
airflow, ok (25 % of the 90 to 250 Pa span), change forecast 21 October 2026. From 12 January the bank's pressure
sensor reads 176 then 178 Pa with the supply fan at 80 % speed: corrected to design airflow by the first fan law
and n = 1.5, 176 × (1/0.8)^1.5 = 245.97 Pa, 97 % of the span (at or over 95 %: change), and 178 Pa → 248.77 Pa.

As the property manager, through the pages and the PDF text: her dashboard counts the bank to change and names the
building-automation trend as the source, her site page and the compliance PDF say FAIL from the trend (not the
visit's ok), and one open finding holds the change the trend proposed. Another organisation's manager sees none of
it. A later trend day with new filters (100 Pa) closes the finding.

The clock is set for every step.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.test import Client
from django.urls import reverse

from accounts.models import Role
from accounts.services import site_grant
from automation.judging import unit_day_judge
from inspections.models import Finding
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.reports import builders as b
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
UTC = dt.UTC
VISIT = "2026-01-05"
TREND_DAYS = [dt.date(2026, 1, 12), dt.date(2026, 1, 13)]
NOW = dt.datetime(2026, 1, 14, 9, tzinfo=UTC)
TREND = "building-automation trend"


def _judge(ahu, points, day, dp):
    start = dt.datetime.combine(day, dt.time(), tzinfo=UTC)
    put_day(points, start, {"SF-STS": 1, "SF-SPD": 80, "FILT-DP": dp})
    with time_machine.travel(start + dt.timedelta(days=1, hours=1), tick=False):
        unit_day_judge(ahu=ahu, day=day)


@pytest.fixture
def world():
    org = OrganisationFactory(name="Wharf Air", slug="wharf-air")
    site = SiteFactory(organisation=org, name="Wharf House", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-01")
    bank = ahu.components.get(name="Final filters")
    lib = b.library()
    helena = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="helena.pm")
    site_grant(user=helena, site=site)
    tech = make_person(organisation=org, role=Role.TECHNICIAN, username="wharf-tech")
    visit = b.preventive(ahu, lib["filter_check"], VISIT, done=VISIT)
    insp = b.inspection(visit, tech, finished=VISIT)
    b.reading(insp, "filter_check.dp", component=bank, value_si=130.0, verdict="ok")
    b.evaluation(
        insp,
        "filter_loading",
        "filter_check.dp",
        component=bank,
        verdict="ok",
        reason="Final filters: filter at 25 % of its span",
        derived={"corrected_dp_pa": 130.0, "loading_pct": 25.0, "forecast_change_date": "2026-10-21"},
    )
    other_org = OrganisationFactory(name="Quay Estates", slug="quay-estates")
    other_site = SiteFactory(organisation=other_org, name="Quay Court", time_zone="UTC")
    make_full_unit(building=BuildingFactory(site=other_site), tag="AHU-Q1")
    other = make_person(organisation=other_org, role=Role.PROPERTY_MANAGER, username="quay.pm")
    site_grant(user=other, site=other_site)
    return {"site": site, "ahu": ahu, "bank": bank, "helena": helena, "other": other, "points": map_points(ahu)}


def _client(user):
    c = Client()
    c.force_login(user)
    return c


def _compliance_text(user, site, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        report = report_request(
            user=user,
            kind="compliance",
            parameters={"sites": [site.pk], "start": "2025-01-14", "end": "2026-01-14"},
        )
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    # A word broken at its hyphen across a cell's lines ("building-" / "automation") read as one word again.
    return re.sub(r"(\w)- (\w)", r"\1-\2", " ".join(pdf_text(report).split()))


def test_a_bank_loaded_in_the_trend_is_to_change_for_the_manager_with_one_finding(
    world, django_capture_on_commit_callbacks
):
    site, ahu, bank, helena = world["site"], world["ahu"], world["bank"], world["helena"]
    with time_machine.travel(NOW, tick=False):
        before = _client(helena).get(f"/dashboard/site/{site.pk}/").content.decode()
    assert '<td data-label="Judged from" data-filter-source>technician reading</td>' in before

    for day, dp in zip(TREND_DAYS, (176, 178), strict=True):
        _judge(ahu, world["points"], day, dp)

    # One proposal of the change (the feed's), and one open finding of the trend holding it.
    [wo] = WorkOrder.objects.filter(ahu=ahu, condition_code="filter_loaded")
    [finding] = Finding.objects.filter(ahu=ahu, component=bank, state=Finding.State.OPEN)
    assert (finding.source, finding.rule, finding.corrective_work_order_id) == ("bas_trend", "FILTER", wo.pk)
    assert finding.times_seen == 2 and finding.title == "Filter loaded — Final filters"
    assert finding.source_words == "building-automation trends, filter pressure drop"

    with time_machine.travel(NOW, tick=False):
        pm = _client(helena)
        dashboard = pm.get("/dashboard/").content.decode()
        page = pm.get(f"/dashboard/site/{site.pk}/").content.decode()
        findings = pm.get("/site-findings/").content.decode()
        pdf = _compliance_text(helena, site, django_capture_on_commit_callbacks)

    # Her dashboard: the bank to change, and who found it loaded.
    assert '<td class="num" data-label="Filters to change">1<br>' in dashboard
    assert f"{ahu.display_name} — Final filters: {TREND}</span>" in dashboard
    # Her site page: FAIL from the trend, 248.8 Pa at design airflow, 99 % (not the visit's ok 130 Pa, 25 %).
    assert f'<td data-label="Judged from" data-filter-source>{TREND}</td>' in page
    assert '<span class="verdict fail">fail</span>' in page
    assert "249 Pa" in page and "99 %" in page
    assert "21 Oct 2026" not in page
    # Her findings list shows the finding of the trend.
    assert "Final filters: Filter loaded<br>" in findings
    assert "Found in the building-automation trends, filter pressure drop" in findings
    # The compliance PDF: the bank to change from the trend day of 13 January.
    assert "1 / 0 filter banks to change / to watch" in pdf
    assert f"13 Jan 2026 {TREND}" in pdf and "FAIL" in pdf and "249 Pa" in pdf and "99 %" in pdf
    assert "no forecast yet" in pdf and "21 Oct 2026" not in pdf
    trends = "Found in the building-automation trends, filter pressure drop"
    assert f"Final filters Filter loaded {trends} Medium 12 Jan 2026" in pdf

    # The finding's text says the trend's judgement with its numbers in the reader's units, dated as the pages do.
    # Where it was found (its source) and the bank (its title) are said beside the text, not again in it.
    assert finding.reason.startswith("13 Jan 2026: filter ")
    assert "249 Pa at design airflow" in finding.reason and "trend median of" in finding.reason
    helena.unit_system = "us"
    helena.save(update_fields=["unit_system"])
    with time_machine.travel(NOW, tick=False):
        [shown] = [f for f in _client(helena).get(reverse("inspections_api:findings")).json() if f["id"] == finding.pk]
    assert "1.00 in. w.c. at design airflow" in shown["text"]  # 248.8 Pa ÷ 249.09 Pa per in. w.c. (NIST SP 811)
    assert " Pa" not in shown["text"] and "13 Jan 2026" in shown["text"]
    # Her site page's chart caption says the trend day's judgement in her units too, with the table's loading.
    with time_machine.travel(NOW, tick=False):
        us_page = _client(helena).get(f"/dashboard/site/{site.pk}/").content.decode()
    caption = us_page.split("Final filters: pressure drop at design airflow")[1].split("</figcaption>")[0]
    assert "1.00 in. w.c. at design airflow" in caption and " Pa" not in caption
    assert "99 % of the way from clean" in caption
    helena.unit_system = "si"
    helena.save(update_fields=["unit_system"])

    # Another organisation's manager sees none of it.
    with time_machine.travel(NOW, tick=False):
        quay = _client(world["other"])
        assert quay.get(f"/dashboard/site/{site.pk}/").status_code == 404
        assert quay.get(f"/site-findings/{finding.pk}/").status_code == 404
        theirs = quay.get("/dashboard/").content.decode() + quay.get("/site-findings/").content.decode()
    assert "Wharf House" not in theirs
    assert "Filter loaded" not in theirs
    assert f"Final filters: {TREND}" not in theirs

    # New filters: the next trend day reads the bank clean and closes the finding.
    _judge(ahu, world["points"], dt.date(2026, 1, 14), 100)
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLOSED and finding.close_cause == Finding.CloseCause.ABSENT
    assert "below the change point" in finding.close_note
