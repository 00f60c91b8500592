"""Inspection report of one work order: readings in the reader's units, verdicts, findings, sign-off, cautions."""

import pytest
from django.http import Http404

from accounts.models import Role
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import SiteFactory, make_full_unit
from tests.factories.scheduling import add_task

from . import builders as b
from .conftest import pdf_pages, pdf_text, rasterise

pytestmark = pytest.mark.django_db


@pytest.fixture
def visit(site, supervisor):
    """A finished quarterly visit to AHU-03: filters at 200 Pa (watch), supply air 19.5 °C against 17 °C (fail)."""
    from tests.factories.inventory import BuildingFactory

    lib = b.library()
    ahu = make_full_unit(building=BuildingFactory(site=site, name="North Wing"), tag="AHU-03")
    final = ahu.components.get(name="Final filters")
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    wo = b.preventive(
        ahu, lib["filter_check"], "2025-03-10", done="2025-03-11", title="Quarterly service", assignee=tech
    )
    insp = b.inspection(wo, tech, finished="2025-03-11")
    b.reading(
        insp,
        "filter_check.dp",
        component=final,
        value_si=200.0,
        verdict="watch",
        reason="filter at 69 % of its span",
        note="gauge tube replaced",
    )
    b.reading(insp, "controls_check.supply_air", value_si=19.5, verdict="fail", reason="2.5 K above set point")
    b.evaluation(
        insp,
        "filter_loading",
        "filter_check.dp",
        component=final,
        verdict="watch",
        reason="Final filters: filter at 69 % of its span after correcting to design airflow",
        derived={
            "dp_pa": 200.0,
            "corrected_dp_pa": 200.0,
            "loading_pct": 68.8,
            "clean_dp_pa": 90,
            "final_dp_pa": 250,
            "forecast_change_date": "2025-05-20",
        },
        method="Δp × (Q_design/Q)^1.5",
    )
    ev2 = b.evaluation(
        insp,
        "supply_temperature",
        "controls_check.supply_air",
        verdict="fail",
        reason="supply air 19.5 °C is 2.5 K from its set point 17 °C",
        derived={"supply_air_c": 19.5, "setpoint_c": 17.0, "deviation_k": 2.5},
    )
    corrective = WorkOrder.objects.create(
        organisation=wo.organisation,
        ahu=ahu,
        kind=WorkOrder.Kind.CORRECTIVE,
        title="Retune supply-air loop",
        due_date=wo.due_date,
        approval=WorkOrder.Approval.PENDING,
    )
    b.finding(
        insp, ev2, severity="medium", title="Supply air off set point", opened="2025-03-11", corrective=corrective
    )
    b.photo(insp, tech, item_key="filter_check.photo", component=final)
    b.amendment(
        insp,
        supervisor,
        reason="Gauge misread; corrected from the photo",
        created="2025-03-12",
        changes=[{"item": "filter_check.dp", "component": final.label_code, "before": 210.0, "after": 200.0}],
    )
    return wo


@pytest.mark.parametrize(
    ("system", "expected"),
    [
        ("si", ["200 Pa", "19.5 °C", "2.5 K", "17.0 °C", "210 Pa → 200 Pa"]),
        ("us", ["0.80 in. w.c.", "67.1 °F", "4.5 Δ°F", "62.6 °F", "0.84 in. w.c. → 0.80 in. w.c."]),
    ],
)
def test_report_shows_readings_in_readers_units(visit, org, make_report, system, expected):
    """An SI reader sees Pa and °C; a US reader in. w.c. and °F — same visit, same verdicts and reasons."""
    reader = make_person(organisation=org, role=Role.SUPERVISOR, unit_system=system)
    report = make_report(user=reader, kind="inspection", parameters={"work_order": str(visit.public_id)})
    rasterise(report, f"inspection-{system}")
    text = pdf_text(report)
    flat = " ".join(text.split())  # a table cell may wrap a line anywhere
    for piece in expected:
        assert piece in flat, piece
    for piece in [
        "Northwind Air Care".upper(),
        "Harbour View Offices",
        "AHU-03",
        "Quarterly service",
        "Final filters",
        "watch",
        "fail",
        "filter at 69 % of its span",
        "gauge tube replaced",
        "Supply air off set point",
        "Retune supply-air loop",
        "Ana Field",
        "not yet verified",
        "Gauge misread",
        "Photos (1)",
        "change forecast: 20 May 2025",
    ]:
        assert piece in text, piece
    # safety: the checklist's cautions (lockout/tagout, hot coils) and the precedence line
    flat = " ".join(text.split())
    assert "Lock out and tag out the fan motor" in flat and "fans coast" in flat
    assert "Heating coils, their valves and pipework can be hot enough to burn" in flat
    assert "Local codes, the manufacturer's instructions and licensed practice take precedence" in flat
    pages = pdf_pages(report)
    assert f"Page 1 of {pages}" in text and f"Page {pages} of {pages}" in text
    assert "generated" in text


def test_same_inputs_same_text(visit, supervisor, make_report):
    """The report asked twice for the same work order at the same moment has the same text."""
    import time_machine

    with time_machine.travel("2025-03-15 08:00:00+00:00", tick=False):
        one = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
        two = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
    assert pdf_text(one) == pdf_text(two)
    # 08:00 UTC is 09:00 in Amsterdam in March (UTC+1, IANA tz database), the site's clock, zone named
    assert "generated 15 Mar 2025 09:00 CET" in pdf_text(one)


def test_pdfa_inspection(visit, supervisor, make_report):
    from .conftest import pdf_xmp

    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)}, pdfa=True)
    assert 'pdfaid:part="3"' in pdf_xmp(report)


def test_work_order_of_another_organisation_refused(visit):
    """Another organisation's supervisor cannot ask for the report: 404 naming the field, nothing stored."""
    outsider = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR)
    with pytest.raises(Http404, match="work_order"):
        report_request(user=outsider, kind="inspection", parameters={"work_order": str(visit.public_id)})
    with pytest.raises(Http404):
        report_request(user=outsider, kind="inspection", parameters={"work_order": "not-a-uuid"})
    assert not Report.objects.exists()


def test_property_manager_needs_grant(visit, org, make_report, client):
    """A property manager without a grant for the site is refused; with it, they can ask and download."""
    from accounts.services import site_grant

    manager = make_person(organisation=org, role=Role.PROPERTY_MANAGER)
    site_grant(user=manager, site=SiteFactory(organisation=org))
    with pytest.raises(Http404):
        report_request(user=manager, kind="inspection", parameters={"work_order": str(visit.public_id)})
    site_grant(user=manager, site=visit.ahu.building.site)
    report = make_report(user=manager, kind="inspection", parameters={"work_order": str(visit.public_id)})
    client.force_login(manager)
    assert client.get(report.get_absolute_url()).status_code == 200


def test_a_closed_finding_says_when_and_why(visit, supervisor, make_report):
    """Once its corrective work is done the finding reads closed, with the day and the cause."""
    import datetime as dt

    from inspections.models import Finding

    closed_at = dt.datetime(2025, 3, 14, 10, 0, tzinfo=dt.UTC)
    Finding.objects.filter(inspection__work_order=visit).update(
        state=Finding.State.CLOSED, closed_at=closed_at, close_cause=Finding.CloseCause.CORRECTED
    )
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
    rasterise(report, "inspection-closed-finding")
    text = " ".join(pdf_text(report).split())
    assert "Closed" in text and "14 Mar 2025: corrective work completed" in text


def test_each_caution_once_in_the_safety_box(visit, supervisor, make_report):
    """Filter check and a filter change on one visit: the PDF says each caution once, as the checklist page does.

    Lockout, the loaded-filter caution (from the filter-replacement checklist) and the local-codes line each
    appear exactly once in the whole document, in the checklist's own words.
    """
    from inspections.cautions import LOADED_FILTERS
    from inspections.selectors import work_order_cautions

    add_task(visit, b.library()["filter_replace"], key="2025-03-10-change")
    cautions = work_order_cautions(work_order=visit)
    assert LOADED_FILTERS in cautions
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
    flat = " ".join(pdf_text(report).split())
    for caution in cautions:
        assert flat.count(caution) == 1, caution
    assert flat.count("take precedence") == 1
    assert flat.count("Lock out and tag out") == 1
    assert flat.count("eye and hand protection") == 1


def test_a_work_order_verified_by_its_service_reads_verified_in_the_sign_off(visit, supervisor, make_report, client):
    """Verified from the work order (not the form): the header's state and the sign-off tell one verification,
    with its person and time, in the PDF and on the work order's page; nowhere "not yet verified"."""
    import time_machine

    from scheduling.services import work_order_verify

    assert visit.state == WorkOrder.State.COMPLETED
    with time_machine.travel("2025-03-12 14:30:00+00:00", tick=False):
        work_order_verify(work_order=visit, by=supervisor)
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
    text = " ".join(pdf_text(report).split())
    # 14:30 UTC is 15:30 in Amsterdam in March (UTC+1, IANA tz database), the site's clock
    assert f"verified by {supervisor}, 12 Mar 2025 15:30" in text
    assert "not yet verified" not in text.lower()

    # The work order's page shows the same record with the same verification.
    client.force_login(supervisor)
    page = " ".join(client.get(f"/w/{visit.public_id}/").content.decode().split())
    assert f"Verified by {supervisor} on 12 Mar 2025 15:30" in page
    assert "Not yet verified" not in page
