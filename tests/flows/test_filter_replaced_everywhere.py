"""After a filter change every view shows the new filters (issue "One truth from reading to record", finding 1).

The final filters read 300 Pa at design airflow (clean 90 Pa, final 250 Pa: (300 − 90)/(250 − 90) = 131 % of the
span, fail, change now). A corrective work order replaces them and reads 95 Pa just after the change, at design
airflow. The site page's filter table, the dashboard's count of filters to change and the compliance PDF then
show the new filters — ok, 95 Pa, (95 − 90)/160 = 3 % — read from the latest point of the bank's one series
(inspections.selectors.filter_series), not from the last filter check of the old set.
"""

import datetime as dt

import pytest
from django.urls import reverse

from frontend.selectors import site_summaries
from reports.models import Report
from tests.factories.accounts import make_person
from tests.factories.inspections import SYNC_URL, component, make_visit, r, sync_filter_visit, sync_form
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
DAY0 = dt.datetime(2026, 11, 2, 9, 30, tzinfo=dt.UTC)


def _final_row(rows):
    [row] = [r for r in rows if r["filter"] and r["filter"].name == "Final filters"]
    return row


def _compliance_pdf(api_client, manager, site_id, django_capture_on_commit_callbacks) -> str:
    api_client.force_authenticate(manager)
    with django_capture_on_commit_callbacks(execute=True):
        res = api_client.post(
            "/api/reports/",
            {"kind": "compliance", "parameters": {"sites": [site_id], "start": "2026-11-01", "end": "2026-12-31"}},
            format="json",
        )
    assert res.status_code == 202, res.json()
    report = Report.objects.get(public_id=res.json()["public_id"])
    assert report.status == Report.Status.DONE, report.error
    return " ".join(pdf_text(report).split())


def test_replaced_filters_show_as_new_on_the_site_page_the_dashboard_and_the_compliance_pdf(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    """Fail and change now before the change; ok at 95 Pa and nothing to change after it, on every view."""
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    site_id = ahu.building.site_id
    time_machine.move_to(DAY0 + dt.timedelta(hours=1), tick=False)
    sync_filter_visit(
        api_client, ahu=ahu, technician=tech, finished_at=DAY0, hours=1_000, airflow_ls=3000, final_dp=300
    )
    supervisor = make_person(organisation=ahu.building.site.organisation, role="supervisor")
    client.force_login(supervisor)
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": site_id}))
    before = _final_row(page.context["f"].filters)
    assert before["verdict"] == "fail"
    assert before["forecast"].startswith("now")

    # The corrective work: filters replaced, 95 Pa just after the change, at design airflow.
    changed = DAY0 + dt.timedelta(days=30)
    wo, _ = make_visit(tasks=["filter_replace"], ahu=ahu, organisation=ahu.building.site.organisation, technician=tech)
    readings = [r("visit.run_hours", 1_300), r("visit.supply_airflow", 3000)]
    for name, after in (("Pre-filters", 52), ("Final filters", 95)):
        bank = component(ahu, name)
        readings += [r("filter_replace.replaced", "ok", bank), r("filter_replace.dp_after", after, bank)]
    time_machine.move_to(changed + dt.timedelta(hours=1), tick=False)
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC_URL, {"forms": [sync_form(wo, readings, finished_at=changed)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in ("stored", "flagged"), result

    client.force_login(supervisor)  # a new day: the earlier session has run out
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": site_id}))
    assert page.status_code == 200
    row = _final_row(page.context["f"].filters)
    assert row["verdict"] == "ok"
    assert row["corrected_dp"].startswith("95")
    assert row["loading"] == "3 %"
    assert row["at"] == changed
    html = " ".join(page.content.decode().split())
    assert "at or over its final pressure drop" not in html
    assert "new filters" in html

    _, rows = site_summaries(user=supervisor)
    [summary] = [s for s in rows if s["site"].pk == site_id]
    assert summary["filters"]["fail"] == 0
    assert summary["filters"]["watch"] == 0

    text = _compliance_pdf(api_client, supervisor, site_id, django_capture_on_commit_callbacks)
    assert "0 / 0 filter banks to change / to watch" in text
    assert "FAIL" not in text
    assert "new filters" in text
