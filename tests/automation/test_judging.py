"""Trends feed the schedule and become faults: run-hours, filter loading, faults by the guideline, freeze events.

Scenarios, each on a full unit with the usual automation points and 15-minute trends:

- The supply fan's status over four days gives its run-hour meter readings through the meter service, and the
  runtime rules project from them; judging the same days again adds nothing.
- A filter bank's pressure sensor, corrected to design airflow from the fan's speed, crosses its change limit
  between visits: a filter change is planned (the ``filter_loaded`` condition's task) with no technician reading.
- A stuck outdoor-air damper (mixed air at outdoor temperature while the damper is commanded to its minimum in
  heating) is one fault with one corrective work order however many days it lasts; it closes after it has been
  absent the set time (7 days), and its proposal still awaiting approval is withdrawn.
- A near-freezing night makes a unit with a preheater "not ready" for freeze protection until its
  freeze-protection test passes again, in the one readiness function and the API alike.

No test depends on today's date: the clock is set for each step.
"""

import datetime as dt

import pytest
import time_machine
from django.test import override_settings

from automation.fault_models import Fault, FilterDay
from automation.judging import FAULT_WORK, trends_judge, trends_judge_yesterday, unit_day_judge
from automation.series import POINT_ROLES, role_of, unit_roles
from inspections.freeze import freeze_readiness
from inspections.models import Reading
from scheduling.engine import work_orders_generate
from scheduling.models import MeterReading, WorkOrder, WorkOrderTask
from scheduling.services import task_library_install, work_order_assign
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
UTC = dt.UTC
DAY1 = dt.date(2026, 1, 12)  # a Monday in January


def _start(day: dt.date) -> dt.datetime:
    return dt.datetime.combine(day, dt.time(), tzinfo=UTC)


def _days(n: int, first: dt.date = DAY1) -> list[dt.date]:
    return [first + dt.timedelta(days=i) for i in range(n)]


@pytest.fixture
def unit():
    """A full unit on a site kept in UTC (its local days are UTC days), with every point of the usual map."""
    org = OrganisationFactory(name="Trend Air", slug="trend-air")
    site = SiteFactory(organisation=org, name="Dune Offices", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-07")
    task_library_install()
    return ahu, map_points(ahu)


# Heating with the outdoor-air damper at its minimum (0.25, the unit's design minimum outdoor-air fraction):
# outdoor −5 °C, return 21 °C; the mixed air of a working damper is 0.25 × −5 + 0.75 × 21 = 14.5 °C (the
# outdoor-air fraction (MAT − RAT)/(OAT − RAT) = 0.25). Stuck open, the mixed air sits at −4 °C: the fraction
# is (−4 − 21)/(−5 − 21) = 0.96, more than εF = 0.30 from the minimum (Guideline 36 FC#6, values of
# engineering.faults.thresholds, from memory), with |RAT − OAT| = 26 K ≥ ΔTmin = 5.6 K.
HEATING = {"OAT": -5.0, "RAT": 21.0, "SAT": 18.0, "SAT-SP": 18.0, "SF-STS": 1, "SF-SPD": 80, "OAD": 25}
HEATING |= {"HCV": 50, "CCV": 0}
WORKING_MAT, STUCK_MAT = 14.5, -4.0


def _heating_day(points, day, *, mat: float, **more) -> None:
    put_day(points, _start(day), {**HEATING, "MAT": mat, **more})


def _judge(ahu, day):
    with time_machine.travel(_start(day) + dt.timedelta(days=1, hours=1), tick=False):
        return unit_day_judge(ahu=ahu, day=day)


# ---------------------------------------------------------------------------
# Point roles
# ---------------------------------------------------------------------------


def test_each_mapped_point_takes_the_role_the_fault_rules_read(unit):
    """Brick classes map to the fault engine's roles; a part's point by the part's job (supply fan, outdoor
    damper, heating or cooling coil); a point no rule reads (CO₂) has none."""
    _ahu, points = unit
    roles = {role: p.name.split(".", 1)[1] for role, p in unit_roles(points.values()).items()}
    assert roles == {
        "sat": "SAT",
        "mat": "MAT",
        "rat": "RAT",
        "oat": "OAT",
        "sat_setpoint": "SAT-SP",
        "supply_fan_speed": "SF-SPD",
        "supply_fan_status": "SF-STS",
        "oa_damper": "OAD",
        "heating_valve": "HCV",
        "cooling_valve": "CCV",
    }
    assert role_of(points["CO2"]) is None and role_of(points["FILT-DP"]) is None
    # Every rule names a Brick class Plenum maps.
    from automation.vocabulary import POINT_CLASSES

    assert {r.brick_class for r in POINT_ROLES} <= set(POINT_CLASSES)


def test_every_fault_rule_has_its_corrective_work_said():
    """Each guideline rule and the freeze event name their scheduling condition (or none) and severity."""
    from engineering.faults import RULES

    assert {r.code for r in RULES} | {Fault.FREEZE} == set(FAULT_WORK)


# ---------------------------------------------------------------------------
# Run-hours
# ---------------------------------------------------------------------------


def test_run_hours_from_fan_status_move_the_runtime_rule_and_a_rerun_adds_nothing(unit):
    """The fan runs 06:00–18:00 (12 h) each day for four days: its meter reads 0 h at the first day's start,
    then 12, 24, 36 and 48 h at each day's end (source: building-automation trend). The filter change every
    4,000 run-hours then has a date projected from 12 h a day; judging the days again adds no reading."""
    ahu, points = unit
    fan = ahu.components.get(name="Supply fan")
    for day in _days(4):
        put_day(points, _start(day), {"SF-STS": lambda t: 1 if 6 <= t.hour < 18 else 0})
    runtime = WorkOrderTask.objects.filter(ahu=ahu, task_code="filter_replace", occurrence_key__startswith="h:")
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=4, hours=1), tick=False):
        work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)
        assert not runtime.exists()  # no meter yet: the runtime rule has nothing to project from
        trends_judge(site=ahu.building.site, start=DAY1, end=DAY1 + dt.timedelta(days=3))
    readings = list(MeterReading.objects.filter(ahu=ahu, component=fan).order_by("taken_at"))
    assert [(r.taken_at, r.hours) for r in readings] == [
        (_start(DAY1), 0.0),
        *[(_start(DAY1) + dt.timedelta(days=i), 12.0 * i) for i in range(1, 5)],
    ]
    assert {r.source for r in readings} == {MeterReading.Source.BAS_TREND}

    with time_machine.travel(_start(DAY1) + dt.timedelta(days=4, hours=2), tick=False):
        work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)
        trends_judge(site=ahu.building.site, start=DAY1, end=DAY1 + dt.timedelta(days=3))
    assert MeterReading.objects.filter(ahu=ahu).count() == 5
    # 4,000 h at 12 h a day from 48 h at the last reading: (4000 − 48) / 12 = 329.3 days after 16 January.
    assert runtime.exists()
    expected = (_start(DAY1) + dt.timedelta(days=4) + dt.timedelta(days=(4000 - 48) / 12)).date()
    assert {t.due_date for t in runtime} == {expected}


# ---------------------------------------------------------------------------
# Filter loading
# ---------------------------------------------------------------------------

# Final filters: clean 90 Pa, final 250 Pa at 3.0 m³/s design (tests.factories.inventory.FILTER_SPECS). The fan
# runs at 80 % speed: 2.4 m³/s by the first fan law (design flow 3.0 m³/s at full speed), so each reading is
# multiplied by (3.0 / 2.4)^1.5 = 1.397542 (engineering.filters, n = 1.5, common practice). Worked by hand:
# 150 → 209.6 Pa (74.8 % of the span, shown as 75 %: watched, as the rule printed beside it, "watch from 75 %",
# reads), 160 → 223.6 (84 %), 170 → 237.6 (92 %), 176 → 246.0 Pa (97.5 %,
# past the 95 % fail fraction: change now).
FILTER_DP = [150, 160, 170, 176]
CORRECTED = [209.63, 223.61, 237.58, 245.97]


def test_a_filter_crossing_its_limit_in_the_trend_gets_a_change_planned_without_a_technician_reading(unit):
    ahu, points = unit
    bank = ahu.components.get(name="Final filters")
    for day, dp in zip(_days(4), FILTER_DP, strict=True):
        put_day(points, _start(day), {"SF-STS": 1, "SF-SPD": 80, "FILT-DP": dp})
        _judge(ahu, day)
        if day < _days(4)[-1]:
            assert not WorkOrder.objects.filter(ahu=ahu, condition_code="filter_loaded").exists()
    days = list(FilterDay.objects.filter(component=bank).order_by("day"))
    assert [round(d.corrected_dp_pa, 2) for d in days] == CORRECTED
    assert [d.verdict for d in days] == ["watch", "watch", "watch", "fail"]
    assert days[0].airflow_source.startswith("from the supply fan's speed command by the first fan law")
    assert [d.run_hours for d in days] == [24.0, 48.0, 72.0, 96.0]  # the fan's meter, fed the same nights

    [wo] = WorkOrder.objects.filter(ahu=ahu, condition_code="filter_loaded")
    assert wo.kind == WorkOrder.Kind.CORRECTIVE and wo.component == bank
    assert wo.title == "Filter loaded — Final filters" and wo.due_date == _days(4)[-1]
    assert "found in the building-automation trend" in wo.reason and "97 %" in wo.reason
    assert list(wo.tasks.values_list("task_code", flat=True)) == ["filter_replace"]
    assert not Reading.objects.filter(component=bank).exists()  # no technician read it

    # The next day reads the same: still one change planned.
    day5 = _days(5)[-1]
    put_day(points, _start(day5), {"SF-STS": 1, "SF-SPD": 80, "FILT-DP": 178})
    _judge(ahu, day5)
    assert WorkOrder.objects.filter(ahu=ahu, condition_code="filter_loaded").count() == 1


def test_samples_with_the_fan_stopped_are_not_a_filter_reading(unit):
    """At night the fan stops and the sensor reads about 0 Pa: only the running hours count."""
    ahu, points = unit
    day = DAY1
    put_day(
        points,
        _start(day),
        {
            "SF-STS": lambda t: 1 if 7 <= t.hour < 19 else 0,
            "SF-SPD": lambda t: 100 if 7 <= t.hour < 19 else 0,
            "FILT-DP": lambda t: 200 if 7 <= t.hour < 19 else 1,
        },
    )
    _judge(ahu, day)
    [row] = FilterDay.objects.filter(component__name="Final filters", component__ahu=ahu)
    assert row.corrected_dp_pa == pytest.approx(200.0) and row.samples == 48


# ---------------------------------------------------------------------------
# Faults
# ---------------------------------------------------------------------------


@override_settings(PLENUM_FAULT_CLOSE_AFTER_DAYS=7)
def test_a_stuck_outdoor_air_damper_is_one_fault_with_one_corrective_work_until_absent_for_a_week(unit):
    ahu, points = unit
    damper = ahu.components.get(name="Outdoor-air damper")
    stuck = _days(3)
    for day in stuck:
        _heating_day(points, day, mat=STUCK_MAT)
        _judge(ahu, day)
    [fault] = Fault.objects.filter(ahu=ahu)
    assert (fault.code, fault.state, fault.component) == ("FC6", Fault.State.OPEN, damper)
    assert fault.days_seen == [d.isoformat() for d in stuck]
    assert fault.section.startswith("ASHRAE Guideline 36")
    assert fault.first_seen_at.date() == DAY1 and fault.last_seen_at == _start(stuck[-1]) + dt.timedelta(days=1)
    assert fault.share == pytest.approx(1.0, abs=0.05)  # the whole heating day, after the mode delay
    assert fault.consequence["kind"] == "energy" and fault.consequence["values"]["oa_fraction"] == pytest.approx(
        0.96, abs=0.01
    )
    assert {w["day"] for w in fault.windows} == {d.isoformat() for d in stuck}
    [wo] = WorkOrder.objects.filter(ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE)
    assert fault.corrective_work_order == wo
    assert wo.condition_code == "damper_position" and wo.component == damper
    assert wo.title == "Damper not at commanded position — Outdoor-air damper"
    assert wo.approval == WorkOrder.Approval.PENDING
    assert list(wo.tasks.values_list("task_code", flat=True)) == ["damper_actuator"]

    # Judging a day again replaces its evidence: the same fault, the same time in windows.
    fault_s = fault.fault_s
    _judge(ahu, stuck[-1])
    fault.refresh_from_db()
    assert fault.fault_s == fault_s and Fault.objects.filter(ahu=ahu).count() == 1

    # The damper is freed: six good days leave it open, the seventh closes it.
    good = _days(7, stuck[-1] + dt.timedelta(days=1))
    for day in good:
        _heating_day(points, day, mat=WORKING_MAT)
        _judge(ahu, day)
        fault.refresh_from_db()
        assert fault.state == (Fault.State.CLOSED if day == good[-1] else Fault.State.OPEN), day
    assert fault.close_cause == Fault.CloseCause.ABSENT
    assert fault.closed_at == _start(good[-1]) + dt.timedelta(days=1)
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.CANCELLED  # a proposal nobody approved is withdrawn
    assert Fault.objects.filter(ahu=ahu).count() == 1

    # Stuck again: a new fault.
    again = good[-1] + dt.timedelta(days=1)
    _heating_day(points, again, mat=STUCK_MAT)
    _judge(ahu, again)
    assert Fault.objects.filter(ahu=ahu, state=Fault.State.OPEN).count() == 1
    assert Fault.objects.filter(ahu=ahu).count() == 2


def test_a_working_damper_gives_no_fault(unit):
    ahu, points = unit
    _heating_day(points, DAY1, mat=WORKING_MAT)
    result = _judge(ahu, DAY1)
    assert result.faults is not None and result.faults.results["FC6"].judged
    assert not Fault.objects.exists() and not WorkOrder.objects.filter(kind=WorkOrder.Kind.CORRECTIVE).exists()


def test_approved_corrective_work_completed_closes_its_fault(unit):
    from accounts.models import Role
    from scheduling.services import work_order_complete
    from tests.factories.accounts import make_person
    from tests.factories.scheduling import make_supervisor

    ahu, points = unit
    _heating_day(points, DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    fault = Fault.objects.get(ahu=ahu)
    wo = fault.corrective_work_order
    boss = make_supervisor(ahu.building.site.organisation)
    tech = make_person(organisation=ahu.building.site.organisation, role=Role.TECHNICIAN)
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=1, hours=9), tick=False):
        from scheduling.services import corrective_work_order_approve

        corrective_work_order_approve(work_order=wo, by=boss)
        work_order_assign(work_order=wo, assignee=tech, by=boss)
        work_order_complete(work_order=wo, by=tech)
    fault.refresh_from_db()
    assert (fault.state, fault.close_cause) == (Fault.State.CLOSED, Fault.CloseCause.CORRECTED)


def test_the_nightly_run_judges_the_sites_yesterday(unit):
    """At 00:30 UTC on 13 January the site's yesterday is 12 January."""
    ahu, points = unit
    _heating_day(points, DAY1, mat=STUCK_MAT)
    result = trends_judge_yesterday(site=ahu.building.site, now=_start(DAY1) + dt.timedelta(days=1, minutes=30))
    assert [d.day for d in result.days] == [DAY1] and [f.code for f in result.opened] == ["FC6"]


def test_the_nightly_task_queues_each_site_with_points(unit):
    from automation.judging_tasks import trends_judge_nightly

    ahu, points = unit
    _heating_day(points, DAY1, mat=STUCK_MAT)
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=1, minutes=30), tick=False):
        assert trends_judge_nightly.delay().get() == 1
    assert Fault.objects.filter(ahu=ahu, code="FC6").exists()


def test_an_end_before_the_start_is_refused(unit):
    from django.core.exceptions import ValidationError

    ahu, _points = unit
    with pytest.raises(ValidationError) as err:
        trends_judge(site=ahu.building.site, start=DAY1, end=DAY1 - dt.timedelta(days=1))
    assert "before start day" in str(err.value.message_dict["end"])


# ---------------------------------------------------------------------------
# Freeze events and readiness
# ---------------------------------------------------------------------------


def test_a_near_freezing_night_makes_the_unit_not_ready_until_its_freeze_test_passes_again(
    api_client, django_capture_on_commit_callbacks
):
    """A unit whose preheater test passed on 8 October (before its 20 October season) is ready. On the night of
    27–28 October the supply air falls to 2 °C for two hours (below Guideline 36's 3.3 °C for 15 minutes,
    stage 3, values as engineering.faults.freeze): it is not ready, in the readiness function and the API,
    until the freeze-protection test on the urgent corrective work passes on 30 October."""
    from tests.flows.test_freeze_readiness import THRESHOLD_C, _send, _unit_with_a_preheater

    wo, tech, _heater, site, boss, _manager = _unit_with_a_preheater()
    ahu = wo.ahu
    passed = dt.datetime(2025, 10, 8, 10, tzinfo=UTC)
    with time_machine.travel(passed + dt.timedelta(hours=1), tick=False):
        _send(api_client, tech, wo, {"preheater_freeze.stage_on_temp": THRESHOLD_C}, passed)
    points = map_points(ahu, ["SAT", "SF-STS"])
    night = dt.date(2025, 10, 27)  # local (Amsterdam, UTC+1 after 26 October)
    local_midnight = dt.datetime(2025, 10, 27, 23, tzinfo=UTC)  # 28 October 00:00 local
    cold = (local_midnight + dt.timedelta(hours=2), local_midnight + dt.timedelta(hours=4))

    def sat(t):
        return 2.0 if cold[0] <= t < cold[1] else 16.0

    for day in (night, night + dt.timedelta(days=1)):
        start = dt.datetime(day.year, day.month, day.day, tzinfo=UTC) - dt.timedelta(hours=1)
        put_day(points, start, {"SAT": sat, "SF-STS": 1})

    def readiness(at):
        with time_machine.travel(at, tick=False):
            [r] = freeze_readiness(units=[ahu], as_of=at)
            api_client.force_authenticate(boss)
            [api] = api_client.get("/api/inspections/freeze-readiness/").json()
        assert api["status"] == r.status
        return r

    assert readiness(dt.datetime(2025, 10, 27, 12, tzinfo=UTC)).status == "ready"
    with time_machine.travel(dt.datetime(2025, 10, 29, 0, 30, tzinfo=UTC), tick=False):
        result = trends_judge_yesterday(site=site)
    assert [d.day for d in result.days] == [dt.date(2025, 10, 28)]
    [fault] = Fault.objects.filter(ahu=ahu, code=Fault.FREEZE)
    assert min(w["lowest_c"] for w in fault.windows) == 2.0
    assert {w["stage"] for w in fault.windows} == {"stage 1", "stage 2", "stage 3"}
    r = readiness(dt.datetime(2025, 10, 29, 9, tzinfo=UTC))
    assert r.status == "not_ready" and "Supply air near freezing" in r.reason and "28 Oct 2025" in r.reason

    cwo = fault.corrective_work_order
    assert cwo.priority == WorkOrder.Priority.URGENT and cwo.approval == WorkOrder.Approval.APPROVED
    assert cwo.condition_code == "freeze_protection_failed"
    assert "preheater_freeze" in set(cwo.tasks.values_list("task_code", flat=True))
    # Still not ready a day later, the fault open or not: only a passing test answers it.
    assert readiness(dt.datetime(2025, 10, 30, 8, tzinfo=UTC)).status == "not_ready"

    retest = dt.datetime(2025, 10, 30, 10, tzinfo=UTC)
    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    with time_machine.travel(retest + dt.timedelta(hours=1), tick=False):
        _send(api_client, tech, cwo, {"preheater_freeze.stage_on_temp": THRESHOLD_C}, retest)
    after = readiness(dt.datetime(2025, 10, 31, 9, tzinfo=UTC))
    assert after.status == "ready" and after.tested_on == dt.date(2025, 10, 30)
    fault.refresh_from_db()
    assert fault.state == Fault.State.CLOSED and fault.close_cause == Fault.CloseCause.CORRECTED
    # Its finding (critical, from the trends) closed with it.
    assert (fault.finding.state, fault.finding.close_cause, fault.finding.severity) == (
        "closed",
        "corrected",
        "critical",
    )


# ---------------------------------------------------------------------------
# Reads for the pages
# ---------------------------------------------------------------------------


def test_faults_are_read_through_the_tenancy_rule_with_their_evidence_windows(unit):
    """The unit's supervisor sees the fault, its work and its windows on the trend view; another organisation's
    supervisor sees nothing and gets not-found for the fault."""
    from django.http import Http404

    from accounts.models import Role
    from automation.fault_selectors import fault_for, faults_visible_to, unit_trend_view
    from tests.factories.accounts import make_person

    ahu, points = unit
    _heating_day(points, DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    boss = make_person(organisation=ahu.building.site.organisation, role=Role.SUPERVISOR)
    stranger = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR)
    [fault] = faults_visible_to(user=boss)
    assert fault.code == "FC6" and fault.corrective_work_order is not None
    assert fault_for(user=boss, id=fault.pk) == fault
    assert not faults_visible_to(user=stranger).exists()
    with pytest.raises(Http404):
        fault_for(user=stranger, id=fault.pk)
    view = unit_trend_view(ahu=ahu, start=_start(DAY1), end=_start(DAY1) + dt.timedelta(days=1))
    mat = next(line for line in view.lines if line.role == "mat")
    assert len(mat.samples) == 96 and mat.samples[0] == (_start(DAY1), STUCK_MAT)
    damper = next(line for line in view.lines if line.role == "oa_damper")
    assert damper.samples[0][1] == pytest.approx(0.25)  # 25 % as a fraction
    assert [w["code"] for w in view.windows] == ["FC6"]


# ---------------------------------------------------------------------------
# Days as the site keeps them, missing data, wild values
# ---------------------------------------------------------------------------


def test_a_day_is_the_sites_local_day_and_the_clock_change_day_has_25_hours(unit):
    """Amsterdam left summer time on 26 October 2025 (02:00 CEST → 01:00 CET, from memory): that local day lasts
    25 h, so a fan running all day adds 25 run-hours; the day before adds 24."""
    from inventory.models import Site

    ahu, points = unit
    Site.objects.filter(pk=ahu.building.site_id).update(time_zone="Europe/Amsterdam")
    ahu.building.site.refresh_from_db()
    start = dt.datetime(2025, 10, 24, 22, tzinfo=UTC)  # 25 October 00:00 CEST
    put_day(points, start, {"SF-STS": 1})
    put_day(points, start + dt.timedelta(days=1), {"SF-STS": 1})
    put_day(points, start + dt.timedelta(days=2), {"SF-STS": 1})
    with time_machine.travel(dt.datetime(2025, 10, 28, 1, tzinfo=UTC), tick=False):
        trends_judge(site=ahu.building.site, start=dt.date(2025, 10, 25), end=dt.date(2025, 10, 26))
    readings = list(MeterReading.objects.filter(ahu=ahu).order_by("taken_at"))
    assert [r.hours for r in readings] == [0.0, 24.0, 49.0]
    assert readings[-1].taken_at == dt.datetime(2025, 10, 26, 23, tzinfo=UTC)  # 27 October 00:00 CET


@override_settings(PLENUM_FAULT_CLOSE_AFTER_DAYS=7)
def test_days_without_trends_neither_add_run_hours_nor_close_a_fault(unit):
    """Absence of data is not absence of the fault: ten days with no samples leave the stuck damper open, and
    the meter gets no reading for them."""
    ahu, points = unit
    _heating_day(points, DAY1, mat=STUCK_MAT)
    _judge(ahu, DAY1)
    for day in _days(10, DAY1 + dt.timedelta(days=1)):
        result = _judge(ahu, day)
        assert result.run_hours is None and result.faults is None
    assert Fault.objects.get(ahu=ahu).state == Fault.State.OPEN
    assert MeterReading.objects.filter(ahu=ahu).count() == 2  # 0 h at the first day's start, 24 h at its end


def test_values_outside_what_a_sensor_can_read_are_gaps_not_faults(unit):
    """A supply air of 999 °C and a speed command of 150 % (a BAS's error codes) do not stop the day being judged:
    the temperature is a gap, the command is read as full."""
    ahu, points = unit
    _heating_day(points, DAY1, mat=WORKING_MAT, SAT=lambda t: 999.0 if t.hour == 3 else 18.0, **{"SF-SPD": 150})
    result = _judge(ahu, DAY1)
    assert result.faults is not None and result.faults.results["FC6"].judged
    assert not Fault.objects.exists()


def test_the_command_judges_a_range_and_names_a_bad_date(unit):
    import io

    from django.core.management import CommandError, call_command

    ahu, points = unit
    ahu.building.site.code = "dune"
    ahu.building.site.save(update_fields=["code"])
    for day in _days(2):
        _heating_day(points, day, mat=STUCK_MAT)
    out = io.StringIO()
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=3), tick=False):
        call_command("judge_trends", "dune", "2026-01-12", "2026-01-13", stdout=out)
    assert "2026-01-12 AHU-07: ran 24.0 h; opened FC6" in out.getvalue()
    assert "faults opened 1, closed 0" in out.getvalue()
    with pytest.raises(CommandError, match="start='2026-13-01' is not a date; allowed: YYYY-MM-DD"):
        call_command("judge_trends", "dune", "2026-13-01")


def test_a_change_of_value_fan_log_holds_its_last_state_across_midnight(unit):
    """The fan was logged on at 21:00 and off at 03:00 (a change-of-value log, nothing between): the second day
    gets the 3 h after midnight, the first the 3 h before it."""
    from tests.automation.trend_builders import put

    ahu, points = unit
    put(points["SF-STS"], [(_start(DAY1) + dt.timedelta(hours=21), 1.0), (_start(DAY1) + dt.timedelta(hours=27), 0.0)])
    with time_machine.travel(_start(DAY1) + dt.timedelta(days=2, hours=1), tick=False):
        trends_judge(site=ahu.building.site, start=DAY1, end=DAY1 + dt.timedelta(days=1))
    assert [r.hours for r in MeterReading.objects.filter(ahu=ahu).order_by("taken_at")] == [0.0, 3.0, 6.0]


# ---------------------------------------------------------------------------
# Reads per site, not per unit
# ---------------------------------------------------------------------------


def _site_of_units(n: int):
    org = OrganisationFactory()
    site = SiteFactory(organisation=org, time_zone="UTC")
    building = BuildingFactory(site=site)
    for i in range(n):
        ahu = make_full_unit(building=building, tag=f"AHU-{i + 1:02d}")
        put_day(map_points(ahu), _start(DAY1), {**HEATING, "MAT": WORKING_MAT, "FILT-DP": 150})
    return site


def _judge_counting(site) -> tuple[list, list[str]]:
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    with (
        time_machine.travel(_start(DAY1) + dt.timedelta(days=1, hours=1), tick=False),
        CaptureQueriesContext(connection) as queries,
    ):
        days = trends_judge(site=site, start=DAY1, end=DAY1).days
    return days, [q["sql"] for q in queries.captured_queries]


# What judging reads rather than writes: the trends, the fan meters' latest readings, the open faults, the
# filter banks' open findings and their filter series for the forecast (writes and the meter service's own
# checks are each unit's).
SITE_READS = (
    'FROM "automation_trendday"',
    'FROM "automation_fault"',
    'FROM "inventory_component"',
    'FROM "inspections_finding"',
    'FROM "inspections_reading"',
    'FROM "automation_filterday"',
)


def test_a_sites_reads_are_the_same_few_queries_for_one_unit_or_three():
    """Judging a site's day reads each unit's trends, fan meter, open faults, filter findings and filter series
    for the whole site at once, and locks its units once for their meter readings: as many of those queries for
    three units as for one. Each unit's filter days are one write, and their forecast words one more for the
    whole site."""
    task_library_install()
    counted = []
    for n in (1, 3):
        days, sql = _judge_counting(_site_of_units(n))
        assert len(days) == n and all(d.faults is not None and d.run_hours is not None for d in days)
        assert all(f.day is not None for d in days for f in d.filters)
        counted.append(sum(1 for q in sql if q.lstrip().startswith("SELECT") and any(t in q for t in SITE_READS)))
        assert sum(1 for q in sql if q.startswith('INSERT INTO "automation_filterday"')) == n
        assert sum(1 for q in sql if q.startswith('UPDATE "automation_filterday"')) <= 1
        # The units' rows are locked once for the site's meter readings, not once a reading.
        locks = [q for q in sql if 'FROM "inventory_ahu"' in q and "FOR UPDATE" in q]
        assert MeterReading.objects.filter(ahu__building__site=days[0].ahu.building.site).count() == 2 * n
        counted.append(len(locks))
    assert counted[0] == counted[2] and counted[1] == counted[3]
