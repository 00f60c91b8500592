"""The technician's "Start visit" on a work order's page (frontend/views/visit_start.py), on the board world's clock:
Wednesday 5 March 2025, 10:00 UTC = 11:00 CET in Amsterdam (tests/flows/board_world.py).

Tess's assigned coil clean at Mill Block: the page offers "Start visit"; pressed, the visit is in progress from
11:00 CET (the scheduling service's own move, as the API's transition makes it) and the page says so instead of the
button. A page read before someone changed the work order, an unreadable version, another technician's visit and a
visit already done are refused and nothing moves.
"""

import datetime as dt

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.urls import reverse

from inspections.models import Inspection
from inspections.selectors import checklist_for
from inspections.services import inspection_sync
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from tests.factories.inspections import sync_form
from tests.flows import board_world
from tests.flows.test_work_order_record import filled_readings
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db


@pytest.fixture
def world(db):
    with time_machine.travel(board_world.NOW, tick=False):
        yield board_world.build()


def _page(wo) -> str:
    return reverse("frontend:checklist", kwargs={"public_id": wo.public_id})


def _start(client, wo, version) -> object:
    return client.post(reverse("frontend:start_visit", kwargs={"public_id": wo.public_id}), {"version": version})


def _said(response) -> str:
    return " ".join(str(m) for m in get_messages(response.wsgi_request))


def _coil_clean(world) -> WorkOrder:
    return WorkOrder.objects.get(assignee=world.tess, title="Coil deep clean")


def test_the_technician_starts_her_assigned_visit(client, world):
    wo = _coil_clean(world)
    client.force_login(world.tess)
    html = client.get(_page(wo)).content.decode()
    assert "data-start-visit" in html and ">Start visit</button>" in html and "data-start-offline hidden" in html
    response = _start(client, wo, wo.version)
    assert response.status_code == 302 and response["Location"] == _page(wo)
    assert "Coil deep clean: visit started 5 Mar 2025 11:00 CET." in _said(response)
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.IN_PROGRESS and wo.started_at == board_world.NOW
    html = client.get(_page(wo)).content.decode()
    assert "data-start-visit" not in html and "Visit started 5 Mar 2025 11:00 CET." in html
    assert "data-checklist" in html  # the form is still there to fill


@pytest.mark.parametrize("version", ["stale", "", "x", "1e309"])
def test_a_page_read_before_a_change_or_an_unreadable_version_moves_nothing(client, world, version):
    wo = _coil_clean(world)
    client.force_login(world.tess)
    sent = wo.version - 1 if version == "stale" else version
    response = _start(client, wo, sent)
    assert "someone changed it meanwhile; here it is as it is now" in _said(response)
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.ASSIGNED and wo.started_at is None


def test_only_the_assigned_technician_starts_it_and_only_an_assigned_visit(client, world):
    wo = _coil_clean(world)
    client.force_login(world.omar)
    assert "data-start-visit" not in client.get(_page(wo)).content.decode()
    assert _start(client, wo, wo.version).status_code == 403
    done = WorkOrder.objects.get(assignee=world.tess, state=WorkOrder.State.COMPLETED)
    client.force_login(world.tess)
    assert "data-start-visit" not in client.get(_page(done)).content.decode()
    response = _start(client, done, done.version)
    assert "is completed: only an assigned visit not yet started can be started" in _said(response)
    done.refresh_from_db()
    assert done.state == WorkOrder.State.COMPLETED
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.ASSIGNED


@pytest.mark.parametrize("state", [WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED])
def test_a_done_visit_offers_no_start_even_to_its_technician(client, world, state):
    """Completed or verified, even were it still hers: the page shows no "Start visit" and no form."""
    wo = _coil_clean(world)
    WorkOrder.objects.filter(pk=wo.pk).update(state=state)
    client.force_login(world.tess)
    html = client.get(_page(wo)).content.decode()
    assert "data-start-visit" not in html and ">Start visit</button>" not in html
    assert "data-checklist" not in html


def test_the_open_form_says_open_with_a_connection_only_offline(client, world):
    """The done note the phone shows over a stale copy: its "open with a connection" words come hidden (shown by
    checklist.js only while offline), beside a link to the record."""
    wo = _coil_clean(world)
    client.force_login(world.tess)
    html = client.get(_page(wo)).content.decode()
    assert "<span data-done-offline hidden>Open this page with a connection to see the record.</span>" in html
    assert f'<span data-done-online><a href="{_page(wo)}">Open its signed record</a>.</span>' in html


def test_arrived_on_the_record_is_when_the_visit_was_started(client, world, django_capture_on_commit_callbacks):
    """Started at 11:00 CET; the page reloaded at 11:02 carries 11:00 as the form's start, and a form from a page
    opened at 11:02 (a copy from before the reload) and signed at 11:04 is placed as arrived 11:00 all the same:
    the PDF record says "Arrived 5 Mar 2025 11:00 CET", not the later page or signing time."""
    wo = _coil_clean(world)
    client.force_login(world.tess)
    _start(client, wo, wo.version)
    wo.refresh_from_db()
    later = board_world.NOW + dt.timedelta(minutes=2)
    with time_machine.travel(later, tick=False):
        html = client.get(_page(wo)).content.decode()
    assert f'name="started_at" value="{board_world.NOW.isoformat()}"' in html
    signed = board_world.NOW + dt.timedelta(minutes=4)
    form = sync_form(wo, filled_readings(checklist_for(work_order=wo, user=world.tess), {}), finished_at=signed)
    form["started_at"] = later.isoformat()
    with time_machine.travel(signed, tick=False):
        assert inspection_sync(user=world.tess, forms=[form])[0]["status"] in ("stored", "flagged")
        assert Inspection.objects.get(work_order=wo).started_at == board_world.NOW
        with django_capture_on_commit_callbacks(execute=True):
            report = report_request(user=world.tess, kind="inspection", parameters={"work_order": str(wo.public_id)})
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    text = " ".join(pdf_text(report).split())
    assert "Arrived 5 Mar 2025 11:00 CET" in text and "Signed 5 Mar 2025 11:04 CET" in text
