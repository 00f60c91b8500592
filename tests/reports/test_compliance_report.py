"""Site compliance report: figures from the database, and the PDF that shows them."""

import datetime as dt
import re

import pytest
import time_machine

from accounts.models import Role
from accounts.services import site_grant
from inspections.models import Finding
from inventory.models import Site
from reports.compliance import FREEZE_DUE, FREEZE_READY, LATE, MISSED, ON_TIME, age_bucket, compliance_figures
from scheduling.models import WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory

from . import builders as b
from .conftest import pdf_pages, pdf_text, rasterise

pytestmark = pytest.mark.django_db
AS_OF = b.at("2025-05-10", 9)


@pytest.fixture
def estate(site, supervisor):
    """Two units on one site: a small hand-checkable history (period Q1 2025, figures on 10 May 2025)."""
    Site.objects.filter(pk=site.pk).update(freeze_season_start=dt.date(2025, 10, 25))
    site.refresh_from_db()
    lib = b.library()
    building = BuildingFactory(site=site, name="Main block")
    a1 = AHUFactory(building=building, tag="AHU-01")
    a2 = AHUFactory(building=building, tag="AHU-02")
    bank = ComponentFactory(ahu=a1, name="Final filters", position=1)
    heater = ComponentFactory(
        ahu=a1,
        kind="electric_preheater",
        name="Preheater",
        position=0,
        specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
    )
    ComponentFactory(
        ahu=a2,
        kind="coil",
        name="Preheat coil",
        position=0,
        specs={"duty": "preheat", "fluid": "water", "design_capacity_w": 30000},
    )
    filt, coil, freeze = lib["filter_check"], lib["coil_clean"], lib["preheater_freeze"]
    b.preventive(a1, filt, "2025-01-10", done="2025-01-15")  # on time (grace 7)
    b.preventive(a1, filt, "2025-03-01", done="2025-03-20")  # late
    b.preventive(a2, filt, "2025-03-05")  # missed, still open: overdue now
    b.preventive(a2, coil, "2025-02-01", done="2025-02-20")  # on time
    b.preventive(a2, filt, "2025-06-01")  # outside the period
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    # Readiness comes from what the tests found (inspections.freeze), not from the task being ticked off.
    a1_freeze = b.preventive(a1, freeze, "2025-10-11", done="2025-05-02")  # passed after last season's end: ready
    b.freeze_test(a1_freeze, tech, finished="2025-05-02", heaters=[heater])
    a2_freeze = b.preventive(a2, freeze, "2024-10-11", done="2025-01-20")  # passed in the last season only: due
    b.freeze_test(a2_freeze, tech, finished="2025-01-20")
    visit = b.preventive(a1, filt, "2025-03-25", done="2025-03-25")  # on time
    insp = b.inspection(visit, tech, finished="2025-03-25")
    # Read at design airflow (no airflow measured): 228 Pa stands as read in the filter series.
    b.reading(insp, "filter_check.dp", component=bank, value_si=228.0, verdict="watch")
    ev = b.evaluation(
        insp,
        "filter_loading",
        "filter_check.dp",
        component=bank,
        verdict="watch",
        reason="Final filters: filter at 86 % of its span",
        derived={"corrected_dp_pa": 228.0, "loading_pct": 86.0, "forecast_change_date": "2025-05-02"},
    )
    b.finding(insp, ev, severity="high", title="Filters nearly loaded", opened="2025-03-25")
    ev2 = b.evaluation(insp, "damper_position", "damper_actuator.position", verdict="fail", reason="stuck")
    b.finding(insp, ev2, severity="medium", title="Damper stuck", opened="2024-11-01")
    ev3 = b.evaluation(insp, "supply_temperature", "controls_check.supply_air", verdict="fail", reason="off")
    b.finding(insp, ev3, severity="low", title="Closed already", opened="2025-01-01", closed="2025-02-01")
    return {"site": site, "a1": a1, "a2": a2, "bank": bank, "heater": heater, "tech": tech}


# Every figure of any number of units in a fixed number of queries: 12, one more for the freeze events the
# building-automation trends registered (inspections.freeze.FREEZE_EVENT_SOURCES), read for all units at once, and
# one for the trends' filter days in the filter series (inspections.selectors.FILTER_POINT_SOURCES), for all banks.
QUERIES = 14


def test_figures_from_database_match_hand_count(estate, django_assert_max_num_queries):
    """Q1 2025: filters 2 on time (15 Jan, 25 Mar), 1 late, 1 missed; coils 1 on time → 3/5 on time overall."""
    with django_assert_max_num_queries(QUERIES):
        f = compliance_figures(
            site_ids=[estate["site"].pk], start=dt.date(2025, 1, 1), end=dt.date(2025, 3, 31), as_of=AS_OF
        )
    by = {c.category: c for c in f.categories}
    assert by["filters"].counts[ON_TIME] == 2 and by["filters"].counts[LATE] == 1
    assert by["filters"].counts[MISSED] == 1
    assert by["coils_drain_pans"].counts[ON_TIME] == 1
    assert f.total.on_time_share == pytest.approx(3 / 5)
    assert [o["work_order"].ahu.tag for o in f.overdue] == ["AHU-02"]
    # Grace ended 12 Mar: overdue since 13 Mar, counted from that day as every page says it (scheduling.lateness).
    assert f.overdue[0]["since"] == dt.date(2025, 3, 13)
    assert f.overdue[0]["days_overdue"] == (dt.date(2025, 5, 10) - dt.date(2025, 3, 13)).days
    assert f.findings_total == 2  # the closed one is not open
    assert f.findings_matrix["high"]["31–90 days"] == 1  # 25 Mar → 10 May: 46 days
    assert f.findings_matrix["medium"]["over 180 days"] == 1  # 1 Nov → 10 May: 190 days
    filt = [r for r in f.filters if r["filter"] is not None]
    assert filt[0]["verdict"] == "watch" and filt[0]["derived"]["loading_pct"] == 86.0
    assert {r["unit"].tag: r["status"] for r in f.freeze} == {"AHU-01": FREEZE_READY, "AHU-02": FREEZE_DUE}


def test_queries_do_not_grow_with_units(estate, django_assert_max_num_queries):
    """Twenty more units with filters, each with an open finding (half with corrective work), cost no extra
    queries, the listing of open findings included (the 500-unit report depends on it)."""
    building = estate["a1"].building
    visit = estate["a1"].work_orders.order_by("pk").first()
    insp = b.inspection(visit, estate["tech"], finished="2025-03-26")
    for i in range(20):
        unit = AHUFactory(building=building, tag=f"AHU-X{i:02d}")
        bank = ComponentFactory(ahu=unit)
        ev = b.evaluation(insp, "filter_loading", "filter_check.dp", component=bank, verdict="fail", reason="loaded")
        finding = b.finding(insp, ev, severity="medium", title=f"Filters loaded — {bank.name}", opened="2025-03-26")
        Finding.objects.filter(pk=finding.pk).update(ahu=unit)
        if i % 2:
            Finding.objects.filter(pk=finding.pk).update(corrective_work_order=corrective(unit, approval="approved"))
    with django_assert_max_num_queries(QUERIES):
        f = compliance_figures(
            site_ids=[estate["site"].pk], start=dt.date(2025, 1, 1), end=dt.date(2025, 3, 31), as_of=AS_OF
        )
        listed = [(r["unit"].display_name, r["part"], r["corrective"]) for r in f.open_findings]
    assert len(f.units) == 22
    assert len(listed) == f.findings_total == 22
    assert sum(1 for _, _, words in listed if words.startswith("corrective work approved, due")) == 10


def corrective(unit, *, approval: str, due: str = "2025-05-20", state: str = "planned", **fields) -> WorkOrder:
    """A corrective work order on ``unit`` (as findings propose them), by its approval and state."""
    return WorkOrder.objects.create(
        organisation=unit.building.site.organisation,
        ahu=unit,
        kind=WorkOrder.Kind.CORRECTIVE,
        approval=approval,
        state=state,
        title="Put right what the visit found",
        due_date=dt.date.fromisoformat(due),
        **fields,
    )


def test_open_findings_are_listed_as_counted_with_their_corrective_work(estate, supervisor, make_report, time_machine):
    """Every open finding the counts hold is listed once, most severe and oldest first, with its site, unit,
    part, problem, first-seen day, age and what is being done about it; a closed one is not listed."""
    site, a1, a2 = estate["site"], estate["a1"], estate["a2"]
    visit = a2.work_orders.order_by("pk").first()
    insp = b.inspection(visit, estate["tech"], finished="2025-04-01")
    ev = b.evaluation(insp, "filter_loading", "filter_check.dp", verdict="fail", reason="Filters loaded")
    critical = b.finding(insp, ev, severity="critical", title="Frost thermostat did not trip", opened="2025-04-01")
    ev = b.evaluation(insp, "oa_fraction_temperature", "visit.oa", verdict="fail", reason="below need")
    review = b.finding(insp, ev, severity="high", title="Design minimum outdoor air too low", opened="2025-01-05")
    Finding.objects.filter(pk=review.pk).update(kind=Finding.Kind.DESIGN_REVIEW)
    high = Finding.objects.get(title="Filters nearly loaded")  # 25 Mar 2025, on the Final filters of AHU-01
    medium = Finding.objects.get(title="Damper stuck")  # 1 Nov 2024
    Finding.objects.filter(pk=critical.pk).update(corrective_work_order=corrective(a2, approval="pending"))
    Finding.objects.filter(pk=high.pk).update(corrective_work_order=corrective(a1, approval="approved"))
    f = compliance_figures(site_ids=[site.pk], start=dt.date(2025, 1, 1), end=dt.date(2025, 3, 31), as_of=AS_OF)
    rows = f.open_findings
    # The listing holds what the counts count: per severity and age bucket, the same numbers.
    assert len(rows) == f.findings_total == 4
    listed = {sev: dict.fromkeys(f.age_labels, 0) for sev in f.findings_matrix}
    for r in rows:
        listed[r["severity"]][age_bucket(r["age_days"])] += 1
    assert listed == f.findings_matrix
    # Most severe first; among the two high ones the older (5 Jan) before the newer (25 Mar).
    assert [r["finding"].pk for r in rows] == [critical.pk, review.pk, high.pk, medium.pk]
    by = {r["finding"].pk: r for r in rows}
    assert by[critical.pk]["corrective"] == "corrective work awaiting approval, due 20 May 2025"
    assert by[review.pk]["corrective"] == "none: a design review"
    assert by[high.pk]["corrective"] == "corrective work approved, due 20 May 2025"
    assert by[medium.pk]["corrective"] == "none proposed yet"
    # Ages in the site's days to 10 May 2025: 25 Mar → 46 days, 1 Nov → 190 days (hand count).
    assert (by[high.pk]["age_days"], by[medium.pk]["age_days"]) == (46, 190)
    assert by[high.pk]["first_seen"] == dt.date(2025, 3, 25)
    assert by[high.pk]["part"] == "Final filters" and by[medium.pk]["part"] == "the unit as a whole"

    time_machine.move_to(AS_OF, tick=False)
    report = make_report(
        user=supervisor,
        kind="compliance",
        parameters={"sites": [site.pk], "start": "2025-01-01", "end": "2025-03-31"},
    )
    text = " ".join(pdf_text(report).split())
    assert "Open findings, most severe and oldest first (4)" in text
    listing = text.split("Open findings, most severe and oldest first (4)")[1].split("Filter status of every unit")[0]
    order = [listing.index(t) for t in ("Frost thermostat", "Design minimum", "Filters nearly loaded", "Damper stuck")]
    assert order == sorted(order)
    for words in ("awaiting approval", "none: a design review", "approved, due 20 May 2025", "none proposed yet"):
        assert words in listing
    assert "25 Mar 2025" in listing and "Final filters" in listing and "Closed already" not in text
    # The summary still comes first, before the counts and the listing.
    assert (
        text.index("Summary")
        < text.index("Open findings by severity and age")
        < text.index("Open findings, most severe")
    )


def test_figures_split_per_site_add_up(estate, django_assert_max_num_queries):
    """A second site with one on-time visit: per site 3/5 and 1/1, together 4/6, in the same number of queries."""
    other = SiteFactory(organisation=estate["site"].organisation, name="Second Site")
    unit = AHUFactory(building=BuildingFactory(site=other))
    filt = estate["a1"].work_orders.first().tasks.first().task
    b.preventive(unit, filt, "2025-02-10", done="2025-02-11")
    with django_assert_max_num_queries(QUERIES):
        f = compliance_figures(
            site_ids=[estate["site"].pk, other.pk], start=dt.date(2025, 1, 1), end=dt.date(2025, 3, 31), as_of=AS_OF
        )
    here, there = f.by_site[estate["site"].pk], f.by_site[other.pk]
    assert (here["total"].counts[ON_TIME], here["total"].judged) == (3, 5)
    assert (there["total"].counts[ON_TIME], there["total"].judged) == (1, 1)
    assert (f.total.counts[ON_TIME], f.total.judged) == (4, 6)
    assert here["findings_total"] == 2 and there["findings_total"] == 0


@pytest.mark.parametrize(("system", "dp_text"), [("si", "228 Pa"), ("us", "0.92 in. w.c.")])
def test_compliance_pdf_shows_figures(estate, supervisor, make_report, time_machine, system, dp_text):
    """The PDF: summary first, on-time share, the overdue unit, filters in the reader's units, freeze status."""
    time_machine.move_to(AS_OF, tick=False)
    report = make_report(
        user=supervisor,
        kind="compliance",
        parameters={"sites": [estate["site"].pk], "start": "2025-01-01", "end": "2025-03-31", "unit_system": system},
    )
    text = pdf_text(report)
    first_page = text.split("Page 1 of")[0]
    assert "Summary" in first_page and "60.0 %" in first_page  # 3 of 5 on time
    assert "Harbour View Offices" in first_page and "1 Jan 2025 to 31 Mar 2025" in first_page
    assert "Filters" in text and "Coils and drain pans" in text
    assert "Overdue now (1)" in text
    assert dp_text in text and "86 %" in text and "2 May 2025" in text
    assert "Ready" in text and "Due" in text
    assert "Local codes" in text
    # 09:00 UTC is 11:00 in Amsterdam in May (UTC+2, CEST; IANA tz database): the site's clock, zone named
    assert "generated 10 May 2025 11:00 CEST" in text
    assert "Figures as of 10 May 2025 11:00 CEST" in " ".join(text.split())
    pages = pdf_pages(report)
    assert pages >= 2 and f"Page {pages} of {pages}" in text
    rasterise(report, f"compliance-{system}")


def test_portfolio_defaults_to_every_visible_site(estate, org, supervisor, make_report):
    """Without sites, the report covers every site the person may see (and lists the site on each row)."""
    other = SiteFactory(organisation=org, name="Riverside Clinic")
    AHUFactory(building=BuildingFactory(site=other), tag="AHU-R1")
    report = make_report(user=supervisor, kind="compliance", parameters={"start": "2025-01-01", "end": "2025-03-31"})
    assert report.site_ids == sorted([estate["site"].pk, other.pk])
    text = pdf_text(report)
    assert "2 sites" in text and "Riverside Clinic" in text and "AHU-R1" in text


def test_site_of_another_organisation_refused(estate, supervisor, api_client):
    """A compliance report naming another organisation's site is 404 and nothing is stored."""
    from reports.models import Report

    foreign = SiteFactory(organisation=OrganisationFactory())
    api_client.force_authenticate(supervisor)
    response = api_client.post(
        "/api/reports/", {"kind": "compliance", "parameters": {"sites": [estate["site"].pk, foreign.pk]}}, format="json"
    )
    assert response.status_code == 404
    assert f"sites: no site with id {foreign.pk}" in response.json()["detail"]
    assert not Report.objects.exists()


def test_pdfa_variant_is_archival(estate, supervisor, make_report):
    """Asked for PDF/A, the file declares PDF/A-3B in its XMP metadata; without, it declares nothing."""
    from .conftest import pdf_xmp

    params = {"sites": [estate["site"].pk], "start": "2025-01-01", "end": "2025-03-31"}
    archival = make_report(user=supervisor, kind="compliance", parameters=params, pdfa=True)
    xmp = pdf_xmp(archival)
    assert "pdfaid" in xmp
    assert re.search(r'pdfaid:part="3"', xmp) and re.search(r'pdfaid:conformance="B"', xmp)
    plain = make_report(user=supervisor, kind="compliance", parameters=params)
    assert "pdfaid" not in pdf_xmp(plain)


def test_overdue_now_agrees_with_the_schedulers_first_overdue_day(estate):
    """Due 1 Apr with 7 grace days: the scheduler's first overdue day is 9 Apr.

    Not overdue on 8 Apr (the last grace day), overdue on 9 Apr.
    """
    from scheduling.models import overdue_day

    filt = estate["a1"].work_orders.first().tasks.first().task
    wo = b.preventive(estate["a1"], filt, "2025-04-01", overdue_on=overdue_day(dt.date(2025, 4, 1), 7))
    assert wo.overdue_on == dt.date(2025, 4, 9)

    def overdue_on(day):
        as_of = dt.datetime(day.year, day.month, day.day, 12, tzinfo=dt.UTC)
        f = compliance_figures(site_ids=[estate["site"].pk], start=dt.date(2025, 1, 1), end=day, as_of=as_of)
        return wo.pk in {o["work_order"].pk for o in f.overdue}

    assert not overdue_on(dt.date(2025, 4, 8))
    assert overdue_on(dt.date(2025, 4, 9))


def test_in_midwinter_readiness_is_for_the_running_season(estate):
    """On 15 Jan 2025 the season that began 25 Oct 2024 is running (its last cold day by the normals is in
    spring): a unit proven on 10 Oct 2024 is ready; one with no check before the cold is not ready."""
    from reports.compliance import FREEZE_NOT_READY

    freeze = next(t for t in estate["a1"].work_orders.all() if t.tasks.first().task_code == "preheater_freeze")
    proven = b.preventive(estate["a1"], freeze.tasks.first().task, "2024-10-05", done="2024-10-10")
    b.freeze_test(proven, estate["tech"], finished="2024-10-10", heaters=[estate["heater"]])
    as_of = dt.datetime(2025, 1, 15, 12, tzinfo=dt.UTC)
    f = compliance_figures(
        site_ids=[estate["site"].pk], start=dt.date(2024, 7, 1), end=dt.date(2025, 1, 15), as_of=as_of
    )
    status = {r["unit"].tag: r for r in f.freeze}
    assert status["AHU-01"]["status"] == FREEZE_READY
    assert status["AHU-01"]["season_start"] == dt.date(2024, 10, 25)
    assert status["AHU-02"]["status"] == FREEZE_NOT_READY


@time_machine.travel(dt.datetime(2025, 3, 5, 23, 30, tzinfo=dt.UTC), tick=False)
def test_the_reports_today_is_the_sites_not_the_requests_utc_date(org, supervisor, api_client):
    """At 23:30 UTC on 5 March it is already 6 March in Auckland: the report asked for there without dates
    covers the year up to 6 March, and a period starting on the 6th is allowed. A site on UTC is still on
    the 5th, so there the same period begins after today and is refused, naming that today."""
    auckland = SiteFactory(organisation=org, name="Harbour Quay", time_zone="Pacific/Auckland")
    reykjavik = SiteFactory(organisation=org, name="Old Harbour", time_zone="Atlantic/Reykjavik")
    api_client.force_authenticate(supervisor)

    def ask(site, **dates):
        return api_client.post(
            "/api/reports/", {"kind": "compliance", "parameters": {"sites": [site.pk], **dates}}, format="json"
        )

    answer = ask(auckland)
    assert answer.status_code == 202, answer.content
    assert (answer.json()["parameters"]["start"], answer.json()["parameters"]["end"]) == ("2024-03-06", "2025-03-06")
    assert ask(auckland, start="2025-03-06", end="2025-03-06").status_code == 202

    answer = ask(reykjavik)
    assert answer.json()["parameters"]["end"] == "2025-03-05"
    refused = ask(reykjavik, start="2025-03-06", end="2025-03-06")
    assert refused.status_code == 400
    assert refused.json()["errors"]["start"] == [
        "From: 6 Mar 2025 is after today (5 Mar 2025); a report covers days that have begun"
    ]


def critical_finding_with_late_corrective_work(estate) -> Site:
    """A critical freeze-protection finding of 11 Mar 2025 whose corrective work was due 1 Apr (overdue on 10 May),
    beside corrective work not yet due and work inside its grace (neither counted)."""
    site, a1, a2 = estate["site"], estate["a1"], estate["a2"]
    insp = b.inspection(a1.work_orders.order_by("pk").first(), estate["tech"], finished="2025-03-11")
    ev = b.evaluation(insp, "preheater_freeze", "preheater_freeze.freeze_trip_test", verdict="fail", reason="no trip")
    critical = b.finding(insp, ev, severity="critical", title="Frost thermostat did not trip", opened="2025-03-11")
    late = corrective(a1, approval="approved", due="2025-04-01")  # past due on 10 May: overdue
    Finding.objects.filter(pk=critical.pk).update(corrective_work_order=late)
    corrective(a2, approval="approved", due="2025-05-20")  # not yet due: not counted
    corrective(a2, approval="approved", due="2025-05-05", overdue_on=dt.date(2025, 5, 12))  # in its grace: not counted
    return site


def test_page_one_does_not_read_clean_beside_an_open_critical_finding_and_overdue_corrective_work(
    estate, supervisor, make_report, time_machine
):
    """Every preventive freeze test done on time, yet a critical freeze-protection finding 60 days old whose
    corrective work is past its due date: page 1 names both beside the on-time share, counted by the one overdue
    rule (``WorkOrder.is_overdue_on``). Corrective work due in the future, or inside its grace, is not counted."""
    site = critical_finding_with_late_corrective_work(estate)
    f = compliance_figures(site_ids=[site.pk], start=dt.date(2025, 1, 1), end=dt.date(2025, 3, 31), as_of=AS_OF)
    assert (f.critical_open, f.corrective_overdue) == (1, 1)

    time_machine.move_to(AS_OF, tick=False)
    report = make_report(
        user=supervisor, kind="compliance", parameters={"sites": [site.pk], "start": "2025-01-01", "end": "2025-03-31"}
    )
    first_page = " ".join(pdf_text(report).split("Page 1 of")[0].split())
    assert "60.0 %" in first_page  # the on-time share itself is unchanged
    assert "yet 1 critical finding open and 1 corrective work order overdue" in first_page
    assert "1 / 1 critical findings open / corrective work orders overdue now" in first_page
    assert "Not all in order: the on-time share counts preventive work only." in first_page


def test_page_one_says_no_critical_finding_and_no_overdue_corrective_work_plainly(estate, supervisor, make_report):
    """Without either, the figure reads 0 / 0 and page 1 makes no 'not all in order' remark."""
    report = make_report(
        user=supervisor,
        kind="compliance",
        parameters={"sites": [estate["site"].pk], "start": "2025-01-01", "end": "2025-03-31"},
    )
    first_page = " ".join(pdf_text(report).split("Page 1 of")[0].split())
    assert "0 / 0 critical findings open / corrective work orders overdue now" in first_page
    assert "Not all in order" not in first_page and ", yet " not in first_page


def test_the_managers_dashboard_and_site_page_count_what_page_one_counts(estate, org, client, time_machine):
    """The property manager's dashboard and site page give the critical findings open and the corrective work overdue
    beside their overdue and open-findings figures, from the same ComplianceFigures as the PDF's page 1."""
    site = critical_finding_with_late_corrective_work(estate)
    manager = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="pm.counts")
    site_grant(user=manager, site=site)
    time_machine.move_to(AS_OF, tick=False)
    client.force_login(manager)
    for url in ("/dashboard/", f"/dashboard/site/{site.pk}/"):
        page = client.get(url).content.decode()
        assert 'data-kpi="critical">1 critical<' in page, url
        assert 'data-kpi="corrective-overdue">1 of them corrective work<' in page, url
