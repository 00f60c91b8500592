"""The property manager's findings, read-only: her sites' findings with their reading and limit (in her units),
state and corrective progress; one finding with its photos and history; a unit's page with the unit history to ask
for. Another site's, another organisation's and a technician's view answer 404; writes are refused.

Values: the factory's final filters have a final pressure drop of 250 Pa (tests/factories/inventory.py); 430 Pa is
1.73 in. w.c. and 250 Pa 1.00 in. w.c. (1 in. w.c. = 249.09 Pa, NIST SP 811 conversion factors).
"""

import re

import pytest

from reports.models import Report

from .findings_world import NOW, build

pytestmark = pytest.mark.django_db


@pytest.fixture
def w(time_machine):
    world = build(time_machine)
    time_machine.move_to(NOW, tick=False)
    return world


def text_of(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


def get(client, user, url):
    client.force_login(user)
    return client.get(url)


def test_findings_list_shows_her_sites_findings_with_reading_limit_dates_and_progress(w, client):
    """Her site's finding: unit with building, part, problem in words, severity, first and last seen as the app
    writes dates, the reading against its limit, open, and the corrective work planned for its day."""
    res = get(client, w.s.manager_a, "/site-findings/")
    assert res.status_code == 200
    html = res.content.decode()
    assert f'data-finding="{w.finding_a.pk}"' in html
    assert f'data-finding="{w.finding_b.pk}"' not in html  # Linden Court is not hers
    assert f'data-finding="{w.finding_other_org.pk}"' not in html
    row = text_of(html.split(f'data-finding="{w.finding_a.pk}"')[1].split("</tr>")[0])
    assert "AHU-01 (North block)" in row and "Harbour House" in row
    assert "Final filters: Filter loaded" in row
    assert "High" in row
    assert "18 Nov 2026" in row and "1 Dec 2026" in row and "2 visits" in row
    assert "430 Pa" in row and "final 250 Pa" in row
    assert "Open" in row
    assert "Planned for 9 Dec 2026" in row


def test_progress_reads_awaiting_approval_before_the_supervisor_approves(w, client):
    """Corrective work not yet approved reads 'Awaiting approval' (WorkOrder.state_words), on the list and the
    finding's page."""
    wo = w.finding_a.corrective_work_order
    wo.approval = "pending"
    wo.save(update_fields=["approval"])
    html = get(client, w.s.manager_a, "/site-findings/").content.decode()
    assert "Awaiting approval" in text_of(html.split(f'data-finding="{w.finding_a.pk}"')[1].split("</tr>")[0])
    assert "Awaiting approval" in text_of(
        get(client, w.s.manager_a, f"/site-findings/{w.finding_a.pk}/").content.decode()
    )


def test_us_manager_reads_the_reading_and_limit_in_us_units(w, client):
    """A manager who works in US units reads in. w.c., never Pa."""
    html = get(client, w.manager_us, "/site-findings/").content.decode()
    row = text_of(html.split(f'data-finding="{w.finding_a.pk}"')[1].split("</tr>")[0])
    assert "1.73 in. w.c." in row and "final 1.00 in. w.c." in row
    assert " Pa" not in row and "L/s" not in row and "cfm" in row  # the airflow it was read at, too
    page = text_of(get(client, w.manager_us, f"/site-findings/{w.finding_a.pk}/").content.decode())
    assert "1.73 in. w.c." in page and " Pa " not in page


def test_filters_by_state_site_and_severity_and_name_a_bad_value_at_its_field(w, client):
    """Closed findings are a choice; a site or severity that is not offered is refused at its field (400), naming
    the value and what is allowed, and no list is shown."""
    client.force_login(w.s.manager_a)
    assert f'data-finding="{w.finding_a.pk}"' not in client.get("/site-findings/?state=closed").content.decode()
    assert f'data-finding="{w.finding_a.pk}"' in client.get(f"/site-findings/?site={w.s.site_a.pk}").content.decode()
    assert f'data-finding="{w.finding_a.pk}"' not in client.get("/site-findings/?severity=low").content.decode()
    for query, field, words in (
        (f"site={w.s.site_b.pk}", "site", f"Site: '{w.s.site_b.pk}' is not one of the sites you may see"),
        ("site=abc", "site", "Site: 'abc' is not one of the sites you may see; choose one of the list."),
        ("site=999999", "site", "Site: '999999' is not one of the sites you may see; choose one of the list."),
        ("severity=dreadful", "severity", "Severity: 'dreadful' is not offered; allowed: any, low, medium, high"),
        ("state=maybe", "state", "State: 'maybe' is not offered; allowed: Open, Closed"),
    ):
        res = client.get(f"/site-findings/?{query}")
        assert res.status_code == 400, query
        html = res.content.decode()
        assert f'id="ff-{field}-error"' in html and words in text_of(html).replace("&#x27;", "'"), query
        assert "data-manager-findings" not in html


def test_an_unseen_site_is_refused_in_the_faults_pages_own_words(w, client):
    """Her findings and her faults answer a site she may not see with the same 400 and the same sentence
    (frontend.views.automation_faults.site_choice): she never reads two rules for one filter."""
    client.force_login(w.s.manager_a)
    for query in (f"site={w.s.site_b.pk}", "site=abc", "site=999999"):
        findings = client.get(f"/site-findings/?{query}")
        faults = client.get(f"/faults/?{query}")
        assert (findings.status_code, faults.status_code) == (400, 400), query
        said = [
            re.search(
                r"Site: '[^']*' is not one of the sites you may see; choose one of the list\.",
                text_of(r.content.decode()).replace("&#x27;", "'"),
            )
            for r in (findings, faults)
        ]
        assert all(said) and said[0].group(0) == said[1].group(0), query


def test_finding_page_shows_photos_history_corrective_work_and_record_form(w, client):
    """The finding's page: the photo of each visit through the photo route, both visits that saw it with their
    readings, the corrective work's progress, and the inspection record to ask for; no write button."""
    res = get(client, w.s.manager_a, f"/site-findings/{w.finding_a.pk}/")
    assert res.status_code == 200
    html = res.content.decode()
    assert f"/api/inspections/photos/{w.photo_a.client_uuid}/thumbnail/" in html
    assert html.count("data-observation") == 2
    page = text_of(html)
    assert "400 Pa" in page and "430 Pa" in page
    assert "Planned for 9 Dec 2026" in page
    assert 'name="kind" value="inspection"' in html
    assert "Approve" not in page and "Reject" not in page and "Assign" not in page
    photo = client.get(f"/api/inspections/photos/{w.photo_a.client_uuid}/thumbnail/")
    assert photo.status_code == 200 and photo["Content-Type"] == "image/jpeg"
    corrective = f"/w/{w.finding_a.corrective_work_order.public_id}/"
    assert corrective in html and client.get(corrective).status_code == 200


def test_another_sites_or_organisations_finding_and_photo_are_not_found(w, client):
    """Linden Court's finding and photo, and another organisation's, answer 404 to her, as an unknown one does."""
    client.force_login(w.s.manager_a)
    for pk in (w.finding_b.pk, w.finding_other_org.pk, 999999):
        assert client.get(f"/site-findings/{pk}/").status_code == 404
    for photo in (w.photo_b, w.photo_other_org):
        assert client.get(f"/api/inspections/photos/{photo.client_uuid}/").status_code == 404
        assert client.get(f"/api/inspections/photos/{photo.client_uuid}/thumbnail/").status_code == 404
    assert client.get(f"/dashboard/unit/{w.s.unit_b.pk}/").status_code == 404


def test_another_organisations_manager_sees_only_her_own(w, client):
    """The other organisation's property manager lists only her finding; Harbour House's is a 404."""
    html = get(client, w.manager_other_org, "/site-findings/").content.decode()
    assert f'data-finding="{w.finding_other_org.pk}"' in html
    assert f'data-finding="{w.finding_a.pk}"' not in html
    assert client.get(f"/site-findings/{w.finding_a.pk}/").status_code == 404
    assert client.get(f"/dashboard/unit/{w.s.unit_a.pk}/").status_code == 404


def test_a_technician_sees_findings_only_of_the_sites_of_his_work(w, client):
    """Omar works on Linden Court only: its finding opens, Harbour House's is a 404."""
    html = get(client, w.s.other_technician, "/site-findings/").content.decode()
    assert f'data-finding="{w.finding_b.pk}"' in html and f'data-finding="{w.finding_a.pk}"' not in html
    assert client.get(f"/site-findings/{w.finding_a.pk}/").status_code == 404
    assert client.get(f"/site-findings/{w.finding_b.pk}/").status_code == 200


def test_nothing_she_can_change_writes_are_refused(w, client):
    """Every new page answers GET only: a POST is refused with 405 and nothing changes."""
    client.force_login(w.s.manager_a)
    before = (w.finding_a.state, w.finding_a.corrective_work_order.version)
    for url in ("/site-findings/", f"/site-findings/{w.finding_a.pk}/", f"/dashboard/unit/{w.s.unit_a.pk}/"):
        assert client.post(url, {"state": "closed"}).status_code == 405, url
    w.finding_a.refresh_from_db()
    w.finding_a.corrective_work_order.refresh_from_db()
    assert (w.finding_a.state, w.finding_a.corrective_work_order.version) == before


def test_unit_page_from_her_site_page_and_the_unit_history_in_her_units(w, client, django_capture_on_commit_callbacks):
    """Her site page links each unit; the unit's page shows components, the last visits, freeze readiness and the
    open finding, and asking for its history makes a unit history report in her units (US here)."""
    client.force_login(w.manager_us)
    site = client.get(f"/dashboard/site/{w.s.site_a.pk}/").content.decode()
    assert f"/dashboard/unit/{w.s.unit_a.pk}/" in site
    res = client.get(f"/dashboard/unit/{w.s.unit_a.pk}/")
    assert res.status_code == 200
    page = text_of(res.content.decode())
    assert "Final filters" in page and "Pre-filters" in page
    assert "1 Dec 2026" in page and "Filter check" in page
    assert "Freeze protection" in page
    assert "cfm" in page and "L/s" not in page  # the design airflow in her units
    assert f"/site-findings/{w.finding_a.pk}/" in res.content.decode()
    assert "Request unit history" in page
    with django_capture_on_commit_callbacks(execute=False):
        posted = client.post(
            "/records/request/",
            {"kind": "unit_history", "unit": w.s.unit_a.pk, "start": "2026-01-01", "end": "2026-12-01",
             "next": f"/dashboard/unit/{w.s.unit_a.pk}/"},
        )  # fmt: skip
    assert posted.status_code == 302
    report = Report.objects.get(kind="unit_history", requested_by=w.manager_us)
    assert report.parameters["unit"] == w.s.unit_a.pk and report.parameters["unit_system"] == "us"


def test_nav_has_findings_for_property_managers(w, client):
    """The property manager's menu names Findings beside Dashboard and Reports."""
    html = get(client, w.s.manager_a, "/dashboard/").content.decode()
    assert re.search(r'<a href="/site-findings/"[^>]*>Findings</a>', html)


def test_a_closed_finding_reads_closed_with_its_day_and_cause(w, client):
    """Closed findings are listed under Closed with the day they closed on the site's clock, and the page says
    why; the open list no longer has them."""
    from inspections.models import Finding

    Finding.objects.filter(pk=w.finding_a.pk).update(
        state="closed", closed_at=NOW, close_cause=Finding.CloseCause.OK_LATER
    )
    client.force_login(w.s.manager_a)
    assert f'data-finding="{w.finding_a.pk}"' not in client.get("/site-findings/").content.decode()
    html = client.get("/site-findings/?state=closed").content.decode()
    row = text_of(html.split(f'data-finding="{w.finding_a.pk}"')[1].split("</tr>")[0])
    assert "Closed 2 Dec 2026" in row
    page = text_of(client.get(f"/site-findings/{w.finding_a.pk}/").content.decode())
    assert "Closed since 2 Dec 2026: ok on a later visit" in page


def test_a_design_review_says_no_corrective_work_is_proposed(w, client):
    """A design review holds no work order: the list and the page say so in words, not a dash."""
    from inspections.models import Finding

    Finding.objects.filter(pk=w.finding_a.pk).update(kind=Finding.Kind.DESIGN_REVIEW, corrective_work_order=None)
    client.force_login(w.s.manager_a)
    html = client.get("/site-findings/").content.decode()
    assert "Design review: no corrective work proposed" in text_of(html)
    assert "Design review: no corrective work proposed" in text_of(
        client.get(f"/site-findings/{w.finding_a.pk}/").content.decode()
    )


def test_corrective_work_past_its_overdue_day_reads_overdue_on_every_page(w, client):
    """Work due 2 Nov 2026 (overdue from 3 Nov), still assigned on 2 Dec 2026, reads "overdue" on her findings
    list, the finding's page and the unit's page, from WorkOrder.state_words as the board's overdue column counts
    it (WorkOrder.is_overdue_on and scheduling.selectors.board._overdue, one rule)."""
    import datetime as dt

    from scheduling.models import WorkOrder

    wo = w.finding_a.corrective_work_order
    WorkOrder.objects.filter(pk=wo.pk).update(
        due_date=dt.date(2026, 11, 2), overdue_on=dt.date(2026, 11, 3), scheduled_for=None
    )
    wo.refresh_from_db()
    assert wo.is_overdue and wo.state_words.endswith(", overdue")
    assert not wo.is_overdue_on(dt.date(2026, 11, 2)) and wo.is_overdue_on(dt.date(2026, 11, 3))
    row = text_of(
        get(client, w.s.manager_a, "/site-findings/").content.decode().split(f'data-finding="{w.finding_a.pk}"')[1]
    ).split("</tr>")[0]
    # Overdue from 3 November (its overdue day), said with its due date and the days it is overdue by.
    late = f"due 2 nov 2026, {(dt.date(2026, 12, 2) - dt.date(2026, 11, 3)).days} days overdue (since 3 nov 2026)"
    assert late in row.lower(), row
    page = text_of(get(client, w.s.manager_a, f"/site-findings/{w.finding_a.pk}/").content.decode())
    assert late in page.lower()
    unit = text_of(get(client, w.s.manager_a, f"/dashboard/unit/{w.finding_a.ahu_id}/").content.decode())
    assert "overdue" in unit.lower()
