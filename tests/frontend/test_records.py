"""PDF records from the pages: asked for by a POST form, listed with their state, downloaded; tenancy holds."""

import datetime as dt

import pytest
from django.urls import reverse
from django.utils import timezone

from inspections.services import inspection_sync
from reports.documents.common import percent
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from tests.factories.inspections import r, sync_form

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]  # dates made today are the clock's
REQUEST = "/records/request/"


def finished_visit(scenario, *, dp=150.0):
    """work_a filled, signed and synced by its technician; its work order is completed."""
    final = scenario.unit_a.components.get(name="Final filters")
    readings = [
        r("visit.run_hours", 1200),
        r("filter_check.dp", dp, final),
        r("filter_check.seated", "ok", final),
        r("filter_check.media", "loaded", final),
    ]
    form = sync_form(scenario.work_a, readings, finished_at=timezone.now() - dt.timedelta(hours=1))
    [result] = inspection_sync(user=scenario.technician, forms=[form])
    assert result["status"] in {"stored", "flagged"}, result
    scenario.work_a.refresh_from_db()
    return result


def post_request(client, capture, data):
    with capture(execute=True):  # the render task runs after commit (in-process without a broker)
        return client.post(REQUEST, data)


def download(client, report):
    response = client.get(reverse("reports:download", kwargs={"public_id": report.public_id}))
    body = b"".join(response.streaming_content) if response.streaming else response.content
    return response, body


def test_manager_requests_a_compliance_report_and_downloads_the_pdf(
    scenario, login, django_capture_on_commit_callbacks
):
    """From the site page's form: the report is made, listed as done with a link, and the link gives a PDF."""
    client = login(scenario.manager_a)
    page = client.get(f"/dashboard/site/{scenario.site_a.pk}/").content.decode()
    assert 'name="kind" value="compliance"' in page and "csrfmiddlewaretoken" in page
    today = timezone.localdate()
    response = post_request(
        client,
        django_capture_on_commit_callbacks,
        {
            "kind": "compliance",
            "sites": [scenario.site_a.pk],
            "start": (today - dt.timedelta(days=365)).isoformat(),
            "end": today.isoformat(),
        },
    )
    assert response.status_code == 302 and response["Location"].startswith("/records/")
    report = Report.objects.get(requested_by=scenario.manager_a)
    assert report.kind == "compliance" and report.status == "done", report.error
    assert report.site_ids == [scenario.site_a.pk]
    listing = client.get("/records/").content.decode()
    assert "Site compliance report" in listing and "Done" in listing
    assert reverse("reports:download", kwargs={"public_id": report.public_id}) in listing
    response, body = download(client, report)
    assert response.status_code == 200 and response["Content-Type"] == "application/pdf"
    assert body.startswith(b"%PDF")


def test_manager_cannot_request_or_download_another_sites_report(scenario, login, django_capture_on_commit_callbacks):
    """Asking for Linden Court is a 404 and stores nothing; a supervisor's Linden Court PDF is a 404 too."""
    client = login(scenario.manager_a)
    response = post_request(
        client, django_capture_on_commit_callbacks, {"kind": "compliance", "sites": [scenario.site_b.pk]}
    )
    assert response.status_code == 404
    response = post_request(client, django_capture_on_commit_callbacks, {"kind": "labels", "site": scenario.site_b.pk})
    assert response.status_code == 404
    response = post_request(
        client, django_capture_on_commit_callbacks, {"kind": "unit_history", "unit": scenario.unit_b.pk}
    )
    assert response.status_code == 404
    assert not Report.objects.filter(requested_by=scenario.manager_a).exists()
    with django_capture_on_commit_callbacks(execute=True):
        theirs = report_request(user=scenario.supervisor, kind="labels", parameters={"units": [scenario.unit_b.pk]})
    theirs.refresh_from_db()
    assert theirs.status == "done"
    response, _ = download(client, theirs)
    assert response.status_code == 404
    assert str(theirs.public_id) not in client.get("/records/").content.decode()


def test_label_sheet_for_a_site_on_letter_paper(scenario, login, django_capture_on_commit_callbacks):
    """The site page's label form covers every unit of the site, on the paper chosen."""
    client = login(scenario.supervisor)
    post_request(
        client,
        django_capture_on_commit_callbacks,
        {"kind": "labels", "site": scenario.site_a.pk, "layout": "letter-3x10"},
    )
    report = Report.objects.get(kind="labels")
    assert report.parameters["units"] == [scenario.unit_a.pk] and report.parameters["layout"] == "letter-3x10"
    response, body = download(client, report)
    assert response.status_code == 200 and body.startswith(b"%PDF")


def test_a_bad_layout_is_named_and_nothing_is_requested(scenario, login, django_capture_on_commit_callbacks):
    client = login(scenario.supervisor)
    response = post_request(
        client,
        django_capture_on_commit_callbacks,
        {
            "kind": "labels",
            "site": scenario.site_a.pk,
            "layout": "a3-giant",
            "next": f"/dashboard/site/{scenario.site_a.pk}/",
        },
    )
    # The site page again (400), the message at the Paper field.
    assert response.status_code == 400
    assert "Paper: “a3-giant” is not offered" in response.content.decode()
    assert not Report.objects.exists()


def test_unit_history_from_the_unit_page(scenario, login, django_capture_on_commit_callbacks):
    """The unit page offers the unit history for the last 12 months and it renders to a PDF."""
    client = login(scenario.manager_a)
    page = client.get(f"/u/{scenario.unit_a.label_code}/").content.decode()
    assert 'value="unit_history"' in page
    assert (timezone.localdate() - dt.timedelta(days=365)).isoformat() in page
    post_request(client, django_capture_on_commit_callbacks, {"kind": "unit_history", "unit": scenario.unit_a.pk})
    report = Report.objects.get(kind="unit_history")
    assert report.status == "done", report.error
    assert download(client, report)[1].startswith(b"%PDF")


def test_inspection_report_is_offered_once_the_work_is_completed(scenario, login, django_capture_on_commit_callbacks):
    client = login(scenario.supervisor)
    url = f"/w/{scenario.work_a.public_id}/"
    assert 'value="inspection"' not in client.get(url).content.decode()
    finished_visit(scenario)
    assert scenario.work_a.state == WorkOrder.State.COMPLETED
    assert 'value="inspection"' in client.get(url).content.decode()
    post_request(
        client, django_capture_on_commit_callbacks, {"kind": "inspection", "work_order": str(scenario.work_a.public_id)}
    )
    report = Report.objects.get(kind="inspection")
    assert report.status == "done", report.error
    assert download(client, report)[1].startswith(b"%PDF")


def test_site_page_and_dashboard_show_the_compliance_figures_of_the_pdf(scenario, login):
    """One late and one on-time completion: the pages show the share reports.compliance computes (50 %)."""
    from reports.compliance import compliance_figures
    from tests.frontend.scenario import make_work

    today = timezone.localdate()
    now = timezone.now()
    for days_ago, late in ((40, False), (80, True)):
        wo = make_work(ahu=scenario.unit_a, title="Past service", due=today - dt.timedelta(days=days_ago))
        done = now - dt.timedelta(days=days_ago - (30 if late else 0))
        WorkOrder.objects.filter(pk=wo.pk).update(state=WorkOrder.State.COMPLETED, completed_at=done)
    figures = compliance_figures(
        site_ids=[scenario.site_a.pk], start=today - dt.timedelta(days=365), end=today, as_of=now
    )
    expected = percent(figures.total.on_time_share)
    assert expected == "50 %"
    client = login(scenario.manager_a)
    site = client.get(f"/dashboard/site/{scenario.site_a.pk}/").content.decode()
    assert f'data-kpi="on-time">{expected}<' in site
    dashboard = client.get("/dashboard/").content.decode()
    assert f'data-kpi="on-time">{expected}<' in dashboard
    # The site's own row on the dashboard shows its share too (per-site figures from the same call).
    assert f'data-kpi="site-on-time">{expected}<' in dashboard


def test_the_reports_page_asks_for_the_compliance_report_of_every_site_one_sees(
    scenario, login, django_capture_on_commit_callbacks
):
    """A supervisor with no report yet asks on the Reports page itself: every site of theirs on one report. The
    property manager's covers only her granted site; a technician's page offers no such form."""
    client = login(scenario.supervisor)
    page = client.get("/records/").content.decode()
    form = page.split('aria-labelledby="compliance-form-records"')[1].split("</form>")[0]
    assert 'name="kind" value="compliance"' in form and 'name="sites"' not in form
    response = post_request(client, django_capture_on_commit_callbacks, {"kind": "compliance", "next": "/records/"})
    assert response.status_code == 302
    report = Report.objects.get(requested_by=scenario.supervisor, kind="compliance")
    assert report.status == "done", report.error
    assert sorted(report.site_ids) == sorted([scenario.site_a.pk, scenario.site_b.pk])

    client = login(scenario.manager_a)
    assert 'aria-labelledby="compliance-form-records"' in client.get("/records/").content.decode()
    post_request(client, django_capture_on_commit_callbacks, {"kind": "compliance", "next": "/records/"})
    assert Report.objects.get(requested_by=scenario.manager_a, kind="compliance").site_ids == [scenario.site_a.pk]

    client = login(scenario.technician)
    assert "compliance-form-records" not in client.get("/records/").content.decode()
