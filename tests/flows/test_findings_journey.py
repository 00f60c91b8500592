"""Findings a supervisor can work with, walked as the technician's phone and the supervisor's pages do.

- Ten monthly visits that see the same outdoor-air shortfall leave one open finding, seen ten times, whose age
  counts from the first visit; the shortfall comes from the design (the space needs more outdoor air than the
  unit's design minimum), so it is a design review and proposes no monthly corrective work.
- A failed freeze-protection test opens one finding per failed step and one corrective work order holding them.
- The supervisor's findings page says it in plain words with the numbers and the limit, no internal codes.
- Rejecting corrective work needs a reason, on the page and in the API; the reason is kept in the audit trail.

Numbers: ASHRAE 62.1-2019 Table 6-1 retail sales Rp = 3.8 L/s·person, Ra = 0.6 L/s·m², 15 people per
100 m² (from memory, as engineering.ventilation.SPACE_KINDS): 1,200 m² with its design 180 people → Vbz = 684 + 720 =
1,404 L/s = 47 % of the 3.0 m³/s supply; the unit's design minimum is 25 % (750 L/s). Outdoor 0 °C, return
22 °C, mixed 13.2 °C → outdoor-air fraction (22 − 13.2)/(22 − 0) = 40 % (mixing balance, ASHRAE Handbook —
Fundamentals, from memory): above the design minimum, below the requirement.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.urls import reverse

from accounts.models import AuditEvent
from inspections.models import Finding
from inventory.models import Site
from reports.compliance import compliance_figures
from scheduling.models import WorkOrder
from tests.factories.inspections import FINISHED, make_visit, r, sync_form
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import make_supervisor

SYNC = "/api/inspections/sync/"
# Names a person must never read: codes of space kinds, checks, conditions, checklist items.
CODES = re.compile(r"retail_sales|oa_fraction|ventilation_low|design_review|freeze_protection|[a-z]+_[a-z]+\.[a-z_]+")


def _shortfall_visits(api_client, *, visits: int = 10, mixed=None):
    """``visits`` monthly visits to one retail unit through the sync API, each measuring 40 % outdoor air
    (or the mixed-air temperature ``mixed[month]``)."""
    first_wo = None
    org = ahu = tech = None
    for month in range(visits):
        wo, tech = make_visit(
            tasks=["ventilation_check"],
            organisation=org,
            ahu=ahu,
            technician=tech,
            space_kind="retail_sales",
            floor_area_m2=1200.0,
            design_occupants=180,
        )
        org, ahu = wo.organisation, wo.ahu
        first_wo = first_wo or wo
        api_client.force_authenticate(tech)
        finished = FINISHED + dt.timedelta(days=30 * month)
        form = sync_form(
            wo,
            [
                r("visit.run_hours", 1000 + 300 * month),
                r("ventilation_check.outdoor_air", 0.0),
                r("ventilation_check.return_air", 22.0),
                r("ventilation_check.mixed_air", (mixed or {}).get(month, 13.2)),
            ],
            finished_at=finished,
        )
        [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
        assert out["status"] in {"stored", "flagged"}, out
        [seen] = out["findings"]
        [judged] = [e for e in out["evaluation"] if e["check"] == "oa_fraction_temperature"]
        assert "47 % of the supply air for sales (retail)" in judged["reason"] and "not met" in judged["reason"]
        assert not CODES.search(judged["reason"]), judged["reason"]
        assert seen["times_seen"] == month + 1, "the same finding, seen once more on each visit"
    return org, ahu


@pytest.mark.django_db
def test_ten_monthly_visits_with_the_same_design_shortfall_leave_one_design_review_finding(api_client, client):
    """One open finding, seen on 10 visits, first seen on the first (age 270 days on the last visit's day, in the
    over-180-days column of the figures), a design review with no corrective work; the page says so plainly."""
    org, ahu = _shortfall_visits(api_client)
    [finding] = Finding.objects.filter(ahu=ahu, state=Finding.State.OPEN)
    last = FINISHED + dt.timedelta(days=270)
    assert finding.times_seen == 10
    assert finding.opened_at == FINISHED and finding.last_seen_at == last
    assert finding.kind == Finding.Kind.DESIGN_REVIEW and finding.corrective_work_order is None
    assert not WorkOrder.objects.filter(ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE).exists()
    assert finding.age_days(now=last) == 270
    figures = compliance_figures(
        site_ids=[ahu.building.site_id], start=(last - dt.timedelta(days=30)).date(), end=last.date(), as_of=last
    )
    assert figures.findings_total == 1
    assert figures.findings_matrix[finding.severity]["over 180 days"] == 1

    boss = make_supervisor(org)
    api_client.force_authenticate(boss)
    [listed] = api_client.get("/api/inspections/findings/", {"unit": ahu.label_code}).json()
    assert listed["times_seen"] == 10 and listed["kind"] == "design_review"
    assert listed["first_seen"] == FINISHED.isoformat() and listed["last_seen"] == last.isoformat()
    assert listed["corrective_work_order"] is None and "47 %" in listed["text"]
    assert not CODES.search(listed["title"] + listed["text"]), listed
    api_client.force_authenticate(make_supervisor(org, username="us-boss", unit_system="us"))
    [in_us] = api_client.get("/api/inspections/findings/", {"unit": ahu.label_code}).json()
    assert "2975 cfm" in in_us["text"] and "L/s" not in in_us["text"], "1,404 L/s × 2.1189 cfm per L/s"
    api_client.force_authenticate(boss)
    client.force_login(boss)
    with time_machine.travel(last + dt.timedelta(hours=2), tick=False):
        page = client.get(reverse("frontend:findings"))
    assert page.status_code == 200
    text = re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page.content.decode()))
    assert "Design minimum outdoor air below the ventilation requirement" in text
    assert "Outdoor air below minimum" not in text
    assert "40 %" in text and "25 %" in text and "47 %" in text, "measured, design minimum and requirement"
    assert "1404 L/s" in text, "the requirement in the reader's units"
    assert "sales (retail)" in text, "the kind of space in plain words"
    assert "design review" in text.lower() and "no work order is proposed" in text
    assert "270" in text and "3 Mar 2025" in text and "28 Nov 2025" in text
    assert not CODES.search(text), CODES.search(text)


def _freeze_visit(api_client):
    """A unit with a 3-stage electric preheater switching on at −3 °C; freeze season far off (normals mild)."""
    wo, tech = make_visit(tasks=["preheater_freeze"])
    Site.objects.filter(pk=wo.ahu.building.site_id).update(
        freeze_season_start=dt.date(2025, 11, 1), normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
    )
    heater = ComponentFactory(
        ahu=wo.ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": -3.0},
    )
    api_client.force_authenticate(tech)
    readings = [
        r("visit.run_hours", 1200),
        r("preheater_freeze.stage_on_temp", 2.0, heater, note="stage 1 came in 5 K late"),
        r("preheater_freeze.stages", "not_ok", heater, note="stage 3 contactor does not pull in"),
        r("preheater_freeze.high_limit", "ok", heater),
        r("preheater_freeze.freeze_trip_temp", -1.0, note="tripped only at -1 °C"),
        r("preheater_freeze.freeze_trip_test", "not_ok", note="outdoor damper stayed open"),
    ]
    [out] = api_client.post(SYNC, {"forms": [sync_form(wo, readings)]}, format="json").json()["results"]
    assert out["status"] in {"stored", "flagged"}, out
    return wo, out


@pytest.mark.django_db
def test_a_failed_freeze_test_opens_one_finding_per_failed_step_and_one_corrective_work_order(api_client):
    """Four failed steps (late stage 1, a dead stage, trip at −1 °C, trip test) → four findings, one work order."""
    wo, out = _freeze_visit(api_client)
    failed = {e["item"] for e in out["evaluation"] if e["verdict"] == "fail"}
    assert len(failed) >= 3, out["evaluation"]
    findings = Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN)
    assert findings.count() == len(failed) == len(out["findings"])
    assert {f.evaluation.item_key for f in findings} == failed
    [cwo] = WorkOrder.objects.filter(ahu=wo.ahu, kind=WorkOrder.Kind.CORRECTIVE)
    assert {f.corrective_work_order_id for f in findings} == {cwo.pk}
    assert cwo.title.startswith("Freeze protection") and cwo.component is None
    for f in out["findings"]:
        assert f["title"].startswith("Freeze protection") and not CODES.search(f["title"] + f["text"]), f


@pytest.mark.django_db
def test_rejecting_corrective_work_needs_a_reason_on_the_page_and_in_the_api(api_client, client):
    """An empty or blank reason is refused with the field named (page 400 with the message beside the field, API
    400 with errors.reason); nothing changes. With a reason it is rejected and the reason is in the audit trail."""
    wo, _ = _freeze_visit(api_client)
    cwo = WorkOrder.objects.get(ahu=wo.ahu, kind=WorkOrder.Kind.CORRECTIVE)
    assert cwo.approval == WorkOrder.Approval.PENDING
    boss = make_supervisor(wo.organisation)
    client.force_login(boss)

    page = client.post(
        reverse("frontend:corrective"), {"work_order": str(cwo.public_id), "decision": "reject", "reason": "  "}
    )
    assert page.status_code == 400
    assert "Reason: a reason is needed to reject corrective work" in page.content.decode()
    api_client.force_authenticate(boss)
    url = f"/api/scheduling/work-orders/{cwo.public_id}/reject/"
    res = api_client.post(url, {"version": cwo.version, "reason": ""}, format="json")
    assert res.status_code == 400 and "reason" in res.json()["errors"], res.json()
    res = api_client.post(url, {"version": cwo.version, "reason": "x" * 301}, format="json")
    assert res.status_code == 400 and "at most 300" in res.json()["errors"]["reason"][0]
    cwo.refresh_from_db()
    assert cwo.approval == WorkOrder.Approval.PENDING and cwo.state != WorkOrder.State.CANCELLED

    page = client.post(
        reverse("frontend:corrective"),
        {"work_order": str(cwo.public_id), "decision": "reject", "reason": " Contractor replaced the heater "},
    )
    assert page.status_code == 302
    cwo.refresh_from_db()
    assert cwo.approval == WorkOrder.Approval.REJECTED and cwo.cancel_reason == "Contractor replaced the heater"
    event = AuditEvent.objects.get(
        object_type="scheduling.workorder", object_id=str(cwo.pk), action="corrective_reject"
    )
    assert event.changes["reason"] == "Contractor replaced the heater" and event.actor == boss


@pytest.mark.django_db
def test_a_shortfall_that_turns_out_to_be_the_designs_withdraws_its_pending_proposal(api_client, client):
    """First visit 20 % ± 3 (mixed 17.6 °C): below the 25 % design minimum, corrective work proposed. Next month
    40 %: the unit meets its design, the requirement is what fails, so the same finding (seen twice) becomes a
    design review and the proposal still awaiting approval is cancelled with a reason, audited."""
    _, ahu = _shortfall_visits(api_client, visits=2, mixed={0: 17.6})
    [finding] = Finding.objects.filter(ahu=ahu, state=Finding.State.OPEN)
    assert finding.times_seen == 2 and finding.kind == Finding.Kind.DESIGN_REVIEW
    cwo = finding.corrective_work_order
    assert cwo is not None and cwo.state == WorkOrder.State.CANCELLED and "design review" in cwo.cancel_reason
    assert AuditEvent.objects.filter(object_type="scheduling.workorder", object_id=str(cwo.pk), action="transition")
    # The withdrawn proposal is no longer offered for approval, and approving or rejecting it is refused in
    # words (it would otherwise "succeed" and change nothing).
    boss = make_supervisor(cwo.organisation)
    client.force_login(boss)
    page = client.get(reverse("frontend:corrective"))
    assert page.status_code == 200 and str(cwo.public_id) not in page.content.decode()
    assert (
        client.post(
            reverse("frontend:corrective"), {"work_order": str(cwo.public_id), "decision": "approve"}
        ).status_code
        == 404
    )
    api_client.force_authenticate(boss)
    for action in ("approve", "reject"):
        res = api_client.post(
            f"/api/scheduling/work-orders/{cwo.public_id}/{action}/",
            {"version": cwo.version, "reason": "not needed"},
            format="json",
        )
        assert res.status_code == 400, res.content
        words = res.json()["errors"]["approval"][0]
        assert words.startswith("this corrective work is cancelled: ") and "design review" in words, words
    cwo.refresh_from_db()
    assert cwo.approval == WorkOrder.Approval.PENDING and cwo.state == WorkOrder.State.CANCELLED
