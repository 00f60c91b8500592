"""The reports page says what each report covers (its sites, unit or work order and its period) and, once made,
its pages and size; the API's ``covers`` says the same words; a property manager sees only reports of the sites
granted to them; the list costs the same number of queries however many reports it shows."""

import datetime as dt
import re

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from reports.models import Report
from reports.selectors import report_file_text
from reports.services import report_request
from tests.frontend import scenario as scenario_module

from .test_records import finished_visit, post_request

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 12, 2, 9, tzinfo=dt.UTC)  # 10:00 on the sites' clock (Europe/Amsterdam, CET)
PERIOD = {"start": "2025-12-01", "end": "2026-11-30"}
PERIOD_WORDS = "1 Dec 2025 – 30 Nov 2026"


@pytest.fixture
def world(time_machine):
    time_machine.move_to(NOW, tick=True)
    return scenario_module.build()


def items(html: str) -> dict[str, str]:
    """{report public id: the text of its list item, tags stripped and spaces collapsed}."""
    out = {}
    for public_id, body in re.findall(r'<li class="card" id="report-([0-9a-f-]+)"(.*?)</li>', html, flags=re.S):
        out[public_id] = " ".join(re.sub(r"<[^>]+>", " ", body).split()).replace("&#x27;", "'")
    return out


def ask(client, capture, **data) -> Report:
    before = set(Report.objects.values_list("pk", flat=True))
    response = post_request(client, capture, data)
    assert response.status_code == 302, response.content[:300]
    [report] = Report.objects.exclude(pk__in=before)
    assert report.status == Report.Status.DONE, report.error
    return report


def test_supervisor_sees_what_each_report_covers_and_the_manager_only_theirs(
    world, client, api_client, django_capture_on_commit_callbacks
):
    """A supervisor asks for an inspection report, a unit history and a two-site compliance report; the list
    names the work order and its day, the unit in its building and site, the sites and each period, with pages
    and size; the API says the same. The manager of Harbour House sees the first two, not the two-site one."""
    finished_visit(world)
    client.force_login(world.supervisor)
    capture = django_capture_on_commit_callbacks
    inspection = ask(client, capture, kind="inspection", work_order=str(world.work_a.public_id))
    history = ask(client, capture, kind="unit_history", unit=world.unit_a.pk, **PERIOD)
    compliance = ask(client, capture, kind="compliance", sites=[world.site_a.pk, world.site_b.pk], **PERIOD)

    listed = items(client.get("/records/").content.decode())
    expected = {
        inspection: "Quarterly service, done 2 Dec 2026 · AHU-01 in North block, Harbour House",
        history: f"AHU-01 in North block, Harbour House · {PERIOD_WORDS}",
        compliance: f"Harbour House and Linden Court · {PERIOD_WORDS}",
    }
    for report, words in expected.items():
        text = listed[str(report.public_id)]
        assert words in text, text
        # Pages and size of the file as stored: "3 pages, 84 kB".
        assert report.page_count >= 1 and report.size_bytes > 1000
        pages = f"{report.page_count} page{'s' if report.page_count != 1 else ''}"
        assert f"{pages}, {round(report.size_bytes / 1000)} kB" in text, text
        assert report_file_text(report=report) in text
        # The API's covers field says the same words.
        api_client.force_authenticate(world.supervisor)
        answer = api_client.get(f"/api/reports/{report.public_id}/").json()
        assert answer["covers"].startswith(f"{words} · ") and answer["covers"] in text
    # No stored key or id shows instead of a name.
    assert not re.search(r"\b(work_order|unit_history|site_ids|None)\b", " ".join(listed.values()))

    # The manager of Harbour House: the two reports of that site, not the one that also covers Linden Court.
    client.force_login(world.manager_a)
    theirs = items(client.get("/records/").content.decode())
    assert set(theirs) == {str(inspection.public_id), str(history.public_id)}
    assert expected[history] in theirs[str(history.public_id)]


def test_a_queued_report_shows_what_it_covers_and_no_size_yet(world, client):
    """Before it is made a report already says what it covers; pages and size come when it is done."""
    report = report_request(
        user=world.supervisor, kind="compliance", parameters={"sites": [world.site_b.pk], **PERIOD}
    )  # not rendered: its task runs after commit, which this test never reaches
    client.force_login(world.supervisor)
    text = items(client.get("/records/").content.decode())[str(report.public_id)]
    assert f"Linden Court · {PERIOD_WORDS}" in text and "Queued" in text
    assert not re.search(r"\bpages?, \d", text)


def test_the_list_costs_the_same_queries_for_more_reports(world, client, django_capture_on_commit_callbacks):
    """Twice as many reports of every kind on the list: not one query more (names are read in bulk)."""
    finished_visit(world)

    def four():
        for kind, parameters in (
            ("inspection", {"work_order": str(world.work_a.public_id)}),
            ("unit_history", {"unit": world.unit_b.pk, **PERIOD}),
            ("compliance", {"sites": [world.site_a.pk], **PERIOD}),
            ("labels", {"units": [world.unit_a.pk, world.unit_b.pk]}),
        ):
            with django_capture_on_commit_callbacks(execute=True):
                report_request(user=world.supervisor, kind=kind, parameters=parameters)

    client.force_login(world.supervisor)
    four()
    client.get("/records/")  # warm the session and caches

    def queries() -> tuple[int, str]:
        with CaptureQueriesContext(connection) as ctx:
            html = client.get("/records/").content.decode()
        return len(ctx.captured_queries), html

    few, _ = queries()
    four()
    many, html = queries()
    assert many == few, f"{few} queries for 4 reports, {many} for 8"
    assert "Labels of 2 units · Harbour House and Linden Court" in html
