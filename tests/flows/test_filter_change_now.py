"""A filter at or past its final pressure drop says "change now" everywhere; a stored date gone by says "due now".

Scenarios from the new-user tryout (issue "One truth from reading to record"):

1. The final filters read 100, 110, 120 Pa a month apart and then 300 Pa (final 250 Pa). The fitted line
   is still below 250 Pa, but the reading is over it: the phone's answer, the record, the unit history's chart
   and the manager's chart say change now, with no date ahead and no forecast line.
2. The final filters read 150, 170, 190 Pa a month apart: the change is forecast for 2025-06-05. The manager
   opens the site page and the compliance report after that day: both say it is due now, naming the old date.
3. A filter change is marked on the manager's chart, each set of filters drawn as its own line.
"""

import datetime as dt
import re

import pytest
from django.urls import reverse

from reports.compliance import filter_forecast_text
from reports.documents.history_charts import filter_charts
from reports.models import Report
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_filter_visit
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
DAY0 = dt.datetime(2025, 1, 6, 9, 30, tzinfo=dt.UTC)
DASHED_FORECAST = 'stroke-dasharray="8 5"'  # frontend.charts: the dashed forecast line


def _visit(api_client, time_machine, ahu, tech, days, hours, dp, after=None, airflow_ls=3000):
    """One filter check, at design airflow (3.0 m³/s, so no correction) unless told, optionally with a change."""
    finished = DAY0 + dt.timedelta(days=days)
    time_machine.move_to(finished + dt.timedelta(hours=1), tick=False)
    return sync_filter_visit(
        api_client,
        ahu=ahu,
        technician=tech,
        finished_at=finished,
        hours=hours,
        airflow_ls=airflow_ls,
        final_dp=dp,
        after=after,
    )


def _final_judgement(result):
    [judged] = [e for e in result["evaluation"] if e["check"] == "filter_loading" and "Final filters" in e["reason"]]
    return judged


def _manager_page(client, ahu):
    manager = make_person(organisation=ahu.building.site.organisation, role="supervisor")
    client.force_login(manager)
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": ahu.building.site_id}))
    assert page.status_code == 200
    [chart] = [c for c in page.context["charts"] if "Final filters" in c["title"]]
    return page, chart, manager


def test_a_reading_over_final_says_change_now_with_no_date_ahead_and_no_forecast_line(api_client, client, time_machine):
    """100, 110, 120, then 300 Pa (final 250 Pa), 360 run-hours a month apart.

    Worked by hand (Theil–Sen, as tests/engineering/test_filter_forecast_dates.py): the line reads 172.5 Pa at
    the last visit and would reach 250 Pa about two months later; the reading is 300 Pa, (300 − 90)/(250 − 90)
    = 131 % of the span: change now, dated the last visit.
    """
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    results = [
        _visit(api_client, time_machine, ahu, tech, days, hours, dp)
        for days, hours, dp in ((0, 1_000, 100), (30, 1_360, 110), (60, 1_720, 120), (90, 2_080, 300))
    ]
    judged = _final_judgement(results[-1])
    assert judged["verdict"] == "fail"
    assert "131 % of its span" in judged["reason"]
    assert judged["reason"].endswith("at or over its final pressure drop: change now")
    assert "change forecast" not in judged["reason"]
    assert "no date" not in judged["reason"]
    last_visit = (DAY0 + dt.timedelta(days=90)).date()
    assert judged["derived"]["forecast_at_final_now"] is True
    assert judged["derived"]["forecast_change_date"] == last_visit.isoformat()

    # The unit history PDF's chart: due now, no forecast line.
    [chart] = [
        c
        for c in filter_charts(ahu=ahu, lo=DAY0 - dt.timedelta(days=1), hi=DAY0 + dt.timedelta(days=100), system="si")
        if c["bank"].name == "Final filters"
    ]
    assert chart["forecast"].at_final_now is True
    assert chart["due_now"] is True
    # The manager's chart: no dashed line; the table says now.
    time_machine.move_to(DAY0 + dt.timedelta(days=95), tick=False)
    page, mchart, _ = _manager_page(client, ahu)
    assert DASHED_FORECAST not in mchart["svg"]
    assert "change now" in mchart["reason"]
    assert "now: at or over its final pressure drop" in " ".join(page.content.decode().split())


def test_a_stored_change_date_gone_by_reads_due_now_on_the_site_page_and_the_compliance_pdf(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    """150, 170, 190 Pa at 1,300, 1,600, 1,900 run-hours, 30 days apart (final 250 Pa).

    Worked by hand (linear trend, common practice): 20 Pa per 300 h; 60 Pa more takes 900 h at 10 h a day,
    90 days after the last visit (2025-03-07): 2025-06-05. Before that day the page shows the date; after it
    the page says "due now (forecast for 5 Jun 2025)" and the compliance PDF "due now (forecast for
    2025-06-05)", judged on the site's today.
    """
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    results = [
        _visit(api_client, time_machine, ahu, tech, days, hours, dp)
        for days, hours, dp in ((0, 1_300, 150), (30, 1_600, 170), (60, 1_900, 190))
    ]
    judged = _final_judgement(results[-1])
    assert judged["derived"]["forecast_change_date"] == "2025-06-05"
    assert "change forecast 5 June 2025" in judged["reason"]

    time_machine.move_to(dt.datetime(2025, 5, 1, 12, tzinfo=dt.UTC), tick=False)
    page, chart, _ = _manager_page(client, ahu)
    html = " ".join(page.content.decode().split())
    assert "5 Jun 2025" in html and "due now (forecast for" not in html  # the page's dates, as "j M Y"
    assert DASHED_FORECAST in chart["svg"]

    time_machine.move_to(dt.datetime(2025, 7, 25, 12, tzinfo=dt.UTC), tick=False)
    page, chart, manager = _manager_page(client, ahu)
    html = " ".join(page.content.decode().split())
    assert "due now (forecast for 5 Jun 2025)" in html
    assert DASHED_FORECAST not in chart["svg"]  # no line drawn back to a date gone by

    api_client.force_authenticate(manager)
    with django_capture_on_commit_callbacks(execute=True):
        res = api_client.post(
            "/api/reports/",
            {
                "kind": "compliance",
                "parameters": {"sites": [ahu.building.site_id], "start": "2025-01-01", "end": "2025-07-31"},
            },
            format="json",
        )
    assert res.status_code == 202, res.json()
    report = Report.objects.get(public_id=res.json()["public_id"])
    assert report.status == Report.Status.DONE, report.error
    assert "due now (forecast for 5 Jun 2025)" in " ".join(pdf_text(report).split())


def test_filter_forecast_text_judges_a_stored_date_on_the_given_day():
    """A date ahead stands; a date before ``today`` is due now; the day itself is not yet past."""
    derived = {"forecast_change_date": "2025-06-05"}
    assert filter_forecast_text(derived=derived, today=dt.date(2025, 6, 4)) == "5 Jun 2025"
    assert filter_forecast_text(derived=derived, today=dt.date(2025, 6, 5)) == "5 Jun 2025"
    assert filter_forecast_text(derived=derived, today=dt.date(2025, 6, 6)) == "due now (forecast for 5 Jun 2025)"
    assert filter_forecast_text(derived={"forecast_at_final_now": True}, today=dt.date(2025, 1, 1)).startswith("now")
    assert filter_forecast_text(derived={}, today=dt.date(2025, 1, 1)) == "—"


def test_the_managers_chart_draws_each_set_of_filters_apart_and_marks_the_change(api_client, client, time_machine):
    """Old set 120, 150 Pa; changed at the second visit (new set 95 Pa), then 110 Pa: two lines, never joined,
    and a "filters changed" mark; chart text at 18 units in a 640-wide view (about 10 px on a 360 px phone)."""
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    _visit(api_client, time_machine, ahu, tech, 0, 1_000, 120)
    _visit(api_client, time_machine, ahu, tech, 30, 1_300, 150, after=95)
    _visit(api_client, time_machine, ahu, tech, 60, 1_600, 110)
    time_machine.move_to(DAY0 + dt.timedelta(days=61), tick=False)
    _, chart, _ = _manager_page(client, ahu)
    svg = chart["svg"]
    lines = re.findall(r'<path d="([^"]+)" fill="none" stroke="currentColor" stroke-width="2.5"/>', svg)
    assert len(lines) == 2
    assert [line.count("L") for line in lines] == [1, 1]  # 120 → 150, then 95 → 110
    assert "filters changed" in svg
    width = int(re.search(r'viewBox="0 0 (\d+) \d+"', svg).group(1))
    sizes = [int(s) for s in re.findall(r'font-size="(\d+)"', svg)]
    assert min(sizes) * 360 / width >= 10


def test_a_reading_that_cannot_be_judged_is_not_a_filter_to_watch_and_the_last_judged_value_stays(
    api_client, client, time_machine
):
    """Final filters 150, 170, 190 Pa at design airflow, then a reading at 1,000 L/s (design 3,000 L/s): too far
    from design to correct (0.5–1.5 × design, engineering.filters, common practice). The record says it could
    not be judged; the dashboard does not count it as a filter to watch; the site page still shows 190 Pa at
    design airflow, (190 − 90)/(250 − 90) = 62.5 % of the span (shown 62 % or 63 %), from the last judged reading.
    """
    from frontend.selectors import site_summaries

    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    for days, hours, dp in ((0, 1_300, 150), (30, 1_600, 170), (60, 1_900, 190)):
        _visit(api_client, time_machine, ahu, tech, days, hours, dp)
    last = _visit(api_client, time_machine, ahu, tech, 90, 2_200, 60, airflow_ls=1000)
    code = ahu.components.get(name="Final filters").label_code
    [judged] = [e for e in last["evaluation"] if e["check"] == "filter_loading" and e["component"] == code]
    assert "cannot judge the filter loading" in judged["reason"]
    assert "airflow_m3s" not in judged["reason"]

    time_machine.move_to(DAY0 + dt.timedelta(days=95), tick=False)
    page, _, manager = _manager_page(client, ahu)
    _, rows = site_summaries(user=manager)
    [row] = [r for r in rows if r["site"].pk == ahu.building.site_id]
    assert row["filters"]["watch"] == 0
    assert row["filters"]["ok"] == 2  # pre-filters 60 Pa (10 % of span) and final filters 62.5 %
    [final_row] = [r for r in page.context["f"].filters if r["filter"] and r["filter"].name == "Final filters"]
    assert final_row["corrected_dp"].startswith("190")
    assert final_row["loading"] in ("62 %", "63 %")
