"""The demo's year of synthetic building-automation trends, judged by the real services, on a controlled clock.

After ``load_demo`` on a December day (inside the freeze season): the loaded filter's change is planned from the
trend (no technician's reading), the stuck outdoor-air damper is one open fault with its evidence windows and its
proposed corrective work, and one open finding of the unit (source building-automation trends, rule FC6) holding
that work, the leaking cooling valve is found, the freezing night keeps its unit not ready for
freeze protection (the one function that decides readiness, and the compliance figures the manager's dashboard
and report read), the healthy units have no fault, and a second load changes nothing.
"""

import datetime as dt
import io

import pytest
import time_machine
from django.core.management import call_command

from automation.demo_values import FILTER, FREEZE_NIGHT, LEAKING_VALVE, SEEDED, STUCK_DAMPER
from automation.models import Fault, FilterDay, Point, TrendDay
from inspections.freeze import NOT_READY, freeze_readiness
from inspections.models import Finding, Reading
from inventory.models import AHU
from reports.compliance import compliance_figures
from scheduling.models import WorkOrder

DECEMBER = dt.date(2026, 12, 2)  # a Wednesday inside the demo sites' freeze season
AT = dt.datetime(2026, 12, 2, 10, tzinfo=dt.UTC)


def _unit(fault: str) -> AHU:
    (site, building, tag) = next(k for k, v in SEEDED.items() if v == fault)
    return AHU.objects.select_related("building__site").get(building__site__code=site, building__code=building, tag=tag)


def _snapshot() -> dict:
    return {
        "points": Point.objects.count(),
        "buckets": sorted(TrendDay.objects.values_list("point_id", "day", "count")),
        "faults": sorted(Fault.objects.values_list("ahu_id", "code", "state", "days_seen", "fault_s")),
        "findings": sorted(Finding.objects.values_list("ahu_id", "problem", "state", "times_seen")),
        "filter_days": FilterDay.objects.count(),
        "work_orders": WorkOrder.objects.count(),
    }


@pytest.mark.django_db(transaction=False)
def test_demo_trends_carry_the_seeded_faults_and_only_them():
    with time_machine.travel(AT, tick=False):
        call_command("load_demo", stdout=io.StringIO())

        # The loaded filter: its change planned from the trend, no technician having read it loaded.
        filter_unit = _unit(FILTER)
        changes = WorkOrder.objects.filter(
            ahu=filter_unit, kind=WorkOrder.Kind.CORRECTIVE, source_ref__startswith="trend:filter:"
        )
        assert changes.count() == 1
        change = changes.get()
        assert "found in the building-automation trend" in change.reason
        assert change.state in WorkOrder.OPEN_STATES
        bank = change.tasks.first().component
        assert bank is not None and bank.kind == "filter_bank"
        assert "filter_replace" in set(change.tasks.values_list("task_code", flat=True))
        fail_days = FilterDay.objects.filter(component=bank, verdict="fail")
        assert fail_days.exists()
        first_fail = fail_days.order_by("day").first().day
        # Between visits: no technician's reading of that bank since the last visit before it crossed.
        assert not Reading.objects.filter(
            component=bank, inspection__finished_at__date__gte=first_fail - dt.timedelta(days=1)
        ).exists()
        # The loaded bank is one open finding of the trends, holding the change the trend proposed (no second one).
        [loaded] = Finding.objects.filter(source=Finding.Source.BAS_TREND, rule="FILTER", state=Finding.State.OPEN)
        assert (loaded.component, loaded.corrective_work_order) == (bank, change)

        # The stuck outdoor-air damper: one open fault, its evidence windows and its proposed corrective work.
        stuck = _unit(STUCK_DAMPER)
        faults = Fault.objects.filter(ahu=stuck, state=Fault.State.OPEN)
        assert list(faults.values_list("code", flat=True)) == ["FC6"]
        fault = faults.get()
        assert fault.windows and all(w["start"] < w["end"] for w in fault.windows)
        assert fault.condition_code == "damper_position" and fault.component.specs["role"] == "outdoor"
        work = fault.corrective_work_order
        assert work is not None and work.kind == WorkOrder.Kind.CORRECTIVE and work.state in WorkOrder.OPEN_STATES
        assert work.approval == WorkOrder.Approval.PENDING  # proposed: awaits the supervisor
        assert "found in the building-automation trends" in work.reason
        # ... and one open finding of the damper with its source and rule, holding that work.
        [finding] = Finding.objects.filter(ahu=stuck, state=Finding.State.OPEN, source=Finding.Source.BAS_TREND)
        assert fault.finding == finding and (finding.rule, finding.component) == ("FC6", fault.component)
        assert finding.corrective_work_order == work and finding.evidence.get("end")
        assert finding.source_words == "building-automation trends, rule FC6"
        figures = compliance_figures(
            site_ids=[stuck.building.site_id], start=DECEMBER - dt.timedelta(days=90), end=DECEMBER, as_of=AT
        )
        assert any(r["finding"] == finding and r["source"] == finding.source_words for r in figures.open_findings)

        # The leaking cooling valve: air cooled across the closed coil in free cooling (FC#8 with the mapped points).
        leaking = _unit(LEAKING_VALVE)
        assert list(Fault.objects.filter(ahu=leaking, state="open").values_list("code", flat=True)) == ["FC8"]
        # Its proposed work says what the technician is to look for, not a set-point problem.
        leak_work = Fault.objects.get(ahu=leaking, state="open").corrective_work_order
        assert leak_work.title == "Supply and mixed air differ in free cooling: leaking coil valve or faulty sensor"
        assert "check for a leaking cooling valve or a faulty sensor" in leak_work.reason
        # ... and its finding tells the property manager the same, not only the rule's formula.
        leak_finding = Fault.objects.get(ahu=leaking, state="open").finding
        assert "check for a leaking cooling valve or a faulty sensor" in leak_finding.reason

        # The freezing night: not ready for freeze protection until retested, in readiness and in the figures.
        frozen = _unit(FREEZE_NIGHT)
        freeze = Fault.objects.get(ahu=frozen, code=Fault.FREEZE)
        assert min(w["lowest_c"] for w in freeze.windows) < 4.4  # G36 stage 1, 4.4 °C (automation FREEZE_SECTION)
        # Its preheater's points tell the journey: the air after the tripped preheater and its frost thermostat.
        assert "The air after the preheater fell to " in freeze.reason, freeze.reason
        assert f"the frost thermostat had tripped (trend point {frozen.tag}.FRZ-STAT)" in freeze.reason
        # Every unit with freeze protection has them, AHU-L1 (electric preheater) too, and its healthy days trip
        # nothing; a preheat coil's valve is mapped beside them.
        for tag in ("AHU-L1", "AHU-S1", "AHU-S2"):
            names = set(Point.objects.filter(ahu__tag=tag).values_list("name", flat=True))
            assert {f"{tag}.PH-LAT", f"{tag}.FRZ-STAT"} <= names, (tag, names)
        assert "AHU-S1.PH-VLV" in set(Point.objects.filter(ahu__tag="AHU-S1").values_list("name", flat=True))
        units = list(AHU.objects.select_related("building__site"))
        readiness = {r.unit.pk: r for r in freeze_readiness(units=units, as_of=AT)}
        assert readiness[frozen.pk].status == NOT_READY
        assert "building-automation" in readiness[frozen.pk].reason or "freezing" in readiness[frozen.pk].reason
        site = frozen.building.site
        figures = compliance_figures(site_ids=[site.pk], start=DECEMBER - dt.timedelta(days=90), end=DECEMBER, as_of=AT)
        row = next(r for r in figures.freeze if r["unit"] == frozen or getattr(r["unit"], "pk", None) == frozen.pk)
        assert not row["ready"]
        assert figures.freeze_counts[NOT_READY] >= 1

        # Healthy units: no fault at all.
        seeded = {_unit(k).pk for k in (FILTER, STUCK_DAMPER, LEAKING_VALVE, FREEZE_NIGHT)}
        healthy_faults = Fault.objects.exclude(ahu_id__in=seeded).values_list("ahu__tag", "code")
        assert list(healthy_faults) == []
        # Every open fault is one open finding, and no trend finding stands without its fault (the loaded filter's
        # stands on its trend days).
        open_faults = Fault.objects.filter(state=Fault.State.OPEN)
        trend_findings = Finding.objects.filter(source=Finding.Source.BAS_TREND, state=Finding.State.OPEN).exclude(
            rule="FILTER"
        )
        assert sorted(open_faults.values_list("finding_id", flat=True)) == sorted(
            trend_findings.values_list("pk", flat=True)
        )
        assert Fault.objects.filter(ahu=filter_unit).count() == 0
        trended = set(Point.objects.values_list("ahu_id", flat=True))
        # Every demo point has its (invented) BACnet address, as the point map promises.
        assert not Point.objects.filter(bacnet_device_instance__isnull=True).exists()
        assert set(Point.objects.values_list("bacnet_object_type", flat=True)) >= {"analog-input", "binary-input"}
        assert seeded < trended and len(trended) >= 8

        # Loading again changes nothing.
        before = _snapshot()
        call_command("load_demo", stdout=io.StringIO())
        assert _snapshot() == before
