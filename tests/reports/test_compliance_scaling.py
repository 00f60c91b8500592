"""The compliance report's cost grows with its units and no faster: building the document of 80 units asks the
database as many questions as building that of 20 (no query per unit, per row or per page), and the PDF's
tagging reads its page references without rebuilding them for every tagged box.

Timed figures belong in the benchmark (bench/scenarios/documents.py, "PDF reports": at most 1 s per 100 units); here the
growth is judged by counting, which does not depend on the machine.
"""

import datetime as dt
import re
from types import SimpleNamespace

import pydyf
import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from accounts.models import Role
from inspections.models import Finding
from inventory.models import Site
from reports.documents import compliance_report
from reports.documents.compliance_report import _filter_rows
from reports.models import Report
from reports.rendering import (
    _linear_page_references,
    _page_references_once,
    _report_html_class,
    pdf_render,
    report_ua_text,
)
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory

from . import builders as b

pytestmark = pytest.mark.django_db
AS_OF = b.at("2025-05-10", 9)


def add_units(*, site, lib, tech, count: int, first: int) -> None:
    """``count`` units on ``site``, each with what every table of the report lists: a filter bank judged at a
    visit, an electric preheater, an open finding with corrective work assigned to a person, an overdue visit
    assigned to that person and a task occurrence in the period."""
    building = BuildingFactory(site=site, name=f"Block {first}")
    for n in range(first, first + count):
        unit = AHUFactory(building=building, tag=f"AHU-{n:03d}")
        bank = ComponentFactory(ahu=unit, name="Final filters", position=1)
        ComponentFactory(
            ahu=unit,
            kind="electric_preheater",
            name="Electric preheater",
            position=0,
            specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
        )
        visit = b.preventive(unit, lib["filter_check"], "2025-03-25", done="2025-03-25")
        insp = b.inspection(visit, tech, finished="2025-03-25")
        ev = b.evaluation(
            insp,
            "filter_loading",
            "filter_check.dp",
            component=bank,
            verdict="fail",
            reason="filters loaded",
            derived={"corrected_dp_pa": 262.0, "loading_pct": 107.5, "forecast_at_final_now": True},
        )
        corrective = WorkOrder.objects.create(
            organisation=site.organisation,
            ahu=unit,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.APPROVED,
            state=WorkOrder.State.ASSIGNED,
            assignee=tech,
            title="Change the final filters",
            due_date=dt.date(2025, 5, 20),
        )
        b.finding(insp, ev, severity="high", title="Filters loaded — Final filters", opened="2025-03-25")
        Finding.objects.filter(evaluation=ev).update(corrective_work_order=corrective)
        b.preventive(unit, lib["coil_clean"], "2025-03-01", state=WorkOrder.State.ASSIGNED, assignee=tech)


def html_queries(*, supervisor, site_ids) -> tuple[int, str]:
    """The queries and the HTML of building the compliance document of ``site_ids`` (as the render task does)."""
    prepared = compliance_report.prepare(
        user=supervisor,
        parameters={"sites": site_ids, "start": "2025-01-01", "end": "2025-03-31", "unit_system": "si"},
        requested_at=AS_OF,
    )
    report = Report(
        organisation_id=prepared.organisation_id,
        kind=Report.Kind.COMPLIANCE,
        parameters=prepared.parameters,
        site_ids=prepared.site_ids,
        requested_by=supervisor,
        created_at=AS_OF,
    )
    with CaptureQueriesContext(connection) as queries:
        built = compliance_report.build(report=report)
    return len(queries), built.html


def test_building_the_document_asks_the_same_queries_for_80_units_as_for_20(org, supervisor, time_machine):
    """Twenty units on two sites, then eighty: the same number of queries builds each report, every unit is in
    each of its tables (filters, findings, overdue work, freeze readiness), and the long tables are laid out
    with fixed columns (their cost is their rows')."""
    time_machine.move_to(AS_OF, tick=False)
    lib = b.library()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    sites = [SiteFactory(organisation=org, name=name) for name in ("North Quay", "Elm Court")]
    Site.objects.filter(pk__in=[s.pk for s in sites]).update(freeze_season_start=dt.date(2025, 10, 25))
    site_ids = [s.pk for s in sites]
    for i, site in enumerate(sites):
        add_units(site=site, lib=lib, tech=tech, count=10, first=i * 100)
    small, small_html = html_queries(supervisor=supervisor, site_ids=site_ids)
    for i, site in enumerate(sites):
        add_units(site=site, lib=lib, tech=tech, count=30, first=i * 100 + 10)
    large, large_html = html_queries(supervisor=supervisor, site_ids=site_ids)

    assert large == small, f"{small} queries for 20 units, {large} for 80"
    for html, units in ((small_html, 20), (large_html, 80)):
        assert f"{units} air handling units" in html
        assert html.count("Filters loaded") == units  # the open findings, one row each
        assert html.count("corrective work assigned, due") == units
        assert html.count(">Final filters<") == 2 * units  # a filter row and a finding row per unit
        assert f"Overdue now ({units})" in html  # each unit's coil visit, due 1 Mar
        assert len(re.findall(r'<table class="wide fixed[ "]', html)) == 4  # the overdue table adds its own class


def test_the_pdf_of_more_units_has_proportionally_more_pages(org, supervisor, time_machine):
    """The PDF of 60 units has more pages than that of 20 units, and at most three times as many."""
    time_machine.move_to(AS_OF, tick=False)
    lib = b.library()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    site = SiteFactory(organisation=org, name="North Quay")
    add_units(site=site, lib=lib, tech=tech, count=20, first=0)
    _, small_html = html_queries(supervisor=supervisor, site_ids=[site.pk])
    add_units(site=site, lib=lib, tech=tech, count=40, first=20)
    _, large_html = html_queries(supervisor=supervisor, site_ids=[site.pk])
    small = pdf_render(html=small_html, identifier="small").page_count
    large = pdf_render(html=large_html, identifier="large").page_count
    assert small < large <= 3 * small + 1


def test_page_references_are_pydyf_s_own_and_follow_new_pages():
    """The page references the tagging reads are those pydyf makes, and include a page added after a read."""
    pdf = pydyf.PDF()
    for _ in range(3):
        pdf.add_page(pydyf.Dictionary({"Type": "/Page"}))
    expected = tuple(f"{n} 0 R".encode("ascii") for n in pdf.pages["Kids"][::3])
    assert _page_references_once(pdf) == expected
    assert _page_references_once(pdf) is _page_references_once(pdf)  # built once, not on every read
    pdf.add_page(pydyf.Dictionary({"Type": "/Page"}))
    assert len(_page_references_once(pdf)) == 4
    assert _page_references_once(pdf)[-1] == f"{pdf.pages['Kids'][-3]} 0 R".encode("ascii")


def test_the_trimmed_user_agent_sheet_writes_the_same_pdf():
    """WeasyPrint's own user-agent sheet and the one without footnote and note rules (``::marker`` kept for list
    items) give the same bytes for a record with a list, a table and a page counter; the trimming took effect (a
    WeasyPrint whose sheet no longer reads as expected fails here, not silently slower)."""
    from weasyprint import HTML
    from weasyprint import html as weasy_html

    text = report_ua_text(weasy_html.UA)
    assert text is not None and _report_html_class() is not HTML
    removed = set(weasy_html.UA.split("\n")) - set(text.split("\n"))
    assert sorted(line.split(" ")[0] for line in removed) == [
        "::footnote-call",
        "::footnote-marker",
        "::marker",
        "::note-call",
        "::note-callback",
        "::note-marker",
    ]
    assert "li::marker {" in text
    html = (
        '<!DOCTYPE html><html lang="en"><head><title>T</title><style>@page { @bottom-right { content: "Page "'
        ' counter(page) " of " counter(pages); } } ol li::marker { color: #555; }</style></head><body><h1>Record</h1>'
        "<ul><li>one</li><li>two</li></ul><ol><li>first</li></ol><table><thead><tr><th>Unit</th><th>Verdict</th>"
        "</tr></thead><tbody>" + "<tr><td>AHU-01</td><td>OK</td></tr>" * 80 + "</tbody></table></body></html>"
    )
    _linear_page_references()
    options = {"pdf_identifier": b"0" * 32, "pdf_variant": "pdf/ua-1", "pdf_tags": True}
    own = HTML(string=html).write_pdf(**options)
    trimmed = _report_html_class()(string=html).write_pdf(**options)
    assert own == trimmed


def _bank(unit, name, *, read: bool):
    return {
        "unit": unit,
        "filter": SimpleNamespace(name=name) if name else None,
        "at": dt.datetime(2025, 3, 25) if read else None,
    }


def test_a_units_banks_without_a_reading_share_one_row():
    """Two banks of a unit never read: one row naming both; a bank with a reading keeps its own row; a unit with no
    bank its row; banks of two units never share a row."""
    a, b_, c = (SimpleNamespace(pk=n) for n in (1, 2, 3))
    rows = _filter_rows(
        [
            _bank(a, "Pre-filters", read=False),
            _bank(a, "Final filters", read=False),
            _bank(b_, "Pre-filters", read=True),
            _bank(b_, "Final filters", read=False),
            _bank(b_, "Carbon filters", read=False),
            _bank(c, None, read=False),
        ]
    )
    assert [(r["unit"].pk, r["banks"], r["status"] is not None) for r in rows] == [
        (1, ["Pre-filters", "Final filters"], False),
        (2, ["Pre-filters"], True),
        (2, ["Final filters", "Carbon filters"], False),
        (3, [], False),
    ]
