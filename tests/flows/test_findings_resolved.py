"""Findings that the work in the field resolves, walked as the technician's phone syncs each visit.

Scenario: the final filters of a unit read over their final pressure drop on visit 1 (a finding, and corrective
work proposed for it); on visit 2, a preventive visit, the filters are replaced: the finding closes ("filters
replaced", at that visit) and the proposal, still awaiting approval, is withdrawn with a reason. Visits 3 and 4
read the new set clean; visit 5 reads it loaded again: a NEW finding, not the old one seen again. The outdoor-air
damper off its command on visit 1 and at it on visit 2 closes its finding "ok on a later visit".

Numbers: final filters rated clean 90 Pa, final 250 Pa at the design 3.0 m³/s (demo specs); read at design
airflow, 280 Pa is over the final value (fail) and 100-150 Pa is inside the span (engineering.filters, common
practice). Damper: command 50 %, position 70 % is 20 points off (fail above 10 points); 51 % is 1 point off
(ok within 5 points) — controls.damper_position_check, common practice.
"""

import datetime as dt

import pytest
import time_machine

from accounts.models import AuditEvent
from inspections.models import Finding
from scheduling.models import WorkOrder
from tests.factories.inspections import make_visit, r, sync_form

pytestmark = pytest.mark.django_db
SYNC = "/api/inspections/sync/"
DAY0 = dt.datetime(2026, 6, 5, 9, 30, tzinfo=dt.UTC)


def _visit(api_client, ahu, tech, *, days, final_dp, replaced_after=None, damper_pos=None, pre_dp=60):
    tasks = ["filter_check"] + (["filter_replace"] if replaced_after is not None else [])
    tasks += ["damper_actuator"] if damper_pos is not None else []
    wo, tech = make_visit(
        tasks=tasks, ahu=ahu, organisation=ahu.building.site.organisation if ahu else None, technician=tech
    )
    ahu = wo.ahu
    pre, final = ahu.components.get(name="Pre-filters"), ahu.components.get(name="Final filters")
    readings = [r("visit.run_hours", 1000 + 10 * days), r("visit.supply_airflow", 3000)]  # L/s: design airflow
    for bank, value in ((pre, pre_dp), (final, final_dp)):
        readings += [r("filter_check.dp", value, bank), r("filter_check.seated", "ok", bank)]
    if replaced_after is not None:
        for bank, value in ((pre, 52), (final, replaced_after)):
            readings += [r("filter_replace.replaced", "ok", bank), r("filter_replace.dp_after", value, bank)]
    if damper_pos is not None:
        damper = ahu.components.get(name="Outdoor-air damper")
        readings += [r("damper_actuator.command", 50, damper), r("damper_actuator.position", damper_pos, damper)]
    finished = DAY0 + dt.timedelta(days=days)
    with time_machine.travel(finished + dt.timedelta(hours=1), tick=False):
        api_client.force_authenticate(tech)
        res = api_client.post(SYNC, {"forms": [sync_form(wo, readings, finished_at=finished)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in ("stored", "flagged"), result
    return ahu, tech, finished


def _open(ahu, component_name, check):
    return Finding.objects.filter(
        ahu=ahu, component__name=component_name, problem__startswith=check, state=Finding.State.OPEN
    )


def test_replaced_filters_close_their_finding_and_withdraw_the_proposal_and_a_later_load_opens_a_new_one(
    api_client,
):
    """Visit 1 loaded → finding + pending proposal; visit 2 replaced → closed, withdrawn; visit 5 → a new finding.
    The damper off its command then at it closes its finding "ok on a later visit" at the second visit."""
    ahu, tech, _ = _visit(api_client, None, None, days=0, final_dp=280, damper_pos=70)
    [loaded] = _open(ahu, "Final filters", "filter_loading")
    [damper] = _open(ahu, "Outdoor-air damper", "damper_position")
    proposal = loaded.corrective_work_order
    assert proposal is not None and proposal.approval == WorkOrder.Approval.PENDING
    assert "Final filters" in proposal.title and "Pre-filters" not in proposal.title

    ahu, tech, second = _visit(api_client, ahu, tech, days=30, final_dp=290, replaced_after=95, damper_pos=51)
    loaded.refresh_from_db()
    damper.refresh_from_db()
    assert (loaded.state, loaded.close_cause, loaded.closed_at) == ("closed", "replaced", second)
    assert loaded.get_close_cause_display() == "Filters replaced"
    assert (damper.state, damper.close_cause, damper.closed_at) == ("closed", "ok_later", second)
    assert damper.get_close_cause_display() == "Ok on a later visit"
    assert not _open(ahu, "Final filters", "filter_loading").exists(), "the old set's reading opens nothing"
    proposal.refresh_from_db()
    assert proposal.state == WorkOrder.State.CANCELLED and "resolved" in proposal.cancel_reason
    assert AuditEvent.objects.filter(action="finding_close", object_id=str(loaded.pk)).exists()
    # The damper's corrective work, awaiting approval and now holding only closed findings, is withdrawn too.
    damper_wo = damper.corrective_work_order
    damper_wo.refresh_from_db()
    assert damper_wo.state == WorkOrder.State.CANCELLED

    for days, dp in ((60, 100), (90, 150)):
        ahu, tech, _ = _visit(api_client, ahu, tech, days=days, final_dp=dp)
    assert not Finding.objects.filter(ahu=ahu, state=Finding.State.OPEN).exists()

    ahu, tech, fifth = _visit(api_client, ahu, tech, days=120, final_dp=280)
    [again] = _open(ahu, "Final filters", "filter_loading")
    assert again.pk != loaded.pk and again.opened_at == fifth and again.times_seen == 1
    assert again.corrective_work_order is not None and again.corrective_work_order.pk != proposal.pk
    assert again.corrective_work_order.state != WorkOrder.State.CANCELLED


def test_an_older_visit_synced_late_does_not_close_a_newer_failure(api_client):
    """A form finished before the finding's latest failure, synced afterwards, leaves the finding open."""
    ahu, tech, _ = _visit(api_client, None, None, days=30, final_dp=280, damper_pos=70)
    ahu, tech, _ = _visit(api_client, ahu, tech, days=0, final_dp=100, damper_pos=51)
    assert _open(ahu, "Final filters", "filter_loading").exists()
    assert _open(ahu, "Outdoor-air damper", "damper_position").exists()


def test_corrective_work_holds_only_the_findings_it_names(api_client):
    """Pre-filters loaded on visit 1 (work proposed "Filter loaded — Pre-filters"); on visit 2 both banks are
    loaded: the final filters' finding gets its own work order, not the one named for the pre-filters. Both
    banks loaded on a unit's first visit: one work order naming both banks.

    Pre-filters rated final 150 Pa (demo specs): 170 Pa at design airflow is over it; 60 Pa is inside the span."""
    ahu, tech, _ = _visit(api_client, None, None, days=0, final_dp=120, pre_dp=170)
    [pre] = _open(ahu, "Pre-filters", "filter_loading")
    assert pre.corrective_work_order.title == "Filter loaded — Pre-filters"
    ahu, tech, _ = _visit(api_client, ahu, tech, days=30, final_dp=280, pre_dp=175)
    [final] = _open(ahu, "Final filters", "filter_loading")
    pre.refresh_from_db()
    assert final.corrective_work_order_id != pre.corrective_work_order_id
    assert final.corrective_work_order.title == "Filter loaded — Final filters"
    assert {f.component.name for f in pre.corrective_work_order.source_findings.all()} == {"Pre-filters"}

    other, _, _ = _visit(api_client, None, None, days=0, final_dp=280, pre_dp=170)
    [a] = _open(other, "Pre-filters", "filter_loading")
    [b] = _open(other, "Final filters", "filter_loading")
    assert a.corrective_work_order_id == b.corrective_work_order_id
    assert a.corrective_work_order.title == "Filter loaded — Pre-filters and Final filters"


def test_approved_work_whose_findings_a_later_visit_resolved_stays_and_the_board_says_so(api_client, client):
    """The damper's corrective work approved after visit 1; visit 2 reads the damper at its command: the finding
    closes, the approved work is left to the supervisor, and the board says its findings are already resolved."""
    from scheduling.services import corrective_work_order_approve
    from tests.factories.scheduling import make_supervisor

    ahu, tech, _ = _visit(api_client, None, None, days=0, final_dp=120, damper_pos=70)
    [damper] = _open(ahu, "Outdoor-air damper", "damper_position")
    boss = make_supervisor(ahu.building.site.organisation)
    wo = corrective_work_order_approve(work_order=damper.corrective_work_order, by=boss)
    ahu, tech, second = _visit(api_client, ahu, tech, days=2, final_dp=120, damper_pos=51)
    damper.refresh_from_db()
    wo.refresh_from_db()
    assert damper.state == Finding.State.CLOSED and damper.close_cause == "ok_later"
    assert wo.state in WorkOrder.OPEN_STATES and wo.approval == WorkOrder.Approval.APPROVED
    client.force_login(boss)
    monday = wo.due_date - dt.timedelta(days=wo.due_date.weekday())
    with time_machine.travel(second + dt.timedelta(hours=2), tick=False):
        page = client.get("/board/", {"week": monday.isoformat(), "all": "due"})
    html = page.content.decode()
    assert page.status_code == 200 and wo.title in html
    assert "Its findings are already resolved" in html


def test_a_later_partial_ok_does_not_close_a_freeze_protection_finding(api_client):
    """The freeze trip test failed on visit 1 (critical); visit 2 answers only the trip test ok: the finding stays
    open, for the corrective retest of every step to close."""
    from inventory.models import Site
    from tests.flows.test_findings_journey import _freeze_visit

    wo, _ = _freeze_visit(api_client)
    Site.objects.filter(pk=wo.ahu.building.site_id).update(freeze_season_start=None)
    trip = Finding.objects.get(ahu=wo.ahu, problem="preheater_freeze.freeze_trip_test", state=Finding.State.OPEN)
    later, tech = make_visit(
        tasks=["preheater_freeze"], ahu=wo.ahu, organisation=wo.organisation, technician=wo.assignee
    )
    finished = trip.opened_at + dt.timedelta(days=7)
    with time_machine.travel(finished + dt.timedelta(hours=1), tick=False):
        api_client.force_authenticate(tech)
        readings = [r("visit.run_hours", 1300), r("preheater_freeze.freeze_trip_test", "ok")]
        res = api_client.post(SYNC, {"forms": [sync_form(later, readings, finished_at=finished)]}, format="json")
    assert res.json()["results"][0]["status"] in ("stored", "flagged")
    trip.refresh_from_db()
    assert trip.state == Finding.State.OPEN and trip.close_cause == ""


@pytest.mark.parametrize(
    ("trip_c", "closes"),
    [
        (12.5, True),  # set too high now: the too-low condition is gone; the nuisance-trip watch is its own matter
        (3.3, True),  # within the band
        (2.2, False),  # still below the band (too little margin): the freeze-protection condition is still there
    ],
)
def test_a_later_complete_freeze_test_settles_a_trip_set_too_low(api_client, time_machine, trip_c, closes):
    """Visit 1: the frost thermostat trips at 1.0 °C, below the 2 °C floor (fail; ok 2.5–5.5 °C, above 5.5 °C a watch
    for nuisance trips: common practice, inspections.checklists.FREEZE_TRIP_*): a freeze-protection finding opens,
    its corrective work awaiting approval (the season is far off). Visit 2, a week later, is a complete freeze test
    (every step answered) on a new preventive visit. A setting now above the band (12.5 °C, a watch that still
    protects the coil) or within it settles the finding "ok on a later visit" and withdraws the proposal; one still
    just below the band (2.2 °C, a watch for too little margin) does not."""
    from inspections.models import Evaluation
    from inventory.models import Site
    from tests.flows.test_freeze_readiness import FAILED_ON, _send, _unit_with_a_preheater

    wo, tech, _heater, site, _boss, _manager = _unit_with_a_preheater()
    Site.objects.filter(pk=site.pk).update(freeze_season_start=None)  # mild normals: the season far off
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    _send(api_client, tech, wo, {"preheater_freeze.freeze_trip_temp": 1.0}, FAILED_ON)
    [low] = Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN)
    assert (low.problem, low.condition_code) == ("preheater_freeze.freeze_trip_temp", "freeze_protection_failed")
    proposal = low.corrective_work_order
    assert proposal.approval == WorkOrder.Approval.PENDING

    later, _ = make_visit(tasks=["preheater_freeze"], ahu=wo.ahu, organisation=wo.organisation, technician=tech)
    retest_on = FAILED_ON + dt.timedelta(days=7)
    time_machine.move_to(retest_on + dt.timedelta(hours=1), tick=False)
    out = _send(api_client, tech, later, {"preheater_freeze.freeze_trip_temp": trip_c}, retest_on)
    trip = Evaluation.objects.get(inspection_id=out["inspection_id"], item_key="preheater_freeze.freeze_trip_temp")
    assert trip.verdict == ("ok" if trip_c == 3.3 else "watch")
    low.refresh_from_db()
    proposal.refresh_from_db()
    assert out["findings"] == []
    if closes:
        assert (low.state, low.close_cause, low.closed_at) == (Finding.State.CLOSED, "ok_later", retest_on)
        assert proposal.state == WorkOrder.State.CANCELLED and "resolved" in proposal.cancel_reason
        assert not Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN).exists(), "the watch opens none"
    else:
        assert (low.state, low.close_cause) == (Finding.State.OPEN, "")
        assert proposal.state in WorkOrder.OPEN_STATES
