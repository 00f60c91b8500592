"""Freeze-protection readiness rules (inspections.freeze.freeze_verdict), worked by hand on small cases.

Season from 20 October 2025; its window opened 15 April 2025 (the last cold day of the season before).
"""

import datetime as dt
from datetime import date

import pytest

from inspections.freeze import (
    DONE_LATE,
    DUE,
    NOT_READY,
    READY,
    UNKNOWN,
    FreezeReadiness,
    FreezeTest,
    OpenFinding,
    freeze_readiness,
    freeze_verdict,
)
from tests.reports import builders as b

D = date.fromisoformat
START, OPENS = D("2025-10-20"), D("2025-04-15")
PASSED = FreezeTest(on=D("2025-10-01"))
FAILED = FreezeTest(
    on=D("2025-10-03"),
    not_passed=("Entering-air temperature at which stage 1 switched on", "Every stage energises in sequence"),
    failed=True,
    corrective="awaiting approval",
)


def verdict(tests, today, findings=(), start=START, opens=OPENS):
    return freeze_verdict(tests=tests, open_findings=findings, season_start=start, window_opens=opens, today=today)


def test_a_test_that_passed_every_step_before_the_season_is_ready():
    v = verdict([PASSED], D("2025-10-05"))
    assert (v.status, v.reason) == (READY, "ready — every step passed on 1 Oct 2025")


def test_a_failed_test_is_not_ready_and_says_which_steps_and_the_corrective_work():
    """A failed test after a passing one: the latest decides, even before the season starts."""
    v = verdict([PASSED, FAILED], D("2025-10-05"))
    assert v.status == NOT_READY
    assert v.reason == (
        "not ready — test failed on 3 Oct 2025: Entering-air temperature at which stage 1 switched on; "
        "Every stage energises in sequence; corrective work awaiting approval"
    )


def test_a_passing_retest_makes_it_ready_again():
    retest = FreezeTest(on=D("2025-10-08"))
    assert verdict([FAILED, retest], D("2025-10-10")).status == READY
    late_retest = FreezeTest(on=D("2025-10-25"))
    v = verdict([FAILED, late_retest], D("2025-10-30"))
    assert v.status == DONE_LATE and "after the season began on 20 Oct 2025" in v.reason


def test_a_late_but_passing_retest_counts_as_ready_now():
    """Proven after the season began: protected now (counted ready), the lateness kept in its label."""
    late = FreezeReadiness(
        unit=None, status=DONE_LATE, reason="proven late — every step passed on 25 Oct 2025, after …",
        season_start=D("2025-10-20"), window_opens=D("2025-04-01"),
    )  # fmt: skip
    assert late.ready and late.label == "Ready, tested late" and late.as_row()["ready"]
    assert not FreezeReadiness(unit=None, status=NOT_READY, reason="x", season_start=None, window_opens=None).ready


def test_a_watch_on_a_step_is_not_a_pass():
    """A step only near its limit proves nothing on a safety device: not ready, retest needed (no finding)."""
    near = FreezeTest(on=D("2025-10-01"), not_passed=("Freeze-protection trip temperature (near its limit)",))
    v = verdict([near], D("2025-10-05"))
    assert v.status == NOT_READY
    assert v.reason.startswith("not ready — test on 1 Oct 2025 not passed: Freeze-protection trip temperature")
    assert v.reason.endswith("retest needed")


def test_an_open_serious_freeze_finding_keeps_it_not_ready_after_a_passing_test():
    finding = OpenFinding(opened_on=D("2025-09-01"), title="Freeze protection failed", corrective="in progress")
    v = verdict([PASSED], D("2025-10-05"), findings=[finding])
    assert v.status == NOT_READY
    assert v.reason == (
        "not ready — freeze-protection fault open since 1 Sep 2025: Freeze protection failed "
        "(last test passed on 1 Oct 2025); corrective work in progress"
    )


def test_untested_in_the_window_is_due_before_the_season_and_not_ready_after():
    """A test during last season does not count for the coming one."""
    old = [FreezeTest(on=D("2025-02-01"))]
    due = verdict(old, D("2025-10-05"))
    assert (due.status, due.reason) == (DUE, "due — not tested since 1 Feb 2025; test before 20 Oct 2025")
    late = verdict(old, D("2025-10-21"))
    assert late.status == NOT_READY and late.reason.startswith("not ready — not tested since 1 Feb 2025")
    assert verdict([], D("2025-10-21")).reason == "not ready — never tested; the season began on 20 Oct 2025"


def test_unknown_season_stays_unknown_unless_a_fault_is_known():
    assert verdict([PASSED], D("2025-10-05"), start=None, opens=None).status == UNKNOWN
    assert verdict([FAILED], D("2025-10-05"), start=None, opens=None).status == NOT_READY


# ---------------------------------------------------------------------------
# From the database: which judgements make a test, amendments, query count
# ---------------------------------------------------------------------------

AS_OF = dt.datetime(2025, 10, 10, 12, tzinfo=dt.UTC)


@pytest.fixture
def unit(db):
    """A unit with a two-stage electric preheater on a site whose season starts 20 October 2025 (mild normals:
    the window opens a year before)."""
    from accounts.models import Role
    from tests.factories.accounts import OrganisationFactory, make_person
    from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory

    org = OrganisationFactory()
    site = SiteFactory(
        organisation=org, freeze_season_start=START, normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
    )
    ahu = AHUFactory(building=BuildingFactory(site=site), tag="AHU-F1")
    heater = ComponentFactory(
        ahu=ahu, kind="electric_preheater", name="Preheater", specs={"power_w": 12000, "stages": 2, "switch_on_c": -3}
    )
    tech = make_person(organisation=org, role=Role.TECHNICIAN)
    visit = b.preventive(ahu, b.library()["preheater_freeze"], "2025-10-01", done="2025-10-01")
    return {"ahu": ahu, "heater": heater, "tech": tech, "visit": visit}


def _readiness(ahu):
    from inventory.models import AHU

    [r] = freeze_readiness(units=list(AHU.objects.filter(pk=ahu.pk).select_related("building__site")), as_of=AS_OF)
    return r


def test_a_test_without_the_airflow_interlock_and_primary_limit_does_not_prove_the_unit(unit):
    """A form filled against the first template (no interlock, no primary limit) passed all it asked, yet the
    unit is not ready: those safety steps were never checked."""
    insp = b.inspection(unit["visit"], unit["tech"], finished="2025-10-01")
    for key, comp in [
        ("stage_on_temp", unit["heater"]),
        ("stages", unit["heater"]),
        ("high_limit", unit["heater"]),
        ("freeze_trip_temp", None),
        ("freeze_trip_test", None),
    ]:
        b.evaluation(insp, "check", f"preheater_freeze.{key}", component=comp, verdict="ok", reason="ok")
    r = _readiness(unit["ahu"])
    assert r.status == NOT_READY and r.tested_on == D("2025-10-01")
    assert r.reason.startswith("not ready — test on 1 Oct 2025 not passed: ")
    assert "every stage switches off" in r.reason and "primary limit" in r.reason and "(not checked)" in r.reason


def test_an_amendment_that_corrects_a_failed_step_to_ok_counts(unit):
    """The trip test was typed as not ok by mistake; the amendment's corrected verdict decides the step."""
    insp = b.freeze_test(
        unit["visit"],
        unit["tech"],
        finished="2025-10-01",
        heaters=[unit["heater"]],
        verdicts={"freeze_trip_test": "fail"},
    )
    assert _readiness(unit["ahu"]).status == NOT_READY
    b.amendment(
        insp,
        unit["tech"],
        reason="typed the wrong answer",
        changes=[{"item": "preheater_freeze.freeze_trip_test", "component": None, "after": {"verdict": "ok"}}],
        created="2025-10-02",
    )
    r = _readiness(unit["ahu"])
    assert (r.status, r.reason) == (READY, "ready — every step passed on 1 Oct 2025")


def test_readiness_of_many_units_takes_the_queries_of_one(unit, django_assert_num_queries):
    """Four queries (protected parts, test judgements, freeze findings, freeze events in the automation trends)
    for 1 unit or 11."""
    from inventory.models import AHU
    from tests.factories.inventory import AHUFactory, ComponentFactory

    b.freeze_test(unit["visit"], unit["tech"], finished="2025-10-01", heaters=[unit["heater"]])
    for i in range(10):
        other = AHUFactory(building=unit["ahu"].building, tag=f"AHU-F{i + 2}")
        heater = ComponentFactory(ahu=other, kind="electric_preheater", specs={"switch_on_c": -3})
        visit = b.preventive(other, b.library()["preheater_freeze"], "2025-10-01", done="2025-10-01")
        b.freeze_test(visit, unit["tech"], finished="2025-10-02", heaters=[heater])
    units = list(AHU.objects.filter(building=unit["ahu"].building).select_related("building__site"))
    with django_assert_num_queries(4):
        rows = freeze_readiness(units=units, as_of=AS_OF)
    assert len(rows) == 11 and {r.status for r in rows} == {READY}


def test_the_api_lists_only_visible_units_and_names_a_bad_site_parameter(unit, api_client):
    """Another organisation's manager sees none of these units; ``site=abc`` is a 400 naming the field and value."""
    from accounts.models import Role
    from accounts.services import site_grant
    from tests.factories.accounts import OrganisationFactory, make_person

    b.freeze_test(unit["visit"], unit["tech"], finished="2025-10-01", heaters=[unit["heater"]])
    manager = make_person(organisation=unit["ahu"].building.site.organisation, role=Role.PROPERTY_MANAGER)
    site_grant(user=manager, site=unit["ahu"].building.site)
    api_client.force_authenticate(manager)
    [row] = api_client.get(f"/api/inspections/freeze-readiness/?site={unit['ahu'].building.site_id}").json()
    assert row["unit"]["tag"] == "AHU-F1" and row["tested_on"] == "2025-10-01"
    bad = api_client.get("/api/inspections/freeze-readiness/?site=abc")
    assert bad.status_code == 400 and "'abc' is not a whole number" in bad.json()["errors"]["site"][0]
    huge = api_client.get(f"/api/inspections/freeze-readiness/?site={2**63}")  # beyond a 64-bit id: was a 500
    assert huge.status_code == 400 and "out of range" in huge.json()["errors"]["site"][0]
    stranger = make_person(organisation=OrganisationFactory(), role=Role.PROPERTY_MANAGER)
    api_client.force_authenticate(stranger)
    assert api_client.get("/api/inspections/freeze-readiness/").json() == []


def test_a_trip_set_too_high_still_proves_the_step_a_trip_near_too_low_does_not(unit):
    """A frost thermostat set above its band (nuisance trips; the watch carries FREEZE_TRIP_SET_HIGH) still
    protects the coil: the step passes. The same watch for a setting just below the band (too little margin,
    the freeze-protection condition) does not: near its limit, not proven. Bands: common practice
    (inspections.checklists.FREEZE_TRIP_*)."""
    from inspections.evaluation.results import FREEZE_TRIP_SET_HIGH
    from inspections.models import Evaluation

    insp = b.freeze_test(
        unit["visit"],
        unit["tech"],
        finished="2025-10-01",
        heaters=[unit["heater"]],
        verdicts={"freeze_trip_temp": "watch"},
    )
    near = _readiness(unit["ahu"])
    assert near.status == NOT_READY and "(near its limit, not proven)" in near.reason
    Evaluation.objects.filter(inspection=insp, item_key="preheater_freeze.freeze_trip_temp").update(
        condition_code=FREEZE_TRIP_SET_HIGH
    )
    r = _readiness(unit["ahu"])
    assert (r.status, r.reason) == (READY, "ready — every step passed on 1 Oct 2025")


def test_an_amendment_to_a_setting_too_high_keeps_the_unit_ready(unit):
    """The trip setting amended to one above the band: the amendment's watch carries its condition, so the step
    still passes; an amendment's watch without that condition is near a limit, not proven."""
    from inspections.evaluation.results import FREEZE_TRIP_SET_HIGH

    insp = b.freeze_test(unit["visit"], unit["tech"], finished="2025-10-01", heaters=[unit["heater"]])
    watch = {"verdict": "watch", "condition_code": FREEZE_TRIP_SET_HIGH}
    change = {"item": "preheater_freeze.freeze_trip_temp", "component": None, "after": watch}
    b.amendment(insp, unit["tech"], reason="the setting was 12.5 °C", changes=[change], created="2025-10-02")
    assert _readiness(unit["ahu"]).status == READY
    change = {"item": "preheater_freeze.freeze_trip_temp", "component": None, "after": {"verdict": "watch"}}
    b.amendment(insp, unit["tech"], reason="the setting was 2.2 °C", changes=[change], created="2025-10-03")
    assert _readiness(unit["ahu"]).status == NOT_READY


def test_a_test_filled_against_an_older_version_is_held_to_the_steps_it_had(unit):
    """A test passed on version 3 (before 'set points restored' and a preheat coil's valve and glycol steps were
    asked) stays ready: a newer version's steps do not undo a test that could not answer them."""
    from inspections import checklists
    from inspections.models import ChecklistItem, ChecklistTemplate, Inspection

    current = next(t for t in checklists.TEMPLATES if t["code"] == "preheater_freeze")
    older = ChecklistTemplate.objects.create(code="preheater_freeze", version=current["version"] - 1, title="old")
    for i, it in enumerate(i for i in current["items"] if i["key"] != "set_points_restored"):
        ChecklistItem.objects.create(template=older, position=i, key=it["key"], kind=it["kind"], label=it["label"])
    insp = b.freeze_test(unit["visit"], unit["tech"], finished="2025-10-01", heaters=[])
    Inspection.objects.filter(pk=insp.pk).update(template_versions={"preheater_freeze": older.version})
    for key in b.FREEZE_STEPS_PER_HEATER[:-1]:
        b.evaluation(insp, "check", f"preheater_freeze.{key}", component=unit["heater"], verdict="ok", reason="ok")
    assert _readiness(unit["ahu"]).status == READY
    Inspection.objects.filter(pk=insp.pk).update(template_versions={})  # the current version: the step is missing
    r = _readiness(unit["ahu"])
    assert r.status == NOT_READY and "put back as found after the test (not checked)" in r.reason


def test_a_water_preheat_coil_is_not_held_to_a_glycol_step_and_a_glycol_one_is(unit):
    """The steps of a preheat coil are those its checklist asks: a glycol freezing point only of a glycol coil."""
    from tests.factories.inventory import ComponentFactory

    coil = ComponentFactory(
        ahu=unit["ahu"],
        kind="coil",
        name="Preheat coil",
        specs={"duty": "preheat", "fluid": "water", "design_capacity_w": 9000},
    )
    insp = b.freeze_test(unit["visit"], unit["tech"], finished="2025-10-01", heaters=[unit["heater"]])
    b.evaluation(insp, "check", "preheater_freeze.coil_valve_fail_open", component=coil, verdict="ok", reason="ok")
    assert _readiness(unit["ahu"]).status == READY
    coil.specs = {**coil.specs, "fluid": "glycol", "glycol_pct": 30, "glycol_kind": "propylene"}
    coil.save(update_fields=["specs"])
    r = _readiness(unit["ahu"])
    assert r.status == NOT_READY and "Glycol freezing point by refractometer (not checked)" in r.reason
