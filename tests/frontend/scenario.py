"""An invented contractor with two client sites, one unit each, and a day of work; shared by page and browser tests."""

import datetime as dt
from dataclasses import dataclass

from accounts.models import Organisation, Role, User
from accounts.services import site_grant
from inspections.services import checklist_library_install
from inventory.models import AHU, Site
from inventory.today import today_for
from scheduling.models import WorkOrder
from scheduling.services.library import task_library_install
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory, add_task

PASSWORD = "pass-for-tests-123"


@dataclass
class Scenario:
    org: Organisation
    site_a: Site
    site_b: Site
    unit_a: AHU
    unit_b: AHU
    technician: User
    other_technician: User
    supervisor: User
    manager_a: User
    work_a: WorkOrder
    work_b: WorkOrder


def make_work(*, ahu: AHU, assignee=None, title="Quarterly service", due=None, state=None) -> WorkOrder:
    due = due or today_for(ahu.building.site)  # the site's today, as the technician's page reads it
    wo = WorkOrderFactory(
        ahu=ahu,
        title=title,
        due_date=due,
        assignee=assignee,
        state=state or (WorkOrder.State.ASSIGNED if assignee else WorkOrder.State.PLANNED),
    )
    final = ahu.components.get(name="Final filters")
    add_task(wo, "filter_check", final)
    return wo


def build(*, unit_system: str = "si") -> Scenario:
    task_library_install()
    checklist_library_install()
    org = OrganisationFactory(name="Brightwater Building Services")
    site_a = SiteFactory(organisation=org, name="Harbour House")
    site_b = SiteFactory(organisation=org, name="Linden Court")
    unit_a = make_full_unit(building=BuildingFactory(site=site_a, name="North block"), tag="AHU-01")
    unit_b = make_full_unit(building=BuildingFactory(site=site_b, name="East wing"), tag="AHU-07")
    technician = make_person(
        organisation=org,
        role=Role.TECHNICIAN,
        username="tess",
        first_name="Tess",
        last_name="Field",
        unit_system=unit_system,
    )
    other = make_person(organisation=org, role=Role.TECHNICIAN, username="omar", first_name="Omar", last_name="Vent")
    supervisor = make_person(
        organisation=org, role=Role.SUPERVISOR, username="sara", first_name="Sara", last_name="Plan"
    )
    manager_a = make_person(
        organisation=org, role=Role.PROPERTY_MANAGER, username="pmanu", first_name="Manu", last_name="Keeper"
    )
    site_grant(user=manager_a, site=site_a)
    work_a = make_work(ahu=unit_a, assignee=technician, title="Quarterly service")
    work_b = make_work(
        ahu=unit_b, assignee=other, title="Filter round", due=today_for(unit_b.building.site) + dt.timedelta(days=1)
    )
    return Scenario(org, site_a, site_b, unit_a, unit_b, technician, other, supervisor, manager_a, work_a, work_b)
