"""Two units with the same tag on one site (AHU-01 in North block and in South block): every list a
supervisor or manager reads names the building beside the tag, so the two are never confused."""

import datetime as dt

import pytest
import time_machine
from django.urls import reverse

from inspections.services import inspection_sync
from inventory.models import Site
from reports.models import Report
from reports.services import report_request
from tests.factories.inspections import r, sync_form
from tests.factories.inventory import BuildingFactory, ComponentFactory, make_full_unit
from tests.frontend import scenario as scenario_module
from tests.frontend.scenario import make_work
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 1, 14, 9, 0, tzinfo=dt.UTC)
SEASON_START = dt.date(2025, 10, 20)  # the season has begun and neither unit has proven its preheater
NAMES = ("AHU-01 (North block)", "AHU-01 (South block)")


@pytest.fixture
def s(db):
    with time_machine.travel(NOW, tick=False):
        s = scenario_module.build()
        Site.objects.filter(pk=s.site_a.pk).update(
            freeze_season_start=SEASON_START, normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
        )
        s.twin = make_full_unit(building=BuildingFactory(site=s.site_a, name="South block"), tag="AHU-01")
        for unit in (s.unit_a, s.twin):
            ComponentFactory(
                ahu=unit,
                kind="electric_preheater",
                name="Electric preheater",
                position=1,
                specs={"power_w": 24_000, "stages": 3, "switch_on_c": -3.0},
            )
        # A failed filter on each unit opens a finding on each; a planned visit of the twin is on the board.
        for wo in (s.work_a, make_work(ahu=s.twin, assignee=s.technician, title="Filter visit")):
            final = wo.ahu.components.get(name="Final filters")
            form = sync_form(wo, [r("filter_check.dp", 400.0, final)], finished_at=NOW - dt.timedelta(hours=2))
            inspection_sync(user=s.technician, forms=[form])
        make_work(ahu=s.twin, assignee=s.technician, title="Coil clean")
        make_work(ahu=s.unit_a, assignee=s.technician, title="Coil clean")
        yield s


def words(html: str) -> str:
    return " ".join(html.split())


def test_dashboard_freeze_lines_name_the_building(s, login):
    with time_machine.travel(NOW, tick=False):
        dashboard = words(login(s.manager_a).get(reverse("frontend:dashboard")).content.decode())
    for name in NAMES:
        assert f"{name}: not ready" in dashboard, dashboard


def test_findings_and_board_name_the_building(s, login):
    with time_machine.travel(NOW, tick=False):
        client = login(s.supervisor)
        findings = words(client.get(reverse("frontend:findings")).content.decode())
        board = words(client.get(reverse("frontend:board")).content.decode())
    for name in NAMES:
        assert name in findings, findings
        assert name in board, board


def test_compliance_pdf_filter_and_freeze_tables_name_the_building(s, django_capture_on_commit_callbacks):
    with time_machine.travel(NOW, tick=False):
        with django_capture_on_commit_callbacks(execute=True):
            report = report_request(
                user=s.manager_a,
                kind="compliance",
                parameters={"sites": [s.site_a.pk], "start": "2025-07-01", "end": "2026-01-13"},
            )
        report.refresh_from_db()
        assert report.status == Report.Status.DONE, report.error
        text = words(pdf_text(report))
    for name in NAMES:
        assert text.count(name) >= 2, (name, text)  # its filter row and its freeze row
