"""Findings with photos on two sites of one contractor and one of another, for the property manager's pages.

Built on the shared scenario (tests/frontend/scenario.py): Harbour House (granted to the property manager Manu
Keeper) and Linden Court (not granted). Each finding comes from a filter check synced as the phone sends it,
with a photo of the bank: the final filters of AHU-01 read 400 Pa against a final 250 Pa (factory specs) on
18 Nov 2026 and 430 Pa on 1 Dec 2026, so one finding seen on two visits; its corrective work is approved and
planned for 9 Dec 2026. The clock is fixed by the callers at NOW (2 Dec 2026 09:00 UTC, 10:00 on the sites'
clock, Europe/Amsterdam).
"""

import datetime as dt
from dataclasses import dataclass

from accounts.models import Role, User
from accounts.services import site_grant
from inspections.models import Finding, Photo
from inspections.selectors import checklist_for
from inspections.services import inspection_sync
from scheduling.services.corrective import corrective_work_order_approve
from scheduling.services.work_orders import work_order_schedule
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import data_url, image_bytes, sync_form
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.flows.test_work_order_record import DESIGN_FLOW, filled_readings

from . import scenario as scenario_module
from .scenario import Scenario, make_work

NOW = dt.datetime(2026, 12, 2, 9, tzinfo=dt.UTC)
FIRST_VISIT = dt.datetime(2026, 11, 18, 9, 30, tzinfo=dt.UTC)
SECOND_VISIT = dt.datetime(2026, 12, 1, 9, 30, tzinfo=dt.UTC)
PLANNED_FOR = dt.date(2026, 12, 9)


@dataclass
class FindingsWorld:
    s: Scenario
    finding_a: Finding
    finding_b: Finding
    finding_other_org: Finding
    photo_a: Photo
    photo_b: Photo
    photo_other_org: Photo
    manager_us: User
    manager_other_org: User


def visit_with_failing_filters(*, ahu, technician, finished_at, final_dp: float, photo_uuid: str):
    """A filter check of ``ahu`` synced with its final filters at ``final_dp`` Pa and a photo of that bank."""
    wo = make_work(ahu=ahu, assignee=technician, title="Filter check", due=finished_at.date())
    final = ahu.components.get(name="Final filters")
    readings = filled_readings(
        checklist_for(work_order=wo, user=technician), {**DESIGN_FLOW, "filter_check.dp": final_dp}
    )
    photo = {"client_uuid": photo_uuid, "item": "filter_check.photo", "component": final.label_code,
             "data": data_url(image_bytes("JPEG", (320, 240)))}  # fmt: skip
    form = sync_form(wo, readings, photos=[photo], finished_at=finished_at)
    [result] = inspection_sync(user=technician, forms=[form])
    assert result["status"] in ("stored", "flagged"), result
    return wo, Photo.objects.get(client_uuid=photo_uuid)


def build(time_machine) -> FindingsWorld:
    """The world, made on the fixed clock (each visit synced the moment after it was finished)."""
    time_machine.move_to(FIRST_VISIT + dt.timedelta(minutes=5), tick=False)
    s = scenario_module.build()
    _, photo_a = visit_with_failing_filters(
        ahu=s.unit_a, technician=s.technician, finished_at=FIRST_VISIT, final_dp=400,
        photo_uuid="5d0c5f5e-0000-4000-8000-0000000000a1",
    )  # fmt: skip
    _, photo_b = visit_with_failing_filters(
        ahu=s.unit_b, technician=s.other_technician, finished_at=FIRST_VISIT, final_dp=410,
        photo_uuid="5d0c5f5e-0000-4000-8000-0000000000b1",
    )  # fmt: skip
    time_machine.move_to(SECOND_VISIT + dt.timedelta(minutes=5), tick=False)
    visit_with_failing_filters(
        ahu=s.unit_a, technician=s.technician, finished_at=SECOND_VISIT, final_dp=430,
        photo_uuid="5d0c5f5e-0000-4000-8000-0000000000a2",
    )  # fmt: skip
    finding_a = Finding.objects.get(ahu=s.unit_a, state=Finding.State.OPEN, component__name="Final filters")
    corrective = corrective_work_order_approve(work_order=finding_a.corrective_work_order, by=s.supervisor)
    work_order_schedule(work_order=corrective, day=PLANNED_FOR, by=s.supervisor)

    other_org = OrganisationFactory(name="Northgate Facilities")
    other_site = SiteFactory(organisation=other_org, name="Quay Offices")
    other_unit = make_full_unit(building=BuildingFactory(site=other_site, name="Main"), tag="AHU-01")
    other_tech = make_person(organisation=other_org, role=Role.TECHNICIAN, username="otto")
    time_machine.move_to(NOW, tick=False)
    _, photo_other = visit_with_failing_filters(
        ahu=other_unit, technician=other_tech, finished_at=SECOND_VISIT, final_dp=420,
        photo_uuid="5d0c5f5e-0000-4000-8000-0000000000c1",
    )  # fmt: skip
    manager_other = make_person(organisation=other_org, role=Role.PROPERTY_MANAGER, username="pmother")
    site_grant(user=manager_other, site=other_site)
    manager_us = make_person(
        organisation=s.org, role=Role.PROPERTY_MANAGER, username="pmus", first_name="Uma", last_name="Stone",
        unit_system="us",
    )  # fmt: skip
    site_grant(user=manager_us, site=s.site_a)
    return FindingsWorld(
        s=s,
        finding_a=Finding.objects.get(pk=finding_a.pk),
        finding_b=Finding.objects.get(ahu=s.unit_b, state=Finding.State.OPEN, component__name="Final filters"),
        finding_other_org=Finding.objects.get(ahu=other_unit, component__name="Final filters"),
        photo_a=photo_a,
        photo_b=photo_b,
        photo_other_org=photo_other,
        manager_us=manager_us,
        manager_other_org=manager_other,
    )
