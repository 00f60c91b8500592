"""The whole demo: registry, a year of history, the schedule and today's round, on a controlled clock.

The demo is loaded relative to its ``today``; every test here fixes the clock (a late-October day inside
the run-up to the freeze season, a July day far from it, a December day inside it), so the demo must walk
the same scenarios whatever the season.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.core.management import call_command
from django.urls import reverse

from accounts.models import User
from frontend.demo import ROUND_FIRST_UNIT_TASKS, ROUND_TASKS, demo_load
from inspections.freeze import NOT_READY, READY, freeze_readiness
from inspections.models import Finding, Inspection
from inventory.models import AHU, Site
from inventory.today import today_for
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.selectors import today_visits_for

# Weekdays: technicians do not work weekends, so the demo plans no round on a Saturday or Sunday.
OCTOBER, JULY, DECEMBER = dt.date(2026, 10, 23), dt.date(2026, 7, 15), dt.date(2026, 12, 2)
FAILING = ("elderbank", "AHU-L1")  # inspections.demo.FREEZE_FAULTS


def _at(day: dt.date):
    """The clock at 10:00 UTC of ``day`` (noon in the demo sites' zone), standing still."""
    return time_machine.travel(dt.datetime(day.year, day.month, day.day, 10, tzinfo=dt.UTC), tick=False)


@pytest.fixture
def loaded(db, capsys):
    with _at(DECEMBER):
        call_command("load_demo")
        yield capsys.readouterr().out


def _today_codes(username: str) -> set[str]:
    tech = User.objects.get(username=username)
    visits = today_visits_for(technician=tech, day=today_for(tech))
    return {t["code"] for v in visits for wo in v["work_orders"] for t in wo["tasks"]}


def test_demo_has_a_year_of_history_and_upcoming_work(loaded):
    """After load_demo there are completed and verified visits over twelve months and planned work ahead."""
    done = WorkOrder.objects.filter(state__in=["completed", "verified"])
    assert done.count() >= 100
    oldest = min(done.values_list("due_date", flat=True))
    assert (DECEMBER - oldest).days >= 330
    assert Inspection.objects.count() >= 100
    assert WorkOrder.objects.filter(due_date__gte=DECEMBER, state__in=["planned", "assigned"]).exists()
    assert "plenum-demo-1" in loaded and "helena.pm" in loaded


def test_history_holds_verified_and_completed_visits_with_their_signed_records(loaded, client):
    """Older visits are verified by the supervisor, the latest ones only completed; both keep a signed record."""
    verified = WorkOrder.objects.filter(state="verified", kind="preventive")
    completed = WorkOrder.objects.filter(state="completed", kind="preventive")
    assert verified.exists() and completed.exists()
    assert max(completed.values_list("due_date", flat=True)) > max(verified.values_list("due_date", flat=True))
    for wo in (verified.order_by("due_date").first(), completed.order_by("-due_date").first()):
        inspection = Inspection.objects.get(work_order=wo)
        assert inspection.signature_name and inspection.signature_image, wo


def test_second_run_changes_nothing(loaded, capsys):
    """Running load_demo again the same day creates no records and prints the same logins."""
    counts = (WorkOrder.objects.count(), WorkOrderTask.objects.count(), Inspection.objects.count())
    findings = list(Finding.objects.order_by("pk").values_list("pk", "times_seen", "state"))
    with _at(DECEMBER):
        call_command("load_demo")
    second = capsys.readouterr().out
    assert (WorkOrder.objects.count(), WorkOrderTask.objects.count(), Inspection.objects.count()) == counts
    assert list(Finding.objects.order_by("pk").values_list("pk", "times_seen", "state")) == findings
    assert "0 records created or changed" in second
    assert "Assigned 0 upcoming" in second
    assert loaded.splitlines()[-8:] == second.splitlines()[-8:]


def test_a_later_run_keeps_the_history_and_moves_the_round_to_its_day(loaded):
    """load_demo on a later day writes no second history; each open round visit moves on: the first unit of each
    technician's round to that day, a further one to the first weekday it fits in their capacity (never before
    that day)."""
    inspections = Inspection.objects.count()
    rounds = set(WorkOrder.objects.filter(source_ref="demo:round").values_list("pk", flat=True))
    later = DECEMBER + dt.timedelta(days=1)
    with _at(later):
        demo_load(today=later)
        assert Inspection.objects.count() == inspections
        assert set(WorkOrder.objects.filter(source_ref="demo:round").values_list("pk", flat=True)) == rounds
        planned = set(WorkOrder.objects.filter(pk__in=rounds).values_list("scheduled_for", flat=True))
        assert later in planned and min(planned) == later
        for username in ("ines.tech", "tomas.tech"):
            assert set(ROUND_TASKS) | set(ROUND_FIRST_UNIT_TASKS) <= _today_codes(username), username


@pytest.mark.django_db
@pytest.mark.parametrize("day", [OCTOBER, JULY], ids=["late-october", "july"])
def test_the_demo_walks_every_scenario_whatever_the_season(day, client):
    """On a late-October day and a July day alike:

    - each technician's today carries a freeze-protection test, an outdoor-air check, a filter check,
      a coil check (with the coil balance readings asked), a sensor calibration and a fan proving test;
    - the property manager's dashboard and site page show the one failing unit not ready, with the step
      that failed and its corrective work, and every other unit with preheat ready;
    - each recirculating unit whose ventilation need is above its design minimum has one open
      design-review finding seen on more than one visit, and no corrective work for it.
    """
    with _at(day):
        demo_load(today=day)

        for username in ("ines.tech", "tomas.tech"):
            assert set(ROUND_TASKS) | set(ROUND_FIRST_UNIT_TASKS) <= _today_codes(username), username

        units = list(AHU.objects.select_related("building__site"))
        readiness = freeze_readiness(units=units, as_of=dt.datetime(day.year, day.month, day.day, 10, tzinfo=dt.UTC))
        by_unit = {(r.unit.building.site.code, r.unit.tag): r for r in readiness}
        assert by_unit[FAILING].status == NOT_READY
        assert "stage 1 switched on" in by_unit[FAILING].reason and "corrective work" in by_unit[FAILING].reason
        assert {k: r.status for k, r in by_unit.items() if k != FAILING} == {k: READY for k in by_unit if k != FAILING}

        client.force_login(User.objects.get(username="helena.pm"))
        page = client.get(reverse("frontend:dashboard")).content.decode()
        visible = Site.objects.filter(code__in=["gullwharf", "elderbank"]).values_list("pk", flat=True)
        ready_units = sum(1 for (code, _), r in by_unit.items() if code in {"gullwharf", "elderbank"})
        assert f"{ready_units - 1} of {ready_units}" in re.sub(r"\s+", " ", page)
        assert "stage 1 switched on" in page
        elderbank = Site.objects.get(code="elderbank")
        assert elderbank.pk in visible
        site_page = client.get(reverse("frontend:dashboard_site", args=[elderbank.pk])).content.decode()
        assert site_page.count('data-freeze="not_ready"') == 1
        assert 'data-freeze="ready"' in site_page
        l1_name = next(a for a in units if (a.building.site.code, a.tag) == FAILING).display_name
        assert f"{l1_name}: <strong>Not ready</strong>" in site_page

        # AHU-L1's reading rooms need about 1.36 m³/s of outdoor air by ASHRAE 62.1 (library, 1,600 m², 160
        # people), above its design minimum 35 % × 2.4 m³/s = 0.84 m³/s: one design review, seen monthly.
        l1 = next(a for a in units if (a.building.site.code, a.tag) == FAILING)
        review = Finding.objects.get(ahu=l1, kind=Finding.Kind.DESIGN_REVIEW, state=Finding.State.OPEN)
        assert review.times_seen > 1 and review.corrective_work_order_id is None
        for ahu in units:  # never a pile of repeats: one open design review per unit and problem at most
            open_reviews = Finding.objects.filter(ahu=ahu, kind=Finding.Kind.DESIGN_REVIEW, state=Finding.State.OPEN)
            assert open_reviews.count() <= 1, ahu


@pytest.mark.django_db
@pytest.mark.parametrize("day", [OCTOBER, JULY, DECEMBER], ids=["late-october", "july", "december"])
def test_the_demo_plans_no_technician_past_their_capacity(day):
    """The demo plans as the board would: on no day of the coming fortnight does a technician's planned work
    (tasks plus travel between sites, scheduling.selectors.technician_day_loads) pass their daily capacity,
    so the board does not open on a red day."""
    from accounts.models import Organisation
    from scheduling.selectors import technician_day_loads

    with _at(day):
        demo_load(today=day)
        for organisation in Organisation.objects.all():
            for user, loads in technician_day_loads(organisation=organisation, start=day, days=14):
                over = [(d.date, d.hours, d.capacity_hours) for d in loads if d.over]
                assert not over, (user.username, over)


@pytest.mark.django_db
def test_the_round_asks_the_readings_of_each_scenario():
    """The round's checklists ask the supply airflow beside the filter reading (the 0.8 m³/s unit among
    them), the coil balance on a hot-water and a glycol coil, and no return or mixed air of a 100 %
    outdoor-air unit; one demo technician reads in US units."""
    from inspections.selectors import checklist_for

    with _at(OCTOBER):
        demo_load(today=OCTOBER)
        round_orders = WorkOrder.objects.filter(source_ref="demo:round").select_related("ahu", "assignee")
        seen = {"airflow_08": False, "water": False, "glycol": False, "full_oa": False}
        for wo in round_orders:
            doc = checklist_for(work_order=wo, user=wo.assignee)
            items = [
                (it["key"], (it["component"] or {}).get("label_code")) for t in doc["templates"] for it in t["items"]
            ]
            keys = {k for k, _ in items}
            assert "visit.supply_airflow" in keys and "filter_check.dp" in keys, wo
            if abs(wo.ahu.design_supply_airflow_m3s - 0.8) < 1e-9:
                seen["airflow_08"] = True
            fluids = {c.label_code: c.specs.get("fluid") for c in wo.ahu.components.filter(kind="coil")}
            balanced = {fluids.get(code) for k, code in items if k == "coil_clean.water_flow"}
            asked = {k for k, code in items if code in fluids and fluids[code] in ("water", "glycol")}
            assert {"coil_clean.air_in", "coil_clean.air_out", "coil_clean.water_in", "coil_clean.water_out"} <= asked
            seen["water"] = seen["water"] or "water" in balanced
            seen["glycol"] = seen["glycol"] or "glycol" in balanced
            if wo.ahu.full_outdoor_air:
                seen["full_oa"] = True
                assert "ventilation_check.outdoor_air" in keys, wo
                assert not keys & {"ventilation_check.return_air", "ventilation_check.mixed_air"}, wo
        assert all(seen.values()), seen
        assert User.objects.get(username="tomas.tech").unit_system == "us"


@pytest.mark.django_db
def test_each_technician_can_walk_drift_fan_proving_and_a_filter_at_reduced_airflow():
    """On 2 December 2026 every technician's round has one unit asking the sensor calibration and the
    fan proving steps; each round unit's filter history holds a reading at reduced airflow (the supply airflow
    read beside it, 0.8 × design) whose judgement is corrected to design airflow; and a 100 % outdoor-air
    unit's history judges the outdoor air it delivers, never asking its supply CO2."""
    from inspections.models import Evaluation, Reading
    from inspections.selectors import checklist_for

    with _at(DECEMBER):
        demo_load(today=DECEMBER)
        for username in ("ines.tech", "tomas.tech"):
            tech = User.objects.get(username=username)
            rounds = WorkOrder.objects.filter(source_ref="demo:round", assignee=tech)
            full = [
                wo
                for wo in rounds
                if {"sensor_calibration", "fan_proving"} <= set(wo.tasks.values_list("task_code", flat=True))
            ]
            assert full, username
            doc = checklist_for(work_order=full[0], user=tech)
            codes = {t["code"] for t in doc["templates"]}
            assert {"sensor_calibration", "fan_proving", "filter_check", "visit"} <= codes, codes
            for wo in rounds:
                airflows = Reading.objects.filter(
                    inspection__work_order__ahu=wo.ahu, item__template__code="visit", item__key="supply_airflow"
                ).values_list("value_si", "inspection_id")
                reduced = [(q, i) for q, i in airflows if q < 0.9 * wo.ahu.design_supply_airflow_m3s]
                assert reduced, wo.ahu
                _, inspection_id = reduced[0]
                assert Reading.objects.filter(
                    inspection_id=inspection_id, item__template__code="filter_check", item__key="dp"
                ).exists(), wo.ahu
        s1 = AHU.objects.get(tag="AHU-S1")
        assert s1.full_outdoor_air
        judged = Evaluation.objects.filter(inspection__work_order__ahu=s1, check_name="full_oa_airflow")
        assert judged.exists() and set(judged.values_list("verdict", flat=True)) <= {"ok", "watch"}
        assert not Reading.objects.filter(
            inspection__work_order__ahu=s1, item__template__code="ventilation_check", item__key="supply_co2"
        ).exists()


@pytest.mark.django_db
def test_demo_forms_were_received_when_they_were_finished_not_when_the_demo_loaded():
    """Each demo visit's form reads as synced minutes after it was finished (the record says "received" on
    that day), not on the day the demo was loaded."""
    with _at(DECEMBER):
        demo_load(today=DECEMBER)
        for inspection in Inspection.objects.exclude(finished_at=None):
            gap = inspection.received_at - inspection.finished_at
            assert dt.timedelta(0) <= gap <= dt.timedelta(minutes=30), (inspection.pk, gap)


def test_every_demo_site_tells_the_technician_how_to_get_in(loaded):
    """Invented access notes on each demo site (keys, reception, roof access), shown on the phone."""
    for site in Site.objects.all():
        assert len(site.access_notes) > 40, site.name
    assert "sign the contractor book" in Site.objects.get(code="gullwharf").access_notes


PLACE_WORDS = ("roof", "basement", "mezzanine")  # the kinds of place the demo's unit locations name


def _places(text: str) -> set[str]:
    return {word for word in PLACE_WORDS if word in text.lower()}


def test_each_demo_sites_access_notes_agree_with_where_its_units_are():
    """A site's access notes (one text for all its buildings, shown on the phone for every unit there) name each
    building and, in that building's part, the kind of place its units are in and no other: a tryout found
    "Plant room on roof level 5" shown for Ropewalk Hall's AHU-01 in the basement."""
    import json

    from inventory.demo import DEMO_FILE

    for site in json.loads(DEMO_FILE.read_text())["sites"]:
        notes, buildings = site["access_notes"], site["buildings"]
        named = [(notes.find(b["name"]), b) for b in buildings] if len(buildings) > 1 else [(0, buildings[0])]
        starts = sorted(named, key=lambda pair: pair[0])
        assert all(at >= 0 for at, _ in starts), (site["code"], "every building named", notes)
        for (at, building), (end, _) in zip(starts, [*starts[1:], (len(notes), None)], strict=True):
            part = notes[at:end]
            where = set().union(*(_places(ahu["location"]) for ahu in building["ahus"]))
            assert _places(part) == where, (site["code"], building["name"], part, where)


@pytest.mark.django_db
def test_the_demo_loads_in_the_hour_after_midnight_at_its_sites():
    """23:01 UTC on 4 December 2026 (a Friday) is already 00:01 on Saturday 5 December in the sites' zone
    (Europe/…, UTC+1 in winter): the server's date is a day behind the sites'. ``make run`` then loaded no demo
    ("scheduled day 2026-12-04 is in the past at Elderbank Campus"). Every visit it plans lies on or after its
    site's own today."""
    with time_machine.travel(dt.datetime(2026, 12, 4, 23, 1, tzinfo=dt.UTC), tick=False):
        call_command("load_demo")
        planned = WorkOrder.objects.filter(scheduled_for__isnull=False).select_related("ahu__building__site")
        assert planned.exists()
        assert all(wo.scheduled_for >= today_for(wo.ahu.building.site) for wo in planned if wo.is_open)


def test_the_demo_history_flags_no_failed_reading_for_want_of_a_note(loaded):
    """The demo technician writes a note beside each failed reading, as the checklist asks: the supervisor's flagged
    forms are not filled with a month-by-month 'failed without a note' for a known design shortfall (ASHRAE 62.1
    requirement above the design minimum outdoor air)."""
    codes = [f["code"] for flags in Inspection.objects.values_list("flags", flat=True) for f in flags or []]
    assert "missing_note" not in codes
