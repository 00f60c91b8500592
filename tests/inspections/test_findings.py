"""Findings and their corrective work: a repeat failure is the same open finding, holding the same work order."""

import datetime as dt

import pytest

from inspections.models import Finding
from scheduling.models import WorkOrder
from scheduling.services import corrective_work_order_reject, work_order_cancel
from tests.factories.inspections import FINISHED, component, make_visit, r, sync_form
from tests.factories.scheduling import make_supervisor

SYNC = "/api/inspections/sync/"


def _drain_pan_visit(
    api_client, *, organisation=None, ahu=None, technician=None, days_later=0, pan="standing", drains="ok"
):
    wo, tech = make_visit(tasks=["drain_pan"], organisation=organisation, ahu=ahu, technician=technician)
    drain = component(wo.ahu, "Drain pan")
    api_client.force_authenticate(tech)
    form = sync_form(
        wo,
        [
            r("visit.run_hours", 1000 + 10 * days_later),
            r("drain_pan.pan_condition", pan, drain, note="water standing"),
            r("drain_pan.drains_freely", drains, drain, note="slow"),
        ],
        finished_at=FINISHED + dt.timedelta(days=days_later),
    )
    [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert out["status"] in {"stored", "flagged"}, out
    return wo, tech, drain, [Finding.objects.get(pk=f["id"]) for f in out["findings"]]


def _corrective(findings, item_key):
    return next(f.corrective_work_order for f in findings if f.evaluation.item_key == item_key)


@pytest.mark.django_db
def test_a_repeat_drain_pan_failure_is_one_finding_seen_twice_with_one_work_order(api_client):
    """Standing water on two visits a week apart: one open finding, first seen on the first visit, last seen and
    seen twice on the second, holding the one corrective work order."""
    wo, tech, drain, first = _drain_pan_visit(api_client)
    _, _, _, second = _drain_pan_visit(
        api_client, organisation=wo.organisation, ahu=wo.ahu, technician=tech, days_later=7
    )
    cwo = _corrective(first, "drain_pan.pan_condition")
    assert _corrective(second, "drain_pan.pan_condition") == cwo
    [f] = Finding.objects.filter(ahu=wo.ahu, state="open")
    assert f.times_seen == 2 and f.opened_at == FINISHED and f.last_seen_at == FINISHED + dt.timedelta(days=7)
    assert f.latest_inspection_id != f.inspection_id
    assert WorkOrder.objects.filter(ahu=wo.ahu, kind=WorkOrder.Kind.CORRECTIVE).count() == 1
    assert cwo.component == drain and cwo.condition_code == ""


@pytest.mark.django_db
def test_a_failed_checklist_step_is_titled_by_its_test_and_step_and_the_part(api_client):
    """Each failed step of a test without a scheduling condition reads "<test>: <step> — <part>", the names the
    technician saw on the checklist (inspections/checklists.py, drain_pan)."""
    _, _, _, found = _drain_pan_visit(api_client, drains="not_ok")
    assert sorted(f.title for f in found) == [
        "Condensate drain pan: Pan condition — Drain pan",
        "Condensate drain pan: Water poured into the pan drains away freely — Drain pan",
    ]


@pytest.mark.django_db
def test_a_different_item_on_the_same_part_gets_its_own_corrective_work(api_client):
    """Standing water and a blocked drain are two problems: two work orders, each reused on a repeat."""
    wo, tech, _, first = _drain_pan_visit(api_client, drains="not_ok")
    _, _, _, second = _drain_pan_visit(
        api_client, organisation=wo.organisation, ahu=wo.ahu, technician=tech, days_later=7, drains="not_ok"
    )
    pan, drains = _corrective(first, "drain_pan.pan_condition"), _corrective(first, "drain_pan.drains_freely")
    assert pan != drains
    assert {_corrective(second, "drain_pan.pan_condition"), _corrective(second, "drain_pan.drains_freely")} == {
        pan,
        drains,
    }


@pytest.mark.django_db
def test_rejected_or_closed_corrective_work_is_not_reused(api_client):
    """After a supervisor rejects the first proposal, and after the second is cancelled, each repeat opens new work."""
    wo, tech, _, first = _drain_pan_visit(api_client)
    boss = make_supervisor(wo.organisation)
    rejected = _corrective(first, "drain_pan.pan_condition")
    corrective_work_order_reject(work_order=rejected, by=boss, reason="cleaned on the visit")
    _, _, _, second = _drain_pan_visit(
        api_client, organisation=wo.organisation, ahu=wo.ahu, technician=tech, days_later=7
    )
    fresh = _corrective(second, "drain_pan.pan_condition")
    assert fresh != rejected and fresh.approval == WorkOrder.Approval.PENDING
    work_order_cancel(work_order=fresh, by=boss, reason="unit being replaced")
    _, _, _, third = _drain_pan_visit(
        api_client, organisation=wo.organisation, ahu=wo.ahu, technician=tech, days_later=14
    )
    assert _corrective(third, "drain_pan.pan_condition") not in {rejected, fresh}


@pytest.mark.django_db
def test_low_outdoor_air_by_both_methods_on_one_visit_is_one_finding_and_one_work_order(api_client):
    """Temperatures (x = 2/22 = 0.09 ± 0.03) and CO2 (x = (1400 − 1350)/(1400 − 400) = 0.05 ± 0.13 with
    ±(50 ppm + 3 %) sensors, top of the band 0.18) both below 0.25: one problem, one finding, one work order."""
    wo, tech = make_visit(tasks=["ventilation_check"])
    api_client.force_authenticate(tech)
    form = sync_form(
        wo,
        [
            r("visit.run_hours", 1200),
            r("ventilation_check.outdoor_air", 0),
            r("ventilation_check.return_air", 22),
            r("ventilation_check.mixed_air", 20),
            r("ventilation_check.outdoor_co2", 400),
            r("ventilation_check.return_co2", 1400),
            r("ventilation_check.supply_co2", 1350),
        ],
    )
    [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    fails = [e for e in out["evaluation"] if e["verdict"] == "fail"]
    assert {e["check"] for e in fails} == {"oa_fraction_temperature", "oa_fraction_co2"}
    [finding] = out["findings"]  # one problem: one finding, seen on one visit
    assert finding["times_seen"] == 1 and finding["corrective_work_order"] is not None


def _approved_and_assigned(cwo, tech):
    from scheduling.services import corrective_work_order_approve, work_order_assign

    boss = make_supervisor(cwo.organisation)
    corrective_work_order_approve(work_order=cwo, by=boss)
    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    return boss


def _open_findings_total(finding, as_of) -> int:
    from reports.compliance import compliance_figures

    site_id = finding.ahu.building.site_id
    start = (as_of - dt.timedelta(days=60)).date()
    return compliance_figures(site_ids=[site_id], start=start, end=as_of.date(), as_of=as_of).findings_total


@pytest.mark.django_db
def test_completing_the_corrective_work_closes_its_findings_and_rework_reopens_them(api_client):
    """Done at 14:00: the finding is closed at 14:00 (audited) and leaves the open count; sent back, it is open."""
    from accounts.models import AuditEvent
    from scheduling.services import work_order_complete, work_order_transition

    _, tech, _, found = _drain_pan_visit(api_client)
    finding = next(f for f in found if f.evaluation.item_key == "drain_pan.pan_condition")
    cwo = finding.corrective_work_order
    boss = _approved_and_assigned(cwo, tech)
    done_at = FINISHED + dt.timedelta(days=2, hours=3)
    assert _open_findings_total(finding, done_at) == 1
    work_order_complete(work_order=cwo, by=tech, completed_at=done_at)
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLOSED and finding.closed_at == done_at
    assert finding.close_cause == Finding.CloseCause.CORRECTED and finding.closed_by == tech
    assert AuditEvent.objects.filter(action="finding_close", object_id=str(finding.pk)).exists()
    assert _open_findings_total(finding, done_at + dt.timedelta(hours=1)) == 0
    assert _open_findings_total(finding, done_at - dt.timedelta(hours=1)) == 1, "open before it was done"
    work_order_transition(work_order=cwo, to_state=WorkOrder.State.IN_PROGRESS, by=boss, reason="still wet")
    finding.refresh_from_db()
    assert finding.state == Finding.State.OPEN and finding.closed_at is None and finding.close_cause == ""


@pytest.mark.django_db
def test_cancelled_corrective_work_leaves_its_finding_open(api_client):
    """Nothing was repaired, so the deficiency stands."""
    _, _, _, found = _drain_pan_visit(api_client)
    finding = found[0]
    work_order_cancel(work_order=finding.corrective_work_order, by=make_supervisor(finding.organisation), reason="dup")
    finding.refresh_from_db()
    assert finding.state == Finding.State.OPEN


@pytest.mark.django_db
def test_an_amendment_that_clears_a_failure_closes_its_finding_and_a_new_failure_opens_one(api_client):
    """A mistyped "standing water" corrected to clean closes that finding; corrected back, a new one opens."""
    from inspections.services import inspection_amend

    _, tech, drain, found = _drain_pan_visit(api_client, drains="not_ok")
    finding = next(f for f in found if f.evaluation.item_key == "drain_pan.pan_condition")
    other = next(f for f in found if f.evaluation.item_key != "drain_pan.pan_condition")
    inspection = finding.inspection
    fix = [r("drain_pan.pan_condition", "clean", drain)]
    amendment = inspection_amend(
        inspection=inspection, by=tech, reason="tapped the wrong choice", readings=fix, unit_system="si"
    )
    finding.refresh_from_db()
    other.refresh_from_db()
    assert finding.state == Finding.State.CLOSED and finding.close_cause == Finding.CloseCause.AMENDED
    assert finding.cleared_by_amendment == amendment and finding.closed_at == amendment.created_at
    assert other.state == Finding.State.OPEN, "the drain that was not corrected still fails"
    assert [c.get("cleared_finding") for c in amendment.changes] == [finding.pk]
    back = [r("drain_pan.pan_condition", "standing", drain)]
    again = inspection_amend(
        inspection=inspection, by=tech, reason="it was standing after all", readings=back, unit_system="si"
    )
    reopened = Finding.objects.get(amendment=again)
    assert reopened.state == Finding.State.OPEN and reopened.evaluation.item_key == "drain_pan.pan_condition"


@pytest.mark.parametrize(
    ("derived", "expected"),
    [
        # 40 % ± 3 against a 25 % design minimum, the space needs 1.404 m³/s but the design gives 0.75: design.
        ({"oa_fraction": 0.40, "uncertainty": 0.03, "design_min_oa_fraction": 0.25}, True),
        # 31 % ± 3 straddles a 32 % design minimum (cannot decide there), the requirement fails it: design.
        ({"oa_fraction": 0.31, "uncertainty": 0.03, "design_min_oa_fraction": 0.32}, True),
        # 20 % ± 3 is wholly below the 25 % design minimum: the unit itself is short, corrective work.
        ({"oa_fraction": 0.20, "uncertainty": 0.03, "design_min_oa_fraction": 0.25}, False),
        # The requirement (0.51 m³/s) is within the design minimum (0.75 m³/s): no design shortfall.
        (
            {
                "oa_fraction": 0.40,
                "uncertainty": 0.03,
                "design_min_oa_fraction": 0.25,
                "required_outdoor_airflow_m3s": 0.51,
            },
            False,
        ),
        # The evaluation's own flag wins over the comparison.
        ({"oa_fraction": 0.40, "uncertainty": 0.03, "design_min_oa_fraction": 0.25, "design_shortfall": False}, False),
    ],
)
def test_a_shortfall_from_the_design_is_a_design_review(derived, expected):
    """Design review only when the requirement exceeds the design minimum outdoor air and the unit does not fail
    that design minimum (engineering.outdoor_air.fraction_check fails only a band wholly below it)."""
    from inspections.services.findings import is_design_review

    base = {"required_outdoor_airflow_m3s": 1.404, "design_min_outdoor_airflow_m3s": 0.75}
    assert is_design_review(check="oa_fraction_temperature", derived={**base, **derived}) is expected
    assert is_design_review(check="filter_loading", derived={**base, **derived}) is False


@pytest.mark.django_db
def test_a_findings_audit_reads_no_organisation_row(api_client):
    """Closing a finding writes its audit with the finding's organisation without reading the organisation's row:
    findings closed by the dozen (a completed work order, the trends' nightly run) cost no query each for it."""
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    from accounts.models import AuditEvent
    from inspections.services.findings.record import finding_close

    wo, _tech, _drain, findings = _drain_pan_visit(api_client)
    fresh = [Finding.objects.get(pk=f.pk) for f in findings]  # as a service reads them: the finding's row alone
    with CaptureQueriesContext(connection) as seen:
        for finding in fresh:
            finding_close(finding, at=FINISHED + dt.timedelta(days=1), cause=Finding.CloseCause.CORRECTED, by=None,
                          changes={})  # fmt: skip
    assert not [q["sql"] for q in seen.captured_queries if "accounts_organisation" in q["sql"]]
    events = AuditEvent.objects.filter(action="finding_close", object_id__in=[str(f.pk) for f in fresh])
    assert events.count() == len(fresh) and {e.organisation_id for e in events} == {wo.organisation_id}
