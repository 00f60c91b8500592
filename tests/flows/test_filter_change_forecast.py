"""A filter change on a visit: the forecast starts anew with the filters fitted, the reading before it is the evidence.

Scenario from the new-user tryout (the September visit of the demo's AHU-01, Wharf House): a unit's final filters
read 130, 150, 170, 190 Pa a month apart; the next visit reads the loaded bank at 234 Pa and replaces it, the
new filters reading 100 Pa after the change; the two visits after read 110 and 120 Pa.

- The changing visit judges 234 Pa as the removed filters' state (90 % of their span, the evidence for the
  change), with no change date for filters that are gone; the reading after the change is judged against the
  rated clean value and says in plain words that one reading of the new filters gives no forecast yet.
- The next visit has two readings of the new filters: still no date, said in words.
- The visit after has three: the date comes from the new filters' readings only.
- The work order page and the inspection report PDF of the changing visit say the same.
"""

import datetime as dt
import re

import pytest
from django.test import Client

from inspections.models import Evaluation, Inspection
from reports.models import Report
from reports.services import report_request
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit
from tests.flows.test_filter_change_now import DAY0, _visit  # the same visit through the sync API
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
# Final filters (tests.factories.inventory.FILTER_SPECS): clean 90 Pa, final 250 Pa, design airflow 3.0 m³/s;
# every visit at design airflow (3000 L/s), so no correction. (days after DAY0, run-hours, Δp Pa, Δp after)
BEFORE = [(0, 1_000, 130, None), (30, 1_300, 150, None), (60, 1_600, 170, None), (90, 1_900, 190, None)]
CHANGE = (120, 2_200, 234, 100)
AFTER = [(150, 2_500, 110, None), (180, 2_800, 120, None)]
ONE_READING = "no change forecast yet: 1 reading of the filters now fitted, a forecast needs at least 3"
TWO_READINGS = "no change forecast yet: 2 readings of the filters now fitted, a forecast needs at least 3"
DATED = re.compile(r"change forecast \d")  # a change date in the words
BEFORE_CHANGE = "the reading before the change: these filters were replaced on this visit"


def _stored(ahu, days, check):
    final = ahu.components.get(name="Final filters")
    inspection = Inspection.objects.get(ahu=ahu, finished_at=DAY0 + dt.timedelta(days=days))
    return Evaluation.objects.get(inspection=inspection, component=final, check_name=check)


def _flat(text: str) -> str:
    return " ".join(text.split())


def test_a_change_visit_forecasts_nothing_from_the_removed_filters_and_the_next_ones_use_only_the_new(
    api_client, time_machine, django_capture_on_commit_callbacks
):
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    for visit in BEFORE:
        _visit(api_client, time_machine, ahu, tech, *visit)
    result = _visit(api_client, time_machine, ahu, tech, *CHANGE)

    # The reading before the change: the removed filters' state, (234 − 90) / (250 − 90) = 90 % of their span
    # (worked by hand), and no change date for them.
    before = _stored(ahu, CHANGE[0], "filter_loading")
    assert before.derived["loading_pct"] == 90.0
    assert before.derived["replaced_on_visit"] is True
    assert "forecast_change_date" not in before.derived and "points_used" not in before.derived
    assert BEFORE_CHANGE in before.reason and not DATED.search(before.reason)
    # The reading after the change: against the rated clean value (100 / 90 = 111 %, within ±20 %: ok,
    # common practice), and one reading of the new filters: no forecast yet, said in words.
    after = _stored(ahu, CHANGE[0], "filter_after_change")
    assert after.verdict == "ok"
    assert after.derived["fraction_of_clean_pct"] == 111.1
    assert ONE_READING in after.reason
    # The server's answer to the phone says the same.
    reasons = " ".join(e["reason"] for e in result["evaluation"] if "Final filters" in e["reason"])
    assert BEFORE_CHANGE in reasons and ONE_READING in reasons and not DATED.search(reasons)

    _visit(api_client, time_machine, ahu, tech, *AFTER[0])
    second = _stored(ahu, AFTER[0][0], "filter_loading")
    assert TWO_READINGS in second.reason
    assert "forecast_change_date" not in second.derived

    _visit(api_client, time_machine, ahu, tech, *AFTER[1])
    third = _stored(ahu, AFTER[1][0], "filter_loading")
    # Only the new filters' readings: 100, 110, 120 Pa at 2200, 2500, 2800 h, a line of 1/30 Pa per run-hour
    # reaching 250 Pa at 2800 + 130 × 30 = 6700 h; the readings run 10 h a day, so 390 days after the last
    # visit (day 180): day 570, 30 July 2026 (worked by hand). The old filters' steeper line would give far sooner.
    assert third.derived["points_used"] == 3
    assert third.derived["forecast_run_hours"] == 6700
    assert third.derived["forecast_change_date"] == "2026-07-30"
    assert "change forecast 30 July 2026" in third.reason

    # The changing visit's work order page and inspection report say why the filters were changed.
    wo = Inspection.objects.get(ahu=ahu, finished_at=DAY0 + dt.timedelta(days=CHANGE[0])).work_order
    supervisor = make_person(organisation=ahu.building.site.organisation, role="supervisor")
    browser = Client()
    browser.force_login(supervisor)
    html = _flat(re.sub(r"<[^>]+>", " ", browser.get(f"/w/{wo.public_id}/").content.decode()))
    assert "234 Pa" in html and BEFORE_CHANGE in html and ONE_READING in html
    assert not DATED.search(html)
    with django_capture_on_commit_callbacks(execute=True):
        report = report_request(user=supervisor, kind="inspection", parameters={"work_order": str(wo.public_id)})
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    text = _flat(pdf_text(report))
    assert "234 Pa" in text and BEFORE_CHANGE in text and ONE_READING in text
    assert not DATED.search(text)
