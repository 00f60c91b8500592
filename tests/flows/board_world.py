"""An invented contractor's week on the supervisor's board, shared by the HTTP and the browser journeys.

The clock is Wednesday 5 March 2025, 10:00 UTC (11:00 in Amsterdam, where both sites are): the board's week is
Monday 3 to Sunday 9 March.

- Quayside Works (52.30 N, 4.90 E) has two buildings, Mill Block and Granary, each with a unit tagged AHU-01.
- Orchard Park (52.10 N, 4.90 E) is 0.2 degrees of latitude south of it: 22.24 km great-circle
  (6371.0 km x 0.2 x pi / 180; mean Earth radius, IUGG), one leg of the day's route.
- Six visits are planned for today whose due dates lie in later weeks (17 to 26 March): Tess has three
  (180 + 120 + 60 = 360 min of tasks, at both sites), Omar three (3 x 60 min, Quayside only).
- A 100-minute mechanical visit at Orchard Park is due Friday and not assigned yet.
- Pia does electrical work only; she has nothing planned but cannot do mechanical work.
- One visit is completed and waits for the supervisor's verification; one form arrived flagged.
"""

import datetime as dt
import uuid
from dataclasses import dataclass

from django.utils import timezone

from accounts.models import Organisation, Role, User
from inspections.models import Inspection
from inventory.models import AHU, Site
from scheduling.models import TaskDefinition, WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, SiteFactory
from tests.factories.scheduling import WorkOrderFactory, add_task

NOW = dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC)
TODAY = dt.date(2025, 3, 5)
MONDAY = dt.date(2025, 3, 3)
PASSWORD = "pass-for-tests-123"


@dataclass
class BoardWorld:
    org: Organisation
    quayside: Site
    orchard: Site
    mill_unit: AHU
    granary_unit: AHU
    orchard_unit: AHU
    tess: User
    omar: User
    pia: User
    supervisor: User
    planned_today: list[WorkOrder]
    fan_visit: WorkOrder
    completed: WorkOrder
    flagged: WorkOrder


def _task(org, code: str, minutes: int, skill: str) -> TaskDefinition:
    return TaskDefinition.objects.create(
        organisation=org,
        code=code,
        name=code.replace("_", " ").capitalize(),
        category="fan_bearings",
        trigger="condition",
        condition_code=code,
        checklist_code=code,
        estimated_minutes=minutes,
        skill=skill,
        source="invented for the board journey",
    )


def _work(ahu, task, *, title, due, assignee=None, planned=None, state=None) -> WorkOrder:
    wo = WorkOrderFactory(
        ahu=ahu,
        title=title,
        due_date=due,
        overdue_on=due + dt.timedelta(days=8),
        assignee=assignee,
        scheduled_for=planned,
        state=state or (WorkOrder.State.ASSIGNED if assignee else WorkOrder.State.PLANNED),
    )
    add_task(wo, task, key="board")
    return wo


def build() -> BoardWorld:
    org = OrganisationFactory(name="Kestrel Air Care")
    quayside = SiteFactory(organisation=org, name="Quayside Works", latitude=52.30, longitude=4.90)
    orchard = SiteFactory(organisation=org, name="Orchard Park", latitude=52.10, longitude=4.90)
    mill = AHUFactory(building=BuildingFactory(site=quayside, name="Mill Block"), tag="AHU-01")
    granary = AHUFactory(building=BuildingFactory(site=quayside, name="Granary"), tag="AHU-01")
    orchard_unit = AHUFactory(building=BuildingFactory(site=orchard, name="Glasshouse"), tag="AHU-02")
    tess = make_person(
        organisation=org, role=Role.TECHNICIAN, username="tess", first_name="Tess", last_name="Field",
        skills=["mechanical", "electrical"], daily_capacity_hours=7.5,
    )  # fmt: skip
    omar = make_person(
        organisation=org, role=Role.TECHNICIAN, username="omar", first_name="Omar", last_name="Vent",
        skills=["mechanical", "controls"], daily_capacity_hours=7.0,
    )  # fmt: skip
    pia = make_person(
        organisation=org, role=Role.TECHNICIAN, username="pia", first_name="Pia", last_name="Wire",
        skills=["electrical"], daily_capacity_hours=7.5,
    )  # fmt: skip
    supervisor = make_person(
        organisation=org, role=Role.SUPERVISOR, username="sara", first_name="Sara", last_name="Plan"
    )
    coil = _task(org, "coil_deep_clean", 180, "mechanical")
    damper = _task(org, "damper_overhaul", 120, "mechanical")
    hour = _task(org, "belt_round", 60, "mechanical")
    bearing = _task(org, "bearing_service", 100, "mechanical")
    later = lambda k: TODAY + dt.timedelta(days=12 + k)  # noqa: E731  (17 to 22 March: later weeks)
    planned = [
        _work(mill, coil, title="Coil deep clean", due=later(0), assignee=tess, planned=TODAY),
        _work(granary, damper, title="Damper overhaul", due=later(1), assignee=tess, planned=TODAY),
        _work(orchard_unit, hour, title="Belt round", due=later(2), assignee=tess, planned=TODAY),
        _work(mill, hour, title="Belt round", due=later(3), assignee=omar, planned=TODAY),
        _work(granary, hour, title="Belt round", due=later(4), assignee=omar, planned=TODAY),
        _work(mill, hour, title="Belt tension", due=later(7), assignee=omar, planned=TODAY),
    ]
    fan_visit = _work(orchard_unit, bearing, title="Fan bearing service", due=dt.date(2025, 3, 7))
    completed = _work(
        granary, hour, title="Filter change", due=dt.date(2025, 3, 4), assignee=omar, state=WorkOrder.State.COMPLETED
    )
    WorkOrder.objects.filter(pk=completed.pk).update(completed_at=NOW - dt.timedelta(hours=20))
    flagged = _work(
        mill, hour, title="Damper stroke test", due=dt.date(2025, 3, 4), assignee=tess, state=WorkOrder.State.COMPLETED
    )
    WorkOrder.objects.filter(pk=flagged.pk).update(completed_at=NOW - dt.timedelta(hours=3))
    finished = NOW - dt.timedelta(hours=3)
    # The form of a visit reassigned while the phone was offline: stored and flagged for the supervisor.
    Inspection.objects.create(
        client_uuid=uuid.uuid4(), organisation=org, work_order=flagged, ahu=mill, technician=tess,
        work_order_version_seen=1, started_at=finished - dt.timedelta(hours=1), finished_at=finished,
        received_at=timezone.now(), complete=True, work_order_completed=True, signature_name="Tess Field",
        signature_image="", signed_at=finished,
        flags=[{"code": "work_order_reassigned", "reason": "The visit was reassigned before this form arrived."}],
    )  # fmt: skip
    return BoardWorld(
        org, quayside, orchard, mill, granary, orchard_unit, tess, omar, pia, supervisor, planned, fan_visit,
        completed, flagged,
    )  # fmt: skip
