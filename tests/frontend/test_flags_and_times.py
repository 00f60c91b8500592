"""A flagged form on the pages: resolve before verify, messages that name the work, times on the site's clock.

The scenario's sites are in Europe/Amsterdam (tests.factories.inventory.SiteFactory); in January that is CET,
UTC+1 (IANA tz database). The clock is fixed at 14 Jan 2026 05:30 UTC = 06:30 CET.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.urls import reverse

from inspections.models import Inspection
from inspections.services.signoff import flagged_form_resolve
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from scheduling.services.meters import meter_reading_record
from tests.frontend import scenario as scenario_module
from tests.frontend.test_records import finished_visit
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 1, 14, 5, 30, tzinfo=dt.UTC)  # 06:30 CET
INTERNAL_ID = re.compile(r"inspection \d+", re.IGNORECASE)


@pytest.fixture
def s(db):
    with time_machine.travel(NOW, tick=False):
        yield scenario_module.build()


def flagged_visit(s) -> Inspection:
    """work_a done with a run-hour reading (1200 h) below the meter's last one (1500 h two days before):
    the work order completes and the form arrives flagged for the supervisor."""
    meter_reading_record(ahu=s.unit_a, hours=1500, taken_at=NOW - dt.timedelta(days=2))
    result = finished_visit(s)  # finished an hour before now: 04:30 UTC = 05:30 CET
    assert result["status"] == "flagged", result
    assert s.work_a.state == WorkOrder.State.COMPLETED
    return Inspection.objects.get(pk=result["inspection_id"])


def test_flagged_work_offers_resolve_not_verify_and_messages_name_the_work(s, login):
    """While the flag is open: a 'Resolve the flag' link to the flagged form, no Verify; a forced verify is
    refused in words naming the unit (with its building), the work order and the day, never an internal id."""
    with time_machine.travel(NOW, tick=False):
        inspection = flagged_visit(s)
        client = login(s.supervisor)
        url = f"/w/{s.work_a.public_id}/"
        page = client.get(url).content.decode()
        assert "Verify the completed work" not in page
        link = f'href="{reverse("frontend:flagged")}#flag-{s.work_a.public_id}"'
        assert link in page and "Resolve the flag" in page
        flagged_page = client.get(reverse("frontend:flagged")).content.decode()
        assert f'id="flag-{s.work_a.public_id}"' in flagged_page

        s.work_a.refresh_from_db()  # the version the work order page shows
        refused = client.post(
            reverse("frontend:verify", kwargs={"public_id": s.work_a.public_id}),
            {"version": s.work_a.version},
            follow=True,
        )
        text = refused.content.decode()
        assert "AHU-01 (North block) — Quarterly service, finished 14 Jan 2026 is flagged" in text
        assert "resolve the flag first" in text
        assert not INTERNAL_ID.search(text), INTERNAL_ID.search(text)

        done = client.post(
            reverse("frontend:flagged"),
            {"inspection": inspection.pk, "note": "Reassignment crossed; kept."},
            follow=True,
        ).content.decode()
        assert "Flag resolved: AHU-01 (North block) — Quarterly service, finished 14 Jan 2026." in done
        assert not INTERNAL_ID.search(done)

        page = client.get(url).content.decode()
        assert "Verify the completed work" in page and "Resolve the flag" not in page


def test_times_on_the_flagged_page_and_the_work_order_page_are_on_the_sites_clock(s, login):
    """The same day's events read in CET with the zone named on both pages (04:30 UTC finish reads 05:30 CET;
    the resolution and the verification at 05:30 UTC read 06:30 CET), never a bare UTC time."""
    with time_machine.travel(NOW, tick=False):
        inspection = flagged_visit(s)
        client = login(s.supervisor)
        flagged_page = client.get(reverse("frontend:flagged")).content.decode()
        assert "finished 14 Jan 2026 05:30 CET" in flagged_page
        assert "04:30" not in flagged_page
        client.post(reverse("frontend:flagged"), {"inspection": inspection.pk, "note": "Checked with Omar."})
        s.work_a.refresh_from_db()
        client.post(reverse("frontend:verify", kwargs={"public_id": s.work_a.public_id}), {"version": s.work_a.version})
        page = client.get(f"/w/{s.work_a.public_id}/").content.decode()
        assert "Verified by Sara Plan on 14 Jan 2026 06:30 CET." in page
        assert "Flag resolved by Sara Plan on 14 Jan 2026 06:30 CET: Checked with Omar." in page
        assert "05:30 CET" in page  # signed at the finish, on the site's clock
        assert not re.search(r"\b0?4:30\b", page)


def test_inspection_pdf_shows_the_flag_with_its_resolution(s, django_capture_on_commit_callbacks):
    """Once resolved, the record PDF gives the flag's reason and who resolved it, when (site's clock) and how."""
    with time_machine.travel(NOW, tick=False):
        inspection = flagged_visit(s)
        flagged_form_resolve(inspection=inspection, by=s.supervisor, note="Meter swapped last week; new base noted.")
        with django_capture_on_commit_callbacks(execute=True):
            report = report_request(
                user=s.supervisor, kind="inspection", parameters={"work_order": str(s.work_a.public_id)}
            )
        report.refresh_from_db()
        assert report.status == Report.Status.DONE, report.error
        text = " ".join(pdf_text(report).split())
    assert "run-hour meter:" in text
    assert "Resolved by Sara Plan on 14 Jan 2026 06:30 CET: Meter swapped last week; new base noted." in text
    assert "05:30 CET" in text and " UTC –" not in text


def test_reports_page_gives_request_times_on_the_sites_clock(s, login, django_capture_on_commit_callbacks):
    """A report asked for at 05:30 UTC lists as requested at 06:30 CET (the zone of the person's sites)."""
    with time_machine.travel(NOW, tick=False):
        finished_visit(s)
        with django_capture_on_commit_callbacks(execute=True):
            report_request(user=s.supervisor, kind="inspection", parameters={"work_order": str(s.work_a.public_id)})
        page = " ".join(login(s.supervisor).get("/records/").content.decode().split())
    assert "Requested 14 Jan 2026 06:30 CET by you" in page
