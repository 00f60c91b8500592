"""The demo's records, asked for as its people ask for them and read page by page as images.

On the demo's day the supervisor asks through the API (as the pages and the phone do) for the archival
inspection report of the latest signed visit, the archival compliance report of every site, a year's history
of the unit with the most visits, and a label sheet; the property manager asks for the inspection report of a
visit on one of her buildings. Each file, downloaded as a client downloads it:

- every page is blank in its side margins and at its foot (nothing runs off the page);
- no text a person reads holds a module path, a field key, "None" or "nan";
- a visit fits on 3 pages, a year's history of a unit with monthly visits on 10;
- every record is tagged for a screen reader, and the archival ones pass the PDF/A-3b rules;
- the inspection report shows the arrival and signature times on the site's clock with its zone named.
"""

from __future__ import annotations

import datetime as dt
import io
import re

import pytest
import time_machine
from django.conf import settings
from django.core.management import call_command
from django.db.models import Count, Q
from pypdf import PdfReader

from accounts.models import User
from inspections.models import Inspection
from inventory.display import site_time_text
from inventory.models import AHU
from inventory.selectors import sites_visible_to
from reports.documents import registry
from reports.models import Report
from tests.reports import pdfcheck
from tests.reports.conftest import page_margin_ink, text_of
from tests.reports.layout import cells_overflowing

pytestmark = pytest.mark.django_db
DEMO_DAY = dt.datetime(2026, 12, 2, 10, tzinfo=dt.UTC)  # the demo's day (tests/flows/test_freeze_readiness.py)


def _ask(client, person, capture, *, kind: str, parameters: dict, pdfa: bool = False) -> tuple[bytes, dict]:
    """Ask for a report through the API, let it render (in-process, as without a broker), download it."""
    client.force_login(person)
    with capture(execute=True):
        asked = client.post(
            "/api/reports/", {"kind": kind, "parameters": parameters, "pdfa": pdfa}, content_type="application/json"
        )
    assert asked.status_code == 202, asked.content
    state = client.get(f"/api/reports/{asked.json()['public_id']}/").json()
    assert state["status"] == "done", state
    got = client.get(state["download_url"])
    assert got.status_code == 200 and got["Content-Type"] == "application/pdf"
    pdf = b"".join(got.streaming_content) if got.streaming else got.content
    assert state["page_count"] >= 1 and state["size_bytes"] == len(pdf)
    # As laid out: no cell's text runs into the next column.
    report = Report.objects.get(public_id=state["public_id"])
    html = registry()[kind].build(report=report).html
    assert cells_overflowing(html, base_url=str(settings.BASE_DIR)) == [], kind
    return pdf, state


def _read_as_a_reader(pdf: bytes, name: str, *, archival: bool) -> str:
    assert page_margin_ink(pdf, f"demo-{name}") == [], name
    text = text_of(pdf)
    assert pdfcheck.unreadable(text) == [], name
    assert pdfcheck.problems(pdf, archival=archival) == [], name
    return " ".join(text.split())


def test_the_demo_records_read_as_an_auditor_expects(client, django_capture_on_commit_callbacks):
    with time_machine.travel(DEMO_DAY, tick=False):
        call_command("load_demo", stdout=io.StringIO())
    boss, manager = User.objects.get(username="ruth.supervisor"), User.objects.get(username="helena.pm")
    year_ago = (DEMO_DAY - dt.timedelta(days=365)).date()

    with time_machine.travel(DEMO_DAY + dt.timedelta(hours=3), tick=False):
        # The latest signed visit of the demo, and one on a building the property manager was granted.
        signed = Inspection.objects.filter(work_order_completed=True).select_related(
            "work_order", "ahu__building__site"
        )
        latest = signed.order_by("-finished_at").first()
        hers = signed.filter(ahu__building__site__in=sites_visible_to(user=manager)).order_by("-finished_at").first()
        assert latest and hers
        busiest = (
            AHU.objects.annotate(
                visits=Count("work_orders", filter=Q(work_orders__completed_at__date__gte=year_ago), distinct=True)
            )
            .order_by("-visits", "pk")
            .first()
        )
        assert busiest.visits >= 10, busiest.visits  # a unit with monthly visits

        capture = django_capture_on_commit_callbacks
        pdf, _ = _ask(
            client,
            boss,
            capture,
            kind="inspection",
            parameters={"work_order": str(latest.work_order.public_id)},
            pdfa=True,
        )
        text = _read_as_a_reader(pdf, "inspection", archival=True)
        assert len(PdfReader(io.BytesIO(pdf)).pages) <= 3
        site = latest.ahu.building.site
        for moment in (latest.started_at, latest.signed_at):
            shown = site_time_text(moment, site.time_zone)
            assert re.search(r"\b[A-Z]{3,4}\b|[+-]\d\d", shown), shown  # the zone is named
            assert shown in text, shown
        assert "UTC" not in text or site.time_zone == "UTC"
        assert latest.ahu.label_code in text

        pdf, _ = _ask(
            client, manager, capture, kind="inspection", parameters={"work_order": str(hers.work_order.public_id)}
        )
        _read_as_a_reader(pdf, "inspection-manager", archival=False)

        pdf, state = _ask(client, boss, capture, kind="compliance", parameters={}, pdfa=True)
        _read_as_a_reader(pdf, "compliance", archival=True)

        period = {"unit": busiest.pk, "start": year_ago.isoformat(), "end": DEMO_DAY.date().isoformat()}
        pdf, state = _ask(client, boss, capture, kind="unit_history", parameters=period)
        _read_as_a_reader(pdf, "unit-history", archival=False)
        assert state["page_count"] <= 10, state["page_count"]

        pdf, _ = _ask(client, boss, capture, kind="labels", parameters={"units": [busiest.pk]})
        assert pdfcheck.unreadable(text_of(pdf)) == []
        assert pdfcheck.problems(pdf, archival=False) == []
