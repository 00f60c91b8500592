"""Asking for a report from a page's form, as a new user does it: a refused request stores nothing and shows
the page again with what was typed kept and the message at its field in the words of the form (From, To,
Unit, Archival PDF/A), naming the value and what is allowed; never a 500, never a whole "Page not found"
page. The reports list tells near-duplicates apart by their units, paper and PDF/A."""

import datetime as dt
import re

import pytest

from reports.models import Report
from reports.services import PDFA_KINDS, report_request
from tests.frontend import scenario as scenario_module

from .test_records import REQUEST, finished_visit

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 12, 2, 9, tzinfo=dt.UTC)  # 10:00 on the sites' clock (Europe/Amsterdam)


@pytest.fixture
def world(time_machine):
    time_machine.move_to(NOW, tick=True)
    return scenario_module.build()


def text_of(html: str) -> str:
    return " ".join(re.sub(r"<[^>]+>", " ", html).split()).replace("&#x27;", "'").replace("&quot;", '"')


def refused(client, data: dict, page: str, status: int = 400) -> str:
    """Post a request from ``page``; it must store nothing and answer with the page again (400 for a bad input,
    404 for a record the person may not see, as the API), whose HTML is returned."""
    before = Report.objects.count()
    response = client.post(REQUEST, {**data, "next": page})
    assert response.status_code == status, response.content[:300]
    assert Report.objects.count() == before
    html = response.content.decode()
    assert "The report was not requested" in html
    return html


def field(html: str, name: str) -> str:
    """The <input>/<select> tag of the field ``name`` (the first on the page)."""
    match = re.search(rf'<(?:input|select)[^>]*name="{name}"[^>]*>', html)
    assert match, f"no field {name}"
    return match.group(0)


def described_error(html: str, tag: str) -> str:
    """The error text the field points at with aria-describedby (it must be marked invalid)."""
    assert 'aria-invalid="true"' in tag, tag
    error_id = re.search(r'aria-describedby="([^"]+)"', tag).group(1)
    match = re.search(rf'<p class="errorlist" id="{re.escape(error_id)}"[^>]*>(.*?)</p>', html, flags=re.S)
    assert match, f"no message {error_id}"
    return text_of(match.group(1))


def test_period_to_before_from_on_the_site_page_is_said_at_to_with_the_typed_days_kept(world, client):
    client.force_login(world.manager_a)
    page = f"/dashboard/site/{world.site_a.pk}/"
    html = refused(
        client, {"kind": "compliance", "sites": world.site_a.pk, "start": "2026-06-01", "end": "2026-01-01"}, page
    )
    end = field(html, "end")
    assert described_error(html, end) == "To: 1 Jan 2026 is before From: 1 Jun 2026"
    assert 'value="2026-01-01"' in end and 'value="2026-06-01"' in field(html, "start")
    assert "aria-invalid" not in field(html, "start")
    assert "end=" not in text_of(html) and "start=" not in text_of(html)
    # Shown once: the page opened again is the fresh form.
    again = client.get(page).content.decode()
    assert "aria-invalid" not in field(again, "end") and 'value="2026-01-01"' not in field(again, "end")


@pytest.mark.parametrize(
    ("name", "typed", "message"),
    [
        # The report window: from 2000 to ten years ahead of today (accounts.inputs.date_window).
        ("start", "0001-01-01", "From: 1 Jan 0001 is outside the days allowed, 1 Jan 2000 to "),
        ("end", "9999-12-31", "To: 31 Dec 9999 is outside the days allowed, 1 Jan 2000 to "),
        (
            "start",
            "2026-13-45",
            "From: “2026-13-45” is not a date; allowed: a date as YYYY-MM-DD or DD.MM.YYYY "
            "(31 January 2026: 2026-01-31 or 31.01.2026)",
        ),
        # Day or month first? Never guessed: the forms that are read are named, with an example.
        ("end", "30/11/2026", "To: “30/11/2026” is not a date (with slashes it could be day or month first); "),
        ("start", "31.02.2026", "From: “31.02.2026” is not a date; allowed: a date as YYYY-MM-DD or DD.MM.YYYY"),
    ],
)
def test_a_day_outside_the_window_on_the_unit_page(world, client, name, typed, message):
    client.force_login(world.supervisor)
    page = f"/registry/unit/{world.unit_a.pk}/"
    data = {"kind": "unit_history", "unit": world.unit_a.pk, "start": "2026-01-01", "end": "2026-11-30"}
    html = refused(client, {**data, name: typed}, page)
    tag = field(html, name)
    assert described_error(html, tag).startswith(message)
    assert f'value="{typed}"' in tag


def test_a_period_typed_day_first_with_dots_is_requested_as_those_days(world, client):
    """Tryout (issue 19): 01.06.2026 to 30.11.2026, as typed in much of Europe, is 1 June to 30 November 2026."""
    client.force_login(world.supervisor)
    data = {"kind": "unit_history", "unit": world.unit_a.pk, "start": "01.06.2026", "end": "30.11.2026"}
    response = client.post(REQUEST, {**data, "next": f"/registry/unit/{world.unit_a.pk}/"})
    assert response.status_code in (200, 302), response.content[:300]
    report = Report.objects.get()
    assert (report.parameters["start"], report.parameters["end"]) == ("2026-06-01", "2026-11-30")


def test_a_period_beginning_after_today_is_refused_naming_today(world, client):
    """The sites' today is 2 Dec 2026; a report of 2030 would claim figures for days not yet lived. (A period
    still running, this year to 31 Dec, is judged as of today: tests/reports/test_compliance.py.)"""
    client.force_login(world.manager_a)
    page = f"/dashboard/site/{world.site_a.pk}/"
    html = refused(
        client, {"kind": "compliance", "sites": world.site_a.pk, "start": "2030-01-01", "end": "2030-06-30"}, page
    )
    assert described_error(html, field(html, "start")) == (
        "From: 1 Jan 2030 is after today (2 Dec 2026); a report covers days that have begun"
    )
    assert 'value="2030-06-30"' in field(html, "end")


def test_a_site_or_unit_the_person_may_not_see_is_said_on_the_form_and_the_api_keeps_its_404(world, client, api_client):
    client.force_login(world.manager_a)
    html = refused(client, {"kind": "compliance", "sites": world.site_b.pk}, "/dashboard/", 404)
    assert f"Sites: no such site among those you may see (id {world.site_b.pk})" in text_of(html)
    assert "Page not found" not in html
    html = refused(client, {"kind": "labels", "site": world.site_b.pk}, f"/dashboard/site/{world.site_a.pk}/", 404)
    assert f"Site: no such site among those you may see (id {world.site_b.pk})" in text_of(html)

    client.force_login(world.supervisor)
    # A unit id nobody has: the same answer as another organisation's.
    html = refused(client, {"kind": "unit_history", "unit": 987654321}, f"/registry/unit/{world.unit_a.pk}/", 404)
    button = re.search(r'<button type="submit"[^>]*>Request unit history', html).group(0)
    assert "Unit: no such unit among those you may see (id 987654321)" in text_of(html)
    assert "aria-describedby" in button

    api_client.force_authenticate(world.manager_a)
    answer = api_client.post(
        "/api/reports/", {"kind": "compliance", "parameters": {"sites": [world.site_b.pk]}}, format="json"
    )
    assert answer.status_code == 404


def test_control_characters_are_refused_and_shown_spelled_out(world, client):
    client.force_login(world.supervisor)
    page = f"/registry/unit/{world.unit_a.pk}/"
    html = refused(client, {"kind": "unit_history", "unit": "1\x1b[31m", "start": "2026-01-01"}, page)
    assert "Unit: “1\\x1b[31m” is not a unit id; allowed: whole numbers" in text_of(html)
    assert "\x1b" not in html
    html = refused(client, {"kind": "unit_history", "unit": world.unit_a.pk, "start": "2026-01-01\x00"}, page)
    assert "\x00" not in html
    assert described_error(html, field(html, "start")).startswith("From: “2026-01-01\\x00” is not a date")


def test_pdfa_junk_is_refused_at_the_checkbox(world, client):
    client.force_login(world.manager_a)
    page = f"/dashboard/site/{world.site_a.pk}/"
    data = {"kind": "compliance", "sites": world.site_a.pk, "start": "2026-01-01", "end": "2026-11-30"}
    html = refused(client, {**data, "pdfa": "yes\x00"}, page)
    assert described_error(html, field(html, "pdfa")) == (
        "Archival PDF/A: “yes\\x00” is not on or off; tick the box or leave it"
    )
    assert 'value="2026-11-30"' in field(html, "end")


def test_archival_pdfa_is_offered_on_the_work_order_and_unit_pages(world, client, django_capture_on_commit_callbacks):
    finished_visit(world)
    client.force_login(world.supervisor)
    checklist = client.get(f"/w/{world.work_a.public_id}/").content.decode()
    assert 'name="pdfa"' in checklist and "Archival PDF/A" in checklist
    before = Report.objects.count()
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(REQUEST, {"kind": "inspection", "work_order": str(world.work_a.public_id), "pdfa": "1"})
    assert response.status_code == 302
    assert Report.objects.count() == before + 1 and Report.objects.latest("id").pdfa
    unit_page = client.get(f"/registry/unit/{world.unit_a.pk}/").content.decode()
    history_form = unit_page[unit_page.index('name="kind" value="unit_history"') :]
    history_form = history_form[: history_form.index("</form>")]
    # Offered where reports.services offers it for unit histories.
    assert ('name="pdfa"' in history_form) == ("unit_history" in PDFA_KINDS)


def test_the_list_tells_si_and_us_reports_apart(world, client, django_capture_on_commit_callbacks):
    """Two inspection reports of the same work order: one in SI units on A4, one in US units on Letter as
    archival PDF/A (paper from reports.rendering.paper_for)."""
    finished_visit(world)
    with django_capture_on_commit_callbacks(execute=True):
        si = report_request(
            user=world.supervisor,
            kind="inspection",
            parameters={"work_order": str(world.work_a.public_id), "unit_system": "si"},
        )
        us = report_request(
            user=world.supervisor,
            kind="inspection",
            parameters={"work_order": str(world.work_a.public_id), "unit_system": "us"},
            pdfa=True,
        )
    client.force_login(world.supervisor)
    html = client.get("/records/").content.decode()
    listed = {
        pid: text_of(body)
        for pid, body in re.findall(r'<li class="card" id="report-([0-9a-f-]+)"(.*?)</li>', html, flags=re.S)
    }
    assert "SI units, A4" in listed[str(si.public_id)] and "PDF/A" not in listed[str(si.public_id)]
    assert "US units, Letter, archival PDF/A" in listed[str(us.public_id)]
