"""An organisation's history: daily outdoor temperatures, monthly run-hour readings, and a quarterly
filter-check visit per unit, completed and verified, with its inspection (occurrence keys ``hist-…``)."""

from __future__ import annotations

import datetime as dt
import uuid
from dataclasses import dataclass

from .common import GenerationRun, aware, bulk


@dataclass
class Fleet:
    """One organisation's rows its history is written for."""

    org: object
    ahus: list
    techs: list
    supervisor: object
    filters_by_ahu: dict[int, list]


def temperatures_create(*, sites: list, run: GenerationRun) -> None:
    """Outdoor temperatures, daily for the history period, from the normals plus weather noise."""
    from scheduling.models import OutdoorTemperature

    rng, today = run.rng, run.today
    temps = []
    start = today - dt.timedelta(days=run.years * 365)
    for site in sites:
        day = start
        while day <= today:
            m = day.month - 1
            noise = rng.gauss(0, 2.5)
            lo = round(site.normals_min_c[m] + noise, 1)
            hi = round(max(lo + 1, site.normals_max_c[m] + noise + rng.gauss(0, 1)), 1)
            temps.append(
                OutdoorTemperature(
                    site=site,
                    date=day,
                    min_c=lo,
                    max_c=hi,
                    mean_c=round((lo + hi) / 2, 1),
                    source=OutdoorTemperature.Source.CSV,
                )
            )
            day += dt.timedelta(days=1)
    bulk(OutdoorTemperature, temps)
    run.counted("outdoor_temperatures", len(temps))


def meters_create(*, ahus: list, run: GenerationRun) -> dict[tuple[int, int], float]:
    """Run-hour meter readings, monthly, from building automation. Returns the hours by (unit id, months ago)."""
    from scheduling.models import MeterReading

    rng = run.rng
    meters, hours_at = [], {}
    months = run.years * 12
    for ahu in ahus:
        # Run-hours a month (30 days = 720 h of clock time): never more than the clock allows.
        rate = rng.choice([250.0, 400.0, 600.0, 650.0])
        hours = rng.uniform(5_000, 60_000)
        for k in range(months, -1, -1):
            taken = aware(run.today - dt.timedelta(days=30 * k), 6)
            hours += rate * rng.uniform(0.9, 1.05)
            meters.append(
                MeterReading(ahu=ahu, hours=round(hours, 1), taken_at=taken, source=MeterReading.Source.BAS_CSV)
            )
            hours_at[(ahu.pk, k)] = round(hours, 1)
    bulk(MeterReading, meters)
    run.counted("meter_readings", len(meters))
    return hours_at


def visits_create(*, fleet: Fleet, filter_task, run: GenerationRun) -> tuple[list, list]:
    """The quarterly filter-check work orders, verified, with a task per filter bank.
    Returns (work orders, (unit, technician, quarters ago, due, done) of each)."""
    from scheduling.models import WorkOrder, WorkOrderTask

    rng, today = run.rng, run.today
    visits = run.years * 4
    wos, plan = [], []
    for a_index, ahu in enumerate(fleet.ahus):
        tech = fleet.techs[a_index % len(fleet.techs)]
        for q in range(visits, 0, -1):
            due = today - dt.timedelta(days=91 * q)
            done = aware(due + dt.timedelta(days=rng.randint(-3, 5)), 10, rng.randint(0, 59))
            wos.append(
                WorkOrder(
                    public_id=uuid.UUID(int=rng.getrandbits(128), version=4),
                    organisation=fleet.org,
                    ahu=ahu,
                    kind=WorkOrder.Kind.PREVENTIVE,
                    state=WorkOrder.State.VERIFIED,
                    title="Filter pressure-drop check",
                    assignee=tech,
                    due_date=due,
                    overdue_on=due + dt.timedelta(days=8),  # first day after a 7-day grace
                    scheduled_for=due,
                    started_at=done - dt.timedelta(minutes=40),
                    completed_at=done,
                    verified_at=done + dt.timedelta(days=1),
                    version=5,
                )
            )
            plan.append((ahu, tech, q, due, done))
    wos = bulk(WorkOrder, wos)
    tasks = []
    for wo, (ahu, _tech, _q, due, done) in zip(wos, plan, strict=True):
        for comp in fleet.filters_by_ahu.get(ahu.pk, []):
            tasks.append(
                WorkOrderTask(
                    work_order=wo,
                    task=filter_task,
                    task_code="filter_check",
                    ahu=ahu,
                    component=comp,
                    component_key=comp.pk,
                    due_date=due,
                    occurrence_key=f"hist-{due.isoformat()}",
                    completed_at=done,
                )
            )
    bulk(WorkOrderTask, tasks)
    run.counted("work_orders_history", len(wos))
    return wos, plan


def inspections_create(*, fleet: Fleet, wos: list, plan: list, run: GenerationRun) -> list:
    """Each visit's inspection, signed and verified; one in five of the latest visits (the first of them
    always) is left flagged for a supervisor."""
    from inspections.models import Inspection

    rng = run.rng
    inspections = []
    latest_visits = 0
    for wo, (ahu, tech, q, _due, done) in zip(wos, plan, strict=True):
        flagged = q == 1 and latest_visits % 5 == 0
        latest_visits += q == 1
        flags = [{"code": "improbable_value", "reason": "a reading outside the plausible range"}] if flagged else []
        inspections.append(
            Inspection(
                client_uuid=uuid.UUID(int=rng.getrandbits(128), version=4),
                organisation=fleet.org,
                work_order=wo,
                ahu=ahu,
                technician=tech,
                state=Inspection.State.SUBMITTED if flagged else Inspection.State.VERIFIED,
                flags=flags,
                flag_reason=flags[0]["reason"] if flags else "",
                template_versions={"visit": 1, "filter_check": 1},
                unit_system="si",
                work_order_version_seen=4,
                started_at=done - dt.timedelta(minutes=40),
                finished_at=done,
                received_at=done + dt.timedelta(minutes=5),
                complete=True,
                work_order_completed=True,
                signature_name=str(tech),
                signature_image="signatures/bench.png",
                signed_at=done,
                verified_at=None if flagged else done + dt.timedelta(days=1),
                verified_by=None if flagged else fleet.supervisor,
            )
        )
    inspections = bulk(Inspection, inspections)
    run.counted("inspections", len(inspections))
    return inspections
