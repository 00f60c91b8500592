"""Electric preheater stage test and freeze-protection trip on a unit that has a preheater.

Bands: stage 1 should switch on within 1 K of the set threshold (watch within 2 K): common practice,
no published source. The frost thermostat should trip at 2.5–5.5 °C (watch 2–2.5 °C and above 5.5 °C, below 2 °C fails):
the usual setting is about 3.3 °C (38 °F), common practice; ASHRAE Guideline 36-2021 5.16.12 takes its
last freeze stage at supply air below 1 °C (as summarised in PNNL's ConStrain rule library). The
airflow interlock and the automatic-reset primary limit beside the manual-reset high limit follow
NFPA 70 (NEC) 424.63 and 424.64 (duct heaters); UL 1996 from memory. A failed
preheater or freeze-protection test inside or up to 30 days before the site's freeze season is urgent
and approved at once (inspections/SYNC.md).
"""

import datetime as dt

import pytest
from django.core import mail

from inspections.models import Finding
from inventory.models import Site
from scheduling.models import WorkOrder
from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import make_supervisor

SYNC = "/api/inspections/sync/"
THRESHOLD_C = -3.0
SEASON_START = dt.date(2024, 10, 5)


def _visit():
    """A unit with a 3-stage 24 kW electric preheater switching on at −3 °C; freeze season from 5 October.

    The site's monthly normals are kept mild (10 °C) so only the season start decides "near the season".
    """
    wo, tech = make_visit(tasks=["preheater_freeze"])
    Site.objects.filter(pk=wo.ahu.building.site_id).update(
        freeze_season_start=SEASON_START, normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
    )
    heater = ComponentFactory(
        ahu=wo.ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": THRESHOLD_C},
    )
    return wo, tech, heater


def _submit(
    client,
    wo,
    tech,
    heater,
    *,
    stage_on,
    stages="ok",
    interlock="ok",
    primary="ok",
    trip_temp=4.0,
    trip_test="ok",
    on: dt.date,
):
    client.force_authenticate(tech)
    readings = [
        r("visit.run_hours", 1200),
        r("preheater_freeze.stage_on_temp", stage_on, heater, note="stage 1 in"),
        r("preheater_freeze.stages", stages, heater, note="stage currents"),
        r("preheater_freeze.airflow_interlock", interlock, heater, note="stages on with the fan stopped"),
        r("preheater_freeze.primary_limit", primary, heater, note="primary limit stuck closed"),
        r("preheater_freeze.high_limit", "ok", heater),
        r("preheater_freeze.set_points_restored", "ok", heater),
        r("preheater_freeze.freeze_trip_temp", trip_temp),
        r("preheater_freeze.freeze_trip_test", trip_test, note="trip test"),
    ]
    finished = dt.datetime.combine(on, dt.time(10), tzinfo=dt.UTC)
    res = client.post(SYNC, {"forms": [sync_form(wo, readings, finished_at=finished)]}, format="json")
    [out] = res.json()["results"]
    assert out["status"] in {"stored", "flagged"}, out
    return out


def _verdict(out, item):
    return next(e for e in out["evaluation"] if e["item"] == item)


@pytest.mark.django_db
@pytest.mark.parametrize(("stage_on", "verdict"), [(-3.0, "ok"), (-2.0, "ok"), (-1.5, "watch"), (0.0, "fail")])
def test_stage_one_switch_on_is_judged_against_the_heaters_threshold(api_client, stage_on, verdict):
    """Threshold −3 °C: at −3 and −2 °C (1 K) ok; −1.5 °C (1.5 K) watch; 0 °C (3 K late) fail."""
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=stage_on, on=dt.date(2024, 7, 15))
    ev = _verdict(out, "preheater_freeze.stage_on_temp")
    assert ev["verdict"] == verdict and ev["component"] == heater.label_code
    assert ev["derived"]["ok_min"] == -4.0 and ev["derived"]["ok_max"] == -2.0


@pytest.mark.django_db
def test_a_passing_preheater_and_trip_test_raise_no_work(api_client):
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, on=dt.date(2024, 9, 20))
    assert {e["verdict"] for e in out["evaluation"]} == {"ok"}
    assert out["findings"] == [] and out["work_order_state"] == "completed"


@pytest.mark.django_db
def test_failed_trip_test_25_days_before_the_freeze_season_opens_urgent_approved_work(
    api_client, django_capture_on_commit_callbacks
):
    """10 September is 25 days before the 5 October season start: inside the 30-day lead → urgent, approved,
    supervisors e-mailed."""
    wo, tech, heater = _visit()
    boss = make_supervisor(wo.organisation)
    with django_capture_on_commit_callbacks(execute=True):
        out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, trip_test="not_ok", on=dt.date(2024, 9, 10))
    assert _verdict(out, "preheater_freeze.freeze_trip_test")["verdict"] == "fail"
    [f] = out["findings"]
    assert f["severity"] == "critical"
    cwo = Finding.objects.get(pk=f["id"]).corrective_work_order
    assert cwo.priority == "urgent" and cwo.approval == WorkOrder.Approval.APPROVED
    assert cwo.condition_code == "freeze_protection_failed"
    assert "within 30 days of the freeze season" in cwo.reason
    assert [m.to for m in mail.outbox] == [[boss.email]]


@pytest.mark.django_db
def test_preheater_switching_on_too_late_before_the_season_is_urgent_too(api_client):
    """Stage 1 at +1 °C against −3 °C (4 K late) on 20 September, 15 days before the season: urgent."""
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=1.0, on=dt.date(2024, 9, 20))
    assert _verdict(out, "preheater_freeze.stage_on_temp")["verdict"] == "fail"
    [f] = out["findings"]
    finding = Finding.objects.get(pk=f["id"])
    assert finding.component == heater and finding.severity == "critical"
    assert finding.corrective_work_order.priority == "urgent"


@pytest.mark.django_db
def test_failed_trip_test_65_days_before_the_season_waits_for_approval(api_client):
    """1 August is 65 days before 5 October (and the normals stay at 10 °C): high priority, awaiting approval."""
    wo, tech, heater = _visit()
    out = _submit(
        api_client, wo, tech, heater, stage_on=THRESHOLD_C, trip_temp=0.0, trip_test="not_ok", on=dt.date(2024, 8, 1)
    )
    assert _verdict(out, "preheater_freeze.freeze_trip_temp")["verdict"] == "fail"
    cwos = {Finding.objects.get(pk=f["id"]).corrective_work_order for f in out["findings"]}
    assert len(cwos) == 1  # both trip failures share one open corrective work order for the condition
    [cwo] = cwos
    assert cwo.priority == "high" and cwo.approval == WorkOrder.Approval.PENDING


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("trip_temp", "verdict"), [(1.5, "fail"), (2.2, "watch"), (3.3, "ok"), (5.0, "ok"), (7.5, "watch"), (12.5, "watch")]
)
def test_frost_thermostat_tripping_below_2_c_fails_and_opens_a_finding(api_client, trip_temp, verdict):
    """1.5 °C fails (was only watch before): too little margin over the 1 °C of ASHRAE Guideline 36's last
    freeze stage (from PNNL's summary); 2.2 °C is watch; 3.3 °C (38 °F, the usual setting, common practice)
    and 5 °C (41 °F) are ok. 7.5 °C and 12.5 °C (set too high: nuisance trips, the coil still protected,
    common practice) are watch, never fail. Only the failure opens a freeze-protection finding."""
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, trip_temp=trip_temp, on=dt.date(2024, 9, 20))
    assert _verdict(out, "preheater_freeze.freeze_trip_temp")["verdict"] == verdict
    findings = Finding.objects.filter(inspection_id=out["inspection_id"])
    if verdict == "fail":
        [f] = findings
        assert f.condition_code == "freeze_protection_failed" and f.severity == "critical"
        assert f.corrective_work_order.priority == "urgent"  # 15 days before the 5 October season start
    else:
        assert not findings.exists()


@pytest.mark.django_db
@pytest.mark.parametrize("step", ["interlock", "primary"])
def test_heater_live_without_airflow_or_without_its_primary_limit_fails_the_freeze_test(api_client, step):
    """NFPA 70 424.63 (no stage without the fan) and 424.64 (automatic-reset primary limit): either failing
    opens an urgent freeze-protection finding on the heater 15 days before the season."""
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, on=dt.date(2024, 9, 20), **{step: "not_ok"})
    key = {"interlock": "preheater_freeze.airflow_interlock", "primary": "preheater_freeze.primary_limit"}[step]
    assert _verdict(out, key)["verdict"] == "fail"
    [f] = Finding.objects.filter(inspection_id=out["inspection_id"])
    assert f.component == heater and f.condition_code == "freeze_protection_failed"
    assert f.severity == "critical" and f.corrective_work_order.priority == "urgent"


@pytest.mark.django_db
def test_the_new_steps_are_required_on_every_electric_preheater(api_client):
    """The phone's checklist asks the airflow interlock and the primary limit on the heater, required, with
    their source; the frost-thermostat bands it judges against are the new ones (ok 2.5–5.5 °C, watch from 2 °C
    with no upper limit: a trip set too high only trips needlessly)."""
    wo, tech, heater = _visit()
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    items = {i["key"]: i for t in doc["templates"] for i in t["items"]}
    for key in ("preheater_freeze.airflow_interlock", "preheater_freeze.primary_limit"):
        assert items[key]["required"] and items[key]["component"]["label_code"] == heater.label_code
        assert "424" in items[key]["limits_source"]
    trip = items["preheater_freeze.freeze_trip_temp"]["limits"]["si"]
    assert trip["ok"] == {"min": 2.5, "max": 5.5} and trip["watch"] == {"min": 2.0, "max": None}


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("limits", "trip_temp", "verdict"),
    [
        ({"watch_min": 3.0}, 4.0, "watch"),  # the floor above the band's bottom (2.5 °C)
        ({"watch_min": 3.0}, 2.7, "watch"),  # between the two: was a fail on the phone, a 500 on the server
        ({"ok_min": 5.5, "ok_max": 2.5}, 4.0, "watch"),  # the band's ends reversed
        ({"ok_min": 5.5, "ok_max": 2.5}, 12.5, "watch"),
        ({"watch_min": 3.0}, 1.0, "fail"),  # below every limit, whichever was meant as the floor
    ],
)
def test_a_trip_band_out_of_order_is_recorded_as_inconsistent_never_ok(api_client, limits, trip_temp, verdict):
    """A checklist whose frost-thermostat limits are out of order is a configuration error: the form is stored (no
    500), the reading is recorded with a result saying the limits are inconsistent, and it is never ok. It carries
    the freeze-protection condition (so readiness never counts it passed); below every limit it fails and opens the
    finding."""
    from config.caches import clear_module_caches
    from inspections.models import ChecklistItem, Evaluation
    from inspections.services.library import templates_current

    templates_current()  # installed, then its trip band put out of order (as a mistaken library edit would)
    assert ChecklistItem.objects.filter(template__code="preheater_freeze", key="freeze_trip_temp").update(**limits)
    clear_module_caches()
    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, trip_temp=trip_temp, on=dt.date(2024, 9, 20))
    ev = _verdict(out, "preheater_freeze.freeze_trip_temp")
    assert ev["verdict"] == verdict
    assert "the limits for this check are inconsistent: fail below" in ev["reason"], ev["reason"]
    findings = Finding.objects.filter(inspection_id=out["inspection_id"])
    if verdict == "fail":
        [f] = findings
        assert f.condition_code == "freeze_protection_failed"
    else:
        assert not findings.exists()
    row = Evaluation.objects.get(inspection_id=out["inspection_id"], item_key="preheater_freeze.freeze_trip_temp")
    assert row.condition_code == "freeze_protection_failed" and row.derived["limits_inconsistent"] is True


@pytest.mark.django_db
@pytest.mark.parametrize(("corrected", "clears"), [(12.5, True), (3.3, True), (2.2, False)])
def test_a_trip_setting_corrected_from_too_low_clears_its_finding_unless_still_below_the_band(
    api_client, corrected, clears
):
    """The technician typed 1.0 °C (below the 2 °C floor: a freeze-protection finding) and amends it: to 12.5 °C
    (above the band, a nuisance-trip watch that still protects the coil) or 3.3 °C (ok), the too-low condition is
    gone and the finding is cleared by the amendment; to 2.2 °C (a watch for too little margin, the same condition)
    it stays open. Bands: inspections.checklists.FREEZE_TRIP_*, common practice."""
    from inspections.models import Inspection
    from inspections.services import inspection_amend

    wo, tech, heater = _visit()
    out = _submit(api_client, wo, tech, heater, stage_on=THRESHOLD_C, trip_temp=1.0, on=dt.date(2024, 9, 20))
    [finding] = Finding.objects.filter(inspection_id=out["inspection_id"])
    inspection_amend(
        inspection=Inspection.objects.get(pk=out["inspection_id"]),
        by=tech,
        reason="misread the thermostat's dial",
        readings=[r("preheater_freeze.freeze_trip_temp", corrected)],
        unit_system="si",
    )
    finding.refresh_from_db()
    if clears:
        assert (finding.state, finding.close_cause) == (Finding.State.CLOSED, Finding.CloseCause.AMENDED)
    else:
        assert (finding.state, finding.close_cause) == (Finding.State.OPEN, "")
