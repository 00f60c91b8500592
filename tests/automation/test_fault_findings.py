"""A fault found in the trends is one finding of its unit, through the findings' own path, and closes with its fault.

Journey on a full unit of Dune Offices (organisation Trend Air, site kept in UTC), its outdoor-air damper stuck
open while the unit heats (Guideline 36 FC#6; the values of tests/automation/test_judging.py: outdoor −5 °C,
return 21 °C, the mixed air at −4 °C where a working damper at the 25 % minimum gives 14.5 °C):

- three stuck days judged: one open finding of the damper, source building-automation trends, rule FC6, its latest
  evidence window and share of the operating time in its text and fields, holding the fault's proposed corrective
  work; the fault points at it. Its property manager (granted the site) sees it on her findings page with its
  source and evidence, the supervisor's corrective proposal names it, the compliance PDF lists it; a property
  manager of another organisation sees none of it;
- judged again (a day rerun, a further day): still that one finding, seen on one day more;
- the damper freed, seven good days: the fault and the finding close, "absent for 7 days in the
  building-automation trends"; stuck again: a new fault with a new finding, never a second open one;
- the corrective work completed instead closes the fault and its finding as corrected;
- faults open before faults had findings get theirs from the data migration, once.

Every step runs on a set clock (time_machine), never today's date.
"""

import datetime as dt
import importlib
import re

import pytest
import time_machine
from django.apps import apps as django_apps
from django.test import override_settings
from django.urls import reverse

from accounts.models import Role
from accounts.services import site_grant
from automation.fault_models import Fault
from automation.judging import unit_day_judge
from automation.services import point_create
from inspections.models import Finding
from reports.models import Report
from reports.services import report_request
from scheduling.models import WorkOrder
from scheduling.services import task_library_install
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db
UTC = dt.UTC
DAY1 = dt.date(2026, 1, 12)  # a Monday in January
HEATING = {"OAT": -5.0, "RAT": 21.0, "SAT": 18.0, "SAT-SP": 18.0, "SF-STS": 1, "SF-SPD": 80, "OAD": 25}
HEATING |= {"HCV": 50, "CCV": 0}
WORKING_MAT, STUCK_MAT = 14.5, -4.0


def _start(day: dt.date) -> dt.datetime:
    return dt.datetime.combine(day, dt.time(), tzinfo=UTC)


def _days(n: int, first: dt.date) -> list[dt.date]:
    return [first + dt.timedelta(days=i) for i in range(n)]


def _heating_day(points, day, *, mat: float) -> None:
    put_day(points, _start(day), {**HEATING, "MAT": mat})


def _judge(ahu, day):
    with time_machine.travel(_start(day) + dt.timedelta(days=1, hours=1), tick=False):
        return unit_day_judge(ahu=ahu, day=day)


def _text(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


@pytest.fixture
def plant():
    org = OrganisationFactory(name="Trend Air", slug="trend-air")
    site = SiteFactory(organisation=org, name="Dune Offices", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-07")
    task_library_install()
    manager = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="pm-dune")
    site_grant(user=manager, site=site)
    other_org = OrganisationFactory(name="Other Air", slug="other-air")
    other_site = SiteFactory(organisation=other_org, name="Quay House", time_zone="UTC")
    stranger = make_person(organisation=other_org, role=Role.PROPERTY_MANAGER, username="pm-quay")
    site_grant(user=stranger, site=other_site)
    return {
        "ahu": ahu,
        "points": map_points(ahu),
        "damper": ahu.components.get(name="Outdoor-air damper"),
        "manager": manager,
        "stranger": stranger,
        "supervisor": make_person(organisation=org, role=Role.SUPERVISOR, username="boss-dune"),
    }


def _compliance_text(user, *, at: dt.datetime, django_capture_on_commit_callbacks) -> str:
    with time_machine.travel(at, tick=False), django_capture_on_commit_callbacks(execute=True):
        report = report_request(
            user=user, kind="compliance", parameters={"start": "2025-10-01", "end": "2025-12-31"}, pdfa=False
        )
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    # A line may break after a word's own hyphen ("building-" / "automation"): read it as the one word.
    return re.sub(r"\s+", " ", re.sub(r"(?<=\w)-\s+(?=\w)", "-", pdf_text(report)))


@override_settings(PLENUM_FAULT_CLOSE_AFTER_DAYS=7)
def test_a_stuck_damper_is_one_finding_with_its_source_seen_by_its_manager_and_closed_when_absent_a_week(
    plant, client, django_capture_on_commit_callbacks
):
    ahu, points, damper = plant["ahu"], plant["points"], plant["damper"]
    stuck = _days(3, DAY1)
    for day in stuck:
        _heating_day(points, day, mat=STUCK_MAT)
        _judge(ahu, day)

    # One open finding of the damper, from the trends, with its rule, evidence window and share.
    [fault] = Fault.objects.filter(ahu=ahu)
    [finding] = Finding.objects.filter(ahu=ahu)
    assert fault.finding == finding and list(finding.trend_faults.all()) == [fault]
    assert (finding.state, finding.source, finding.rule, finding.component) == ("open", "bas_trend", "FC6", damper)
    assert finding.inspection is None and finding.evaluation is None
    assert finding.organisation == ahu.building.site.organisation
    assert finding.source_words == "building-automation trends, rule FC6"
    assert finding.title == f"{fault.title} — Outdoor-air damper"
    assert finding.condition_code == "damper_position" and finding.severity == "medium"
    assert finding.opened_at == fault.first_seen_at and finding.last_seen_at == fault.last_seen_at
    assert finding.times_seen == 3 and finding.times_seen_words == "3 days in the trends"
    assert finding.evidence["share"] == pytest.approx(1.0, abs=0.05)
    assert finding.evidence["section"] == fault.section and finding.evidence["days"] == 3
    assert finding.evidence["end"] == (_start(stuck[-1]) + dt.timedelta(days=1)).isoformat()
    # The text begins with the rule; where it was found is its source, which every page says beside it (once).
    assert finding.reason.startswith("Rule FC6 (") and "found in" not in finding.reason.lower()
    assert "latest evidence window 14 Jan 2026" in finding.reason and "% of the operating time" in finding.reason
    # It holds the fault's proposed corrective work: the same one, not a second.
    [wo] = WorkOrder.objects.filter(ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE)
    assert finding.corrective_work_order == wo == fault.corrective_work_order

    at = _start(stuck[-1]) + dt.timedelta(days=1, hours=9)
    with time_machine.travel(at, tick=False):
        # Her findings page lists it with its source; its page names the rule's section and its latest window.
        client.force_login(plant["manager"])
        html = client.get("/site-findings/").content.decode()
        assert f'data-finding="{finding.pk}"' in html
        row = _text(html.split(f'data-finding="{finding.pk}"')[1].split("</tr>")[0])
        assert "Found in the building-automation trends, rule FC6" in row and "3 days in the trends" in row
        assert "Awaiting approval" in row
        page = _text(client.get(f"/site-findings/{finding.pk}/").content.decode())
        assert "Found by The building-automation trends, rule FC6" in page and fault.section in page
        assert "Latest window 14 Jan 2026 00:00 UTC – 15 Jan 2026 00:00 UTC" in page
        assert "data-fault-link" not in page  # the evidence chart is the supervisors'
        # The findings API tells a client the same: its source, the rule and the evidence beside the text.
        [shown] = [f for f in client.get(reverse("inspections_api:findings")).json() if f["id"] == finding.pk]
        assert (shown["source"], shown["rule"]) == ("bas_trend", "FC6")
        assert shown["source_words"] == "building-automation trends, rule FC6"
        assert shown["evidence"]["section"] == fault.section and shown["evidence"]["days"] == 3
        assert shown["evidence"]["window_end"] == finding.evidence["end"]
        assert shown["evidence"]["share"] == pytest.approx(1.0, abs=0.05)
        assert shown["times_seen"] == 3 and shown["text"].startswith("Rule FC6 (")
        # Another organisation's property manager: not on her list, not found by its address.
        client.force_login(plant["stranger"])
        assert f'data-finding="{finding.pk}"' not in client.get("/site-findings/").content.decode()
        assert client.get(f"/site-findings/{finding.pk}/").status_code == 404
        # The supervisor: the proposal names the finding and its source; the fault and the finding link each other.
        client.force_login(plant["supervisor"])
        corrective = _text(client.get("/corrective/").content.decode())
        assert f"{finding.title} found in the building-automation trends, rule FC6" in corrective
        fault_page = client.get(f"/faults/{fault.pk}/").content.decode()
        assert f'data-finding-link="{finding.pk}"' in fault_page
        assert f'data-fault-link="{fault.pk}"' in client.get(f"/site-findings/{finding.pk}/").content.decode()
        assert "Found in the building-automation trends" in client.get("/findings/").content.decode()
    # The compliance PDF lists it with its source.
    pdf = _compliance_text(
        plant["manager"], at=at, django_capture_on_commit_callbacks=django_capture_on_commit_callbacks
    )
    assert "Found in the building-automation trends, rule FC6" in pdf

    # Judged again: a day rerun and one more stuck day keep the one finding.
    _judge(ahu, stuck[-1])
    more = stuck[-1] + dt.timedelta(days=1)
    _heating_day(points, more, mat=STUCK_MAT)
    _judge(ahu, more)
    [again] = Finding.objects.filter(ahu=ahu)
    assert again.pk == finding.pk and again.state == "open" and again.times_seen == 4
    assert again.last_seen_at == _start(more) + dt.timedelta(days=1)

    # Freed: six good days leave it open, the seventh closes fault and finding, absent for 7 days.
    good = _days(7, more + dt.timedelta(days=1))
    for day in good:
        _heating_day(points, day, mat=WORKING_MAT)
        _judge(ahu, day)
        finding.refresh_from_db()
        assert finding.state == ("closed" if day == good[-1] else "open"), day
    fault.refresh_from_db()
    assert fault.state == Fault.State.CLOSED and fault.close_cause == Fault.CloseCause.ABSENT
    assert (finding.close_cause, finding.closed_at) == (Finding.CloseCause.ABSENT, fault.closed_at)
    assert finding.close_note == "absent for 7 days in the building-automation trends"
    with time_machine.travel(_start(good[-1]) + dt.timedelta(days=1, hours=9), tick=False):
        client.force_login(plant["manager"])
        page = _text(client.get(f"/site-findings/{finding.pk}/").content.decode())
    assert "absent for 7 days in the building-automation trends" in page

    # Stuck again: a new fault and a new finding; never two open.
    back = good[-1] + dt.timedelta(days=1)
    _heating_day(points, back, mat=STUCK_MAT)
    _judge(ahu, back)
    assert Fault.objects.filter(ahu=ahu).count() == Finding.objects.filter(ahu=ahu).count() == 2
    [new_fault] = Fault.objects.filter(ahu=ahu, state=Fault.State.OPEN)
    [new_finding] = Finding.objects.filter(ahu=ahu, state=Finding.State.OPEN)
    assert new_fault.finding == new_finding and new_finding.pk != finding.pk and new_finding.times_seen == 1


def test_completed_corrective_work_closes_the_fault_and_its_finding_as_corrected(plant):
    from scheduling.services import corrective_work_order_approve, work_order_assign, work_order_complete

    ahu = plant["ahu"]
    _heating_day(plant["points"], DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    fault = Fault.objects.get(ahu=ahu)
    wo = fault.finding.corrective_work_order
    tech = make_person(organisation=ahu.building.site.organisation, role=Role.TECHNICIAN)
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=1, hours=9), tick=False):
        corrective_work_order_approve(work_order=wo, by=plant["supervisor"])
        work_order_assign(work_order=wo, assignee=tech, by=plant["supervisor"])
        work_order_complete(work_order=wo, by=tech)
    fault.refresh_from_db()
    finding = Finding.objects.get(pk=fault.finding_id)
    assert (fault.state, fault.close_cause) == (Fault.State.CLOSED, Fault.CloseCause.CORRECTED)
    assert (finding.state, finding.close_cause) == (Finding.State.CLOSED, Finding.CloseCause.CORRECTED)


def test_a_supervisors_work_for_the_finding_becomes_the_faults(plant):
    """Work a supervisor made for the trend finding ("Make a work order") is the fault's corrective work the next
    night: no second proposal."""
    from inspections.services.findings import finding_work_order_attach
    from scheduling.services.made_work import OneOffTask, work_order_create

    ahu, points = plant["ahu"], plant["points"]
    _heating_day(points, DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    fault = Fault.objects.get(ahu=ahu)
    proposal = fault.corrective_work_order
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=1, hours=9), tick=False):
        from scheduling.services import corrective_work_order_reject

        corrective_work_order_reject(work_order=proposal, by=plant["supervisor"], reason="made as ad-hoc work")
        own = work_order_create(
            ahu=ahu,
            by=plant["supervisor"],
            kind=WorkOrder.Kind.CORRECTIVE,
            title="Free the outdoor-air damper",
            priority=WorkOrder.Priority.NORMAL,
            due_by=_start(DAY1) + dt.timedelta(days=2, hours=12),
            one_off=[OneOffTask(name="Free the damper linkage", minutes=60, skill="mechanical")],
        )
        finding_work_order_attach(finding=fault.finding, work_order=own, by=plant["supervisor"])
    day2 = DAY1 + dt.timedelta(days=1)
    _heating_day(points, day2, mat=STUCK_MAT)
    _judge(ahu, day2)
    fault.refresh_from_db()
    assert fault.corrective_work_order == own == fault.finding.corrective_work_order
    assert WorkOrder.objects.filter(ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE).count() == 2


def test_faults_open_before_findings_get_theirs_from_the_data_migration_once(plant):
    ahu = plant["ahu"]
    _heating_day(plant["points"], DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    fault = Fault.objects.get(ahu=ahu)
    made = fault.finding
    # As a database before findings stood for faults: the fault with no finding.
    Fault.objects.filter(pk=fault.pk).update(finding=None)
    Finding.objects.filter(pk=made.pk).delete()
    migration = importlib.import_module("automation.migrations.0005_open_faults_become_findings")
    migration.forwards(django_apps, None)
    migration.forwards(django_apps, None)
    fault.refresh_from_db()
    [finding] = Finding.objects.filter(ahu=ahu)
    assert fault.finding == finding
    assert (finding.source, finding.rule, finding.state, finding.component) == (
        "bas_trend",
        "FC6",
        "open",
        fault.component,
    )
    assert (finding.title, finding.reason, finding.evidence) == (made.title, made.reason, made.evidence)
    assert finding.corrective_work_order == fault.corrective_work_order
    # The judging carries on with it: the next day updates this finding.
    day2 = DAY1 + dt.timedelta(days=1)
    _heating_day(plant["points"], day2, mat=STUCK_MAT)
    _judge(ahu, day2)
    assert list(Finding.objects.filter(ahu=ahu).values_list("pk", "times_seen")) == [(finding.pk, 2)]


def test_a_freeze_finding_of_the_trends_never_decides_readiness_alone(api_client):
    """Readiness reads a freeze event through its event (not ready until a test passes after it), never through its
    finding: a unit whose preheater test passed on 8 October stays ready beside an open critical trend finding of
    freeze protection with no event behind it (the rule of inspections.freeze; a visit's finding would block)."""
    from inspections.freeze import READY, freeze_readiness
    from inspections.services.findings import SourceSeen, finding_observe_source
    from tests.flows.test_freeze_readiness import THRESHOLD_C, _send, _unit_with_a_preheater

    wo, tech, _heater, _site, _boss, _manager = _unit_with_a_preheater()
    passed = dt.datetime(2025, 10, 8, 10, tzinfo=UTC)
    with time_machine.travel(passed + dt.timedelta(hours=1), tick=False):
        _send(api_client, tech, wo, {"preheater_freeze.stage_on_temp": THRESHOLD_C}, passed)
    seen = dt.datetime(2025, 10, 9, 3, tzinfo=UTC)
    finding, opened = finding_observe_source(
        seen=SourceSeen(
            ahu=wo.ahu,
            component=None,
            source=Finding.Source.BAS_TREND,
            rule="FREEZE",
            severity="critical",
            title="Supply air near freezing",
            reason_parts=["Found in the building-automation trends"],
            condition_code="freeze_protection_failed",
            first_seen_at=seen,
            last_seen_at=seen + dt.timedelta(hours=1),
            times_seen=1,
        ),
        by=None,
    )
    assert opened and finding.state == "open" and finding.source_words.endswith("freeze-protection stages")
    at = dt.datetime(2025, 10, 10, 9, tzinfo=UTC)
    with time_machine.travel(at, tick=False):
        [r] = freeze_readiness(units=[wo.ahu], as_of=at)
    assert r.status == READY, r.reason


def test_a_faults_consequence_in_the_finding_reads_in_each_readers_units(plant, client):
    """FC6 with a measured supply airflow: the extra outdoor air and the heat it costs, in L/s and kW for a
    reader in SI, in cfm and Btu/h for one in US units — from the one stored finding, never its SI words."""
    ahu, points = plant["ahu"], dict(plant["points"])
    points["SAF"] = point_create(ahu=ahu, name=f"{ahu.tag}.SAF", brick_class="Supply_Air_Flow_Sensor")
    put_day(points, _start(DAY1), {**HEATING, "MAT": STUCK_MAT, "SAF": 2.0})
    _judge(ahu, DAY1)
    [finding] = Finding.objects.filter(ahu=ahu, rule="FC6")
    # Outdoor-air fraction (21 − (−4)) / (21 − (−5)) = 0.96 against the minimum; 2.0 m³/s of supply air.
    # Excess (0.96 − 0.25) × 2.0 m³/s = 1.42 m³/s, said in L/s (the SI airflow unit of the pages).
    assert "outdoor air fraction 0.96" in finding.reason and "1423 L/s extra" in finding.reason
    assert " kW of heating" in finding.reason
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=1, hours=9), tick=False):
        texts = {}
        for system in ("si", "us"):
            plant["manager"].unit_system = system
            plant["manager"].save(update_fields=["unit_system"])
            client.force_login(plant["manager"])
            [shown] = [f for f in client.get(reverse("inspections_api:findings")).json() if f["id"] == finding.pk]
            texts[system] = shown["text"]
    assert "1423 L/s extra" in texts["si"] and " kW of heating" in texts["si"]
    # 1.423 m³/s ÷ 0.000471947 m³/s per cfm (NIST SP 811) = 3015 cfm.
    assert "3015 cfm extra" in texts["us"] and "Btu/h of heating" in texts["us"]
    assert "L/s" not in texts["us"] and " kW" not in texts["us"]
