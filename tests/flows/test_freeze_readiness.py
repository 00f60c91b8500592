"""A failed preheater test before the freeze season: every page, the API and the PDF say "not ready" and why.

The contractor's demo: a technician's phone sends a preheater and freeze-protection test that failed
(stage 1 switched on at −9 °C against a −3 °C threshold, not every stage energised, the trip sequence
failed) 17 days before the site's freeze season. The property manager's site page, the dashboard, the
freeze-readiness API and the compliance report PDF must all say the unit is not ready, with the failed
steps and the state of the corrective work, because all of them read inspections.freeze. The retest on
the corrective work order passes every step, which closes the findings, and all of them say ready again.

The demo's round on 2 December (inside the season): the technicians test freeze protection on a unit with a
glycol preheat coil and on units with an electric preheater. Whatever protects the unit, its latest test is
the one every page, the API and the PDF read: a passing one is named as the last test, a failed one keeps
the unit not ready.
"""

import datetime as dt
import io
import re

import pytest
import time_machine
from django.core.management import call_command
from django.urls import reverse

from accounts.models import Role, User
from accounts.services import site_grant
from inspections.models import Finding
from inventory.models import AHU, Site
from reports.models import Report
from scheduling.models import MeterReading, WorkOrder
from scheduling.services import work_order_assign
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_form
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import make_supervisor
from tests.reports.conftest import pdf_text

SYNC = "/api/inspections/sync/"
SEASON_START = dt.date(2025, 10, 20)
THRESHOLD_C = -3.0
FAILED_ON = dt.datetime(2025, 10, 3, 10, tzinfo=dt.UTC)
RETEST_ON = dt.datetime(2025, 10, 8, 10, tzinfo=dt.UTC)
STAGE_ONE = "Entering-air temperature at which stage 1 switched on"


def _answers(doc: dict, values: dict) -> list[dict]:
    """Every item of the checklist the phone fetched: the given values, else what passes (an ok answer or the
    middle of the ok band from the checklist's own limits)."""
    readings = []
    for t in doc["templates"]:
        for it in t["items"]:
            if it["kind"] == "photo":
                continue
            if it["key"] in values:
                value = values[it["key"]]
            elif it["kind"] == "check":
                value = "ok"
            elif it["kind"] == "text":
                value = "in order"
            elif it["kind"] == "choice":
                value = next(c["value"] for c in it["choices"] if c["ok"])
            else:
                ok, plausible = it["limits"]["display"]["ok"], it["limits"]["display"]["plausible"]
                lo = ok["min"] if ok["min"] is not None else plausible["min"]
                hi = ok["max"] if ok["max"] is not None else plausible["max"]
                value = round((lo + hi) / 2, 1)
            code = (it["component"] or {}).get("label_code")
            note = "" if value == "ok" else "seen on the test"
            readings.append({"item": it["key"], "component": code, "value": value, "note": note})
    return readings


def _send(api_client, tech, wo, values, finished_at, status="stored") -> dict:
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    # The answers are in the person's own units, as the phone sends them.
    form = sync_form(
        wo,
        _answers(doc, values),
        version=doc["work_order"]["version"],
        finished_at=finished_at,
        unit_system=doc["unit_system"],
    )
    [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert out["status"] == status, out["flags"]
    return out


def _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks) -> dict:
    """The site page, the dashboard, the API and the compliance PDF, as the property manager gets them."""
    client.force_login(manager)
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": site.pk})).content.decode()
    dashboard = client.get(reverse("frontend:dashboard")).content.decode()
    api_client.force_authenticate(manager)
    [api] = api_client.get("/api/inspections/freeze-readiness/").json()
    with django_capture_on_commit_callbacks(execute=True):
        res = api_client.post(
            "/api/reports/",
            {"kind": "compliance", "parameters": {"sites": [site.pk], "start": "2025-01-01", "end": "2025-10-31"}},
            format="json",
        )
    assert res.status_code == 202, res.json()
    report = Report.objects.get(public_id=res.json()["public_id"])
    assert report.status == Report.Status.DONE, report.error
    flat = " ".join  # pages and PDFs wrap lines; compare the words
    return {
        "page": flat(page.split()),
        "dashboard": flat(dashboard.split()),
        "api": api,
        "pdf": flat(pdf_text(report).split()),
    }


def _unit_with_a_preheater():
    """A preheater-test visit to a unit with a 3-stage electric preheater, its technician, the site (mild
    normals: only the computed season start, 20 October, decides the window and "near the season"), a
    supervisor and a property manager granted the site."""
    wo, tech = make_visit(tasks=["preheater_freeze"])
    site = wo.ahu.building.site
    Site.objects.filter(pk=site.pk).update(
        freeze_season_start=SEASON_START, normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
    )
    site.refresh_from_db()
    heater = ComponentFactory(
        ahu=wo.ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": THRESHOLD_C},
    )
    boss = make_supervisor(wo.organisation)
    manager = make_person(organisation=wo.organisation, role=Role.PROPERTY_MANAGER)
    site_grant(user=manager, site=site)
    return wo, tech, heater, site, boss, manager


@pytest.mark.django_db
def test_failed_preheater_test_says_not_ready_everywhere_until_a_passing_retest(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    wo, tech, heater, site, boss, manager = _unit_with_a_preheater()

    # 3 October, 17 days before the season: the phone sends the failed test.
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    out = _send(
        api_client,
        tech,
        wo,
        {
            "preheater_freeze.stage_on_temp": -9.0,
            "preheater_freeze.stages": "not_ok",
            "preheater_freeze.freeze_trip_test": "not_ok",
        },
        FAILED_ON,
    )
    assert out["work_order_state"] == "completed"  # the visit is done; what it found is not
    findings = Finding.objects.filter(inspection_id=out["inspection_id"])
    assert findings.count() == 3 and {f.severity for f in findings} == {"critical"}
    [cwo] = {f.corrective_work_order for f in findings if f.component_id == heater.pk}

    time_machine.move_to(dt.datetime(2025, 10, 5, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    reason = says["api"]["reason"]
    assert says["api"]["status"] == "not_ready" and not says["api"]["ready"]
    assert reason.startswith("not ready — test failed on 3 Oct 2025: ")
    assert STAGE_ONE in reason and "Every stage energises in sequence" in reason
    assert "On trip: fan stops" in reason  # the third failed step
    # Urgent and approved at once (inside 30 days of the season), not yet assigned:
    assert reason.endswith("; corrective work planned") and says["api"]["tested_on"] == "2025-10-03"
    assert "Not ready" in says["page"] and "test failed on 3 Oct 2025" in says["page"] and STAGE_ONE in says["page"]
    assert "Ready, tested" not in says["page"]
    assert "0 of 1" in says["dashboard"] and "1 not ready" in says["dashboard"]
    assert "test failed on 3 Oct 2025" in says["dashboard"]
    assert "Not ready" in says["pdf"] and "test failed on 3 Oct 2025" in says["pdf"] and STAGE_ONE in says["pdf"]
    assert "0 of 1 freeze-protected units ready for the freeze season starting 20 Oct 2025" in says["pdf"]
    assert "Freeze-protection readiness for the freeze season starting 20 Oct 2025" in says["pdf"]
    assert "for the freeze season starting 20 Oct 2025" in says["dashboard"]

    # 8 October: the corrective work is assigned and the technician retests on it; every step passes.
    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    time_machine.move_to(RETEST_ON + dt.timedelta(hours=1), tick=False)
    retest = _send(api_client, tech, cwo, {"preheater_freeze.stage_on_temp": THRESHOLD_C}, RETEST_ON)
    assert retest["findings"] == [] and retest["work_order_state"] == "completed"
    assert not Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN).exists()

    time_machine.move_to(dt.datetime(2025, 10, 9, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    assert says["api"]["status"] == "ready" and says["api"]["reason"] == "ready — every step passed on 8 Oct 2025"
    assert "every step passed on 8 Oct 2025" in says["page"] and "test failed" not in says["page"]
    assert "1 of 1" in says["dashboard"] and "not ready" not in says["dashboard"]
    assert "1 of 1 freeze-protected units ready" in says["pdf"] and "every step passed on 8 Oct 2025" in says["pdf"]


# ---------------------------------------------------------------------------
# The demo's round in the season: the latest test is the one everyone reads
# ---------------------------------------------------------------------------

DEMO_DAY = dt.datetime(2026, 12, 2, 10, tzinfo=dt.UTC)  # 11:00 in the demo sites' zone (Europe/Berlin, CET)
DEMO_TESTED = "2 Dec 2026"


def _meter_now(ahu: AHU) -> dict:
    """The run-hour meter read on the day: a day's running (invented, under 24 h) past its last reading."""
    last = MeterReading.objects.filter(ahu=ahu, component=None).order_by("-taken_at", "-pk").first()
    return {"visit.run_hours": round(last.hours + 20)}


def _too_late_stage_one(api_client, tech, wo) -> float:
    """Stage 1 switching on well below the watch band of the checklist the phone fetched (the person's units)."""
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    [stage] = [it for t in doc["templates"] for it in t["items"] if it["key"] == "preheater_freeze.stage_on_temp"]
    return stage["limits"]["display"]["watch"]["min"] - 4.0  # 4 °F or 4 K below: a fail in either system


def _round_visit(tag: str) -> WorkOrder:
    return WorkOrder.objects.get(ahu__tag=tag, source_ref="demo:round", state__in=WorkOrder.OPEN_STATES)


def _row(rows: list[dict], tag: str) -> dict:
    [row] = [r for r in rows if r["unit"]["tag"] == tag]
    return row


@pytest.mark.django_db
def test_the_latest_freeze_test_of_the_demo_round_is_what_everyone_reads(
    api_client, client, django_capture_on_commit_callbacks
):
    """On the demo's round inside the season the technicians test AHU-S1 (glycol preheat coil) and AHU-C1
    (electric preheater), every step passing, and retest AHU-L1 (electric preheater, failed in November),
    which fails again. The property manager and the supervisor see, in the API, on the site page, on the
    dashboard and in the compliance PDF, 2 December as the last test of each: the coil and AHU-C1 ready,
    AHU-L1 not ready with the step that failed."""
    with time_machine.travel(DEMO_DAY, tick=False):
        call_command("load_demo", stdout=io.StringIO())
    s1 = AHU.objects.select_related("building__site").get(tag="AHU-S1")  # glycol preheat coil, no heater
    l1, c1 = AHU.objects.get(tag="AHU-L1"), AHU.objects.get(tag="AHU-C1")  # electric preheaters
    assert not s1.components.filter(kind="electric_preheater").exists()
    assert s1.components.filter(kind="coil", specs__duty="preheat").exists()
    tomas, ines = User.objects.get(username="tomas.tech"), User.objects.get(username="ines.tech")
    manager, boss = User.objects.get(username="helena.pm"), User.objects.get(username="ruth.supervisor")

    with time_machine.travel(DEMO_DAY + dt.timedelta(hours=1), tick=False):
        # The demo's round: every step of the coil unit's and of AHU-C1's freeze-protection test passes.
        _send(api_client, tomas, _round_visit("AHU-S1"), _meter_now(s1), DEMO_DAY)
        _send(api_client, ines, _round_visit("AHU-C1"), _meter_now(c1), DEMO_DAY)
        # AHU-L1 failed in November; its retest on the corrective work finds stage 1 still far too late.
        [retest] = WorkOrder.objects.filter(ahu=l1, kind="corrective", state__in=WorkOrder.OPEN_STATES)
        late = _too_late_stage_one(api_client, retest.assignee, retest)
        _send(api_client, retest.assignee, retest, {**_meter_now(l1), "preheater_freeze.stage_on_temp": late}, DEMO_DAY)

    with time_machine.travel(DEMO_DAY + dt.timedelta(hours=2), tick=False):
        api_client.force_authenticate(manager)
        rows = api_client.get("/api/inspections/freeze-readiness/").json()
        coil = _row(rows, "AHU-S1")
        assert coil["status"] == "ready" and coil["ready"], coil
        assert coil["tested_on"] == "2026-12-02" and DEMO_TESTED in coil["reason"], coil
        failed = _row(rows, "AHU-L1")
        assert failed["status"] == "not_ready" and not failed["ready"], failed
        assert failed["tested_on"] == "2026-12-02", failed
        assert failed["reason"].startswith(f"not ready — test failed on {DEMO_TESTED}: "), failed
        assert "Entering-air temperature at which stage 1 switched on" in failed["reason"]
        api_client.force_authenticate(boss)
        heater = _row(api_client.get("/api/inspections/freeze-readiness/").json(), "AHU-C1")
        assert heater["status"] == "ready" and heater["tested_on"] == "2026-12-02", heater
        assert DEMO_TESTED in heater["reason"], heater

        site = s1.building.site
        client.force_login(manager)
        page = " ".join(client.get(reverse("frontend:dashboard_site", kwargs={"pk": site.pk})).content.decode().split())
        [coil_line] = re.findall(r'<li data-freeze="\w+">AHU-S1 .*?</li>', page)
        assert "<strong>Ready</strong>" in coil_line and f"every step passed on {DEMO_TESTED}" in coil_line, coil_line
        [heater_line] = re.findall(r'<li data-freeze="\w+">AHU-L1 .*?</li>', page)
        assert "Not ready" in heater_line and f"test failed on {DEMO_TESTED}" in heater_line, heater_line
        dashboard = " ".join(client.get(reverse("frontend:dashboard")).content.decode().split())
        assert f"test failed on {DEMO_TESTED}" in dashboard
        # In December the judged season is the running one: named as begun, not as coming.
        assert "for the freeze season that began 5 Nov 2026" in dashboard and "coming" not in dashboard

        api_client.force_authenticate(manager)
        with django_capture_on_commit_callbacks(execute=True):
            res = api_client.post(
                "/api/reports/",
                {"kind": "compliance", "parameters": {"sites": [site.pk], "start": "2026-01-01", "end": "2026-12-02"}},
                format="json",
            )
        assert res.status_code == 202, res.json()
        report = Report.objects.get(public_id=res.json()["public_id"])
        assert report.status == Report.Status.DONE, report.error
        pdf = " ".join(pdf_text(report).split())
        # The season under way, named as such on page 1 and over the table (not "the coming season").
        assert "units ready for the freeze season that began 5 Nov 2026" in pdf
        assert "Freeze-protection readiness for the freeze season that began 5 Nov 2026" in pdf
        assert "coming season" not in pdf
        # The readiness table: unit, season (began), the first day a test counts, status, last test, why.
        assert re.search(
            r"AHU-S1 \(Elderbank Sports Hall\) began 5 Nov 2026 \d+ \w{3} \d{4} Ready 2 Dec 2026 "
            r"every step passed on 2 Dec 2026;",
            pdf,
        )
        assert re.search(
            r"AHU-L1 \(Elderbank Library\) began 5 Nov 2026 \d+ \w{3} \d{4} Not ready 2 Dec 2026 "
            r"test failed on 2 Dec 2026:",
            pdf,
        )


@pytest.mark.django_db
def test_a_retest_on_the_corrective_work_that_fails_again_keeps_the_fault_open_with_new_work(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    """3 Oct: stage 1 at −9 °C fails. 8 Oct: the retest on the corrective work still switches stage 1 on at −8 °C.
    Completing that work order does not close the finding as corrected: it stays open (seen twice), new urgent
    corrective work holds it, and readiness says "not ready" with the retest's date and the new work's state."""
    wo, tech, _heater, site, boss, manager = _unit_with_a_preheater()
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    _send(api_client, tech, wo, {"preheater_freeze.stage_on_temp": -9.0}, FAILED_ON)
    [finding] = Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN)
    cwo = finding.corrective_work_order

    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    time_machine.move_to(RETEST_ON + dt.timedelta(hours=1), tick=False)
    retest = _send(api_client, tech, cwo, {"preheater_freeze.stage_on_temp": -8.0}, RETEST_ON)
    assert retest["work_order_state"] == "completed"  # the repair visit is done; the fault is not
    finding.refresh_from_db()
    assert finding.state == Finding.State.OPEN and finding.times_seen == 2 and not finding.close_cause
    new = finding.corrective_work_order
    assert new is not None and new.pk != cwo.pk
    assert new.state in WorkOrder.OPEN_STATES and new.priority == "urgent"

    time_machine.move_to(dt.datetime(2025, 10, 9, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    assert says["api"]["status"] == "not_ready"
    assert says["api"]["reason"].startswith("not ready — test failed on 8 Oct 2025: ")
    assert says["api"]["reason"].endswith("; corrective work planned"), says["api"]["reason"]
    assert "0 of 1 freeze-protected units ready" in says["pdf"]


@pytest.mark.django_db
def test_a_frost_thermostat_set_too_high_is_a_watch_and_the_unit_stays_ready(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    """The new-user tryout: the frost thermostat trips at 12.5 °C, far above the usual 2–5 °C (about 36–41 °F, common
    practice; the band is inspections.checklists.FREEZE_TRIP_OK), and every other step passes. A trip set too
    high still protects the coil, it only stops the unit on cool mornings: the step is a watch saying so, no
    finding opens, and the site page, the dashboard, the API and the PDF all say ready."""
    from inspections.models import Evaluation

    wo, tech, _heater, site, _boss, manager = _unit_with_a_preheater()
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    out = _send(
        api_client,
        tech,
        wo,
        {"preheater_freeze.stage_on_temp": THRESHOLD_C, "preheater_freeze.freeze_trip_temp": 12.5},
        FAILED_ON,
    )
    assert out["findings"] == []
    assert not Finding.objects.filter(ahu=wo.ahu).exists()
    trip = Evaluation.objects.get(inspection_id=out["inspection_id"], item_key="preheater_freeze.freeze_trip_temp")
    assert (trip.verdict, trip.check_name, trip.condition_code) == ("watch", "limits", "freeze_trip_set_high")
    assert "set higher than needed, nuisance trips likely" in trip.reason
    assert "adjust to the recommended setting" in trip.reason

    time_machine.move_to(dt.datetime(2025, 10, 5, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    assert says["api"]["status"] == "ready" and says["api"]["ready"]
    assert says["api"]["reason"] == "ready — every step passed on 3 Oct 2025"
    assert "Not ready" not in says["page"] and "every step passed on 3 Oct 2025" in says["page"]
    assert "1 of 1" in says["dashboard"] and "not ready" not in says["dashboard"]
    assert "1 of 1 freeze-protected units ready" in says["pdf"]
    assert "Freeze protection failed" not in says["page"] + says["pdf"]


@pytest.mark.django_db
def test_a_trip_setting_outside_its_plausible_range_is_never_proven_until_a_plausible_retest(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    """The new-user tryout: on the corrective retest of a failed freeze test, the frost thermostat's trip setting
    typed as 75 °C (plausible −40 to 60 °C) and every other step passing. An implausible reading proves nothing:
    the step is a watch saying "not proven … re-check the reading" (never "the coil is still protected"), the unit
    stays not ready naming the value, and the freeze findings stay open; a later retest with a plausible passing
    setting makes it ready."""
    from inspections.models import Evaluation

    wo, tech, _heater, site, boss, manager = _unit_with_a_preheater()
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    out = _send(api_client, tech, wo, {"preheater_freeze.freeze_trip_test": "not_ok"}, FAILED_ON)
    [finding] = Finding.objects.filter(inspection_id=out["inspection_id"])
    cwo = finding.corrective_work_order

    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    time_machine.move_to(RETEST_ON + dt.timedelta(hours=1), tick=False)
    values = {"preheater_freeze.stage_on_temp": THRESHOLD_C, "preheater_freeze.freeze_trip_temp": 75.0}
    retest = _send(api_client, tech, cwo, values, RETEST_ON, status="flagged")
    trip = Evaluation.objects.get(inspection_id=retest["inspection_id"], item_key="preheater_freeze.freeze_trip_temp")
    assert (trip.verdict, trip.condition_code) == ("watch", "freeze_protection_failed")
    assert "still protected" not in trip.reason and "not proven" in trip.reason, trip.reason
    assert "outside the plausible" in trip.reason and "re-check the reading" in trip.reason, trip.reason
    assert Finding.objects.filter(pk=finding.pk, state=Finding.State.OPEN).exists()

    time_machine.move_to(dt.datetime(2025, 10, 9, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    reason = says["api"]["reason"]
    assert says["api"]["status"] == "not_ready" and not says["api"]["ready"], reason
    assert reason.startswith("not ready — "), reason
    assert "outside the plausible" in reason and "re-check the reading" in reason, reason
    assert "0 of 1 freeze-protected units ready" in says["pdf"]

    # 10 October: retested with a plausible setting inside the band: every step passes, the unit is ready.
    later = RETEST_ON + dt.timedelta(days=2)
    time_machine.move_to(later + dt.timedelta(hours=1), tick=False)
    again, _ = make_visit(tasks=["preheater_freeze"], organisation=wo.organisation, ahu=wo.ahu, technician=tech)
    values["preheater_freeze.freeze_trip_temp"] = 3.5
    _send(api_client, tech, again, values, later)
    assert not Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN).exists()
    time_machine.move_to(dt.datetime(2025, 10, 11, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    assert says["api"]["status"] == "ready", says["api"]["reason"]
