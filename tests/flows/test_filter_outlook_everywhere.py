"""One rule says when a filter is due: the manager's site page (table and chart), the compliance PDF and the unit
history PDF agree on the same day, and the site page writes its dates as the rest of the page does.

The final filters read 150, 170, 190 Pa at 1,300, 1,600, 1,900 run-hours, 30 days apart (final 250 Pa): the
change is forecast for 2025-06-05 (worked by hand in tests/flows/test_filter_change_now.py: 20 Pa per 300 h,
60 Pa more takes 900 h at 10 h a day, 90 days after 2025-03-07). Before that day every view shows the date and
draws the forecast; after it every view says it is due now, naming the date, and draws no line back to it.
"""

import datetime as dt

import pytest
from django.urls import reverse

from reports.compliance import filter_outlook
from reports.models import Report
from reports.services import report_request
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_filter_visit
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
DAY0 = dt.datetime(2025, 1, 6, 9, 30, tzinfo=dt.UTC)
DASHED_FORECAST = 'stroke-dasharray="8 5"'  # frontend.charts: the dashed forecast line


@pytest.fixture
def loading_filters(api_client, time_machine):
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    for days, hours, dp in ((0, 1_300, 150), (30, 1_600, 170), (60, 1_900, 190)):
        finished = DAY0 + dt.timedelta(days=days)
        time_machine.move_to(finished + dt.timedelta(hours=1), tick=False)
        sync_filter_visit(
            api_client, ahu=ahu, technician=tech, finished_at=finished, hours=hours, airflow_ls=3000, final_dp=dp
        )
    manager = make_person(organisation=ahu.building.site.organisation, role="supervisor")
    return ahu, manager


def _site_page(client, ahu, manager):
    client.force_login(manager)
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": ahu.building.site_id}))
    assert page.status_code == 200
    [row] = [r for r in page.context["f"].filters if r["filter"] and r["filter"].name == "Final filters"]
    [chart] = [c for c in page.context["charts"] if "Final filters" in c["title"]]
    return " ".join(page.content.decode().split()), row, chart


def _pdf(manager, kind, parameters, capture) -> str:
    with capture(execute=True):
        report = report_request(user=manager, kind=kind, parameters=parameters)
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    return " ".join(pdf_text(report).split())


@pytest.mark.parametrize(
    ("today", "page_words", "pdf_words", "line"),
    [
        (dt.date(2025, 5, 1), "5 Jun 2025", "5 Jun 2025", True),
        (dt.date(2025, 7, 25), "due now (forecast for 5 Jun 2025)", "due now (forecast for 5 Jun 2025)", False),
    ],
)
def test_site_page_compliance_and_unit_history_agree_on_when_the_filter_is_due(
    loading_filters, client, time_machine, django_capture_on_commit_callbacks, today, page_words, pdf_words, line
):
    ahu, manager = loading_filters
    time_machine.move_to(dt.datetime.combine(today, dt.time(12), tzinfo=dt.UTC), tick=False)

    html, row, chart = _site_page(client, ahu, manager)
    assert row["forecast"] == page_words
    assert f'data-label="Change forecast">{page_words}</td>' in html
    assert "2025-06-05" not in html  # no ISO date on the page
    assert (DASHED_FORECAST in chart["svg"]) is line

    period = {"start": "2025-01-01", "end": today.isoformat()}
    compliance = _pdf(
        manager, "compliance", {"sites": [ahu.building.site_id], **period}, django_capture_on_commit_callbacks
    )
    assert pdf_words in compliance

    history = _pdf(manager, "unit_history", {"unit": ahu.pk, **period}, django_capture_on_commit_callbacks)
    if line:
        assert "Final pressure drop 250 Pa forecast for 5 Jun 2025" in history
        assert "change 5 Jun 2025" in history  # the chart's forecast mark
    else:
        assert "Change due now: its final pressure drop 250 Pa was forecast for 5 Jun 2025" in history
        assert "change 5 Jun 2025" not in history


def test_the_one_rule_on_its_own():
    """At or over the final value is due now with no date ahead; a forecast day gone by is due now naming it; the
    day itself and days ahead are a forecast to draw; no forecast says nothing."""
    june5 = dt.date(2025, 6, 5)
    ahead = filter_outlook(forecast_on=june5, today=dt.date(2025, 6, 5))
    assert (ahead.due_now, ahead.forecast_ahead, ahead.words()) == (False, june5, "5 Jun 2025")
    gone = filter_outlook(forecast_on=june5, today=dt.date(2025, 6, 6))
    assert (gone.due_now, gone.forecast_ahead, gone.words()) == (True, None, "due now (forecast for 5 Jun 2025)")
    at_final = filter_outlook(forecast_on=dt.date(2025, 9, 1), corrected_dp_pa=251.0, final_dp_pa=250, today=june5)
    assert (at_final.at_final, at_final.due_now, at_final.forecast_ahead) == (True, True, None)
    assert at_final.words().startswith("now: at or over its final pressure drop")
    flagged = filter_outlook(at_final_now=True, today=june5)
    assert flagged.at_final and flagged.due_now
    assert filter_outlook(today=june5).words() == "—"


def test_a_judged_filter_without_a_forecast_says_why():
    """The filter check judged the bank but made no forecast: the table says why, not a bare dash."""
    from reports.compliance import stored_filter_outlook

    june5 = dt.date(2025, 6, 5)
    flat = stored_filter_outlook(derived={"forecast_note": "points: allowed a rising pressure drop"}, today=june5)
    assert flat.words() == "no change date: the pressure drop is not rising"
    few = stored_filter_outlook(derived={"forecast_note": "points: at least two readings"}, today=june5)
    assert few.words() == "no forecast yet: the readings since the change give no trend"
    assert stored_filter_outlook(derived={}, today=june5).words() == "—"
