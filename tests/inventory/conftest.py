"""A small two-organisation world for tenancy and API tests."""

import datetime as dt
from types import SimpleNamespace

import pytest

from accounts.models import Role
from accounts.services import site_grant
from scheduling.models import WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit


@pytest.fixture
def world(db):
    """Org A with sites ``own`` and ``other`` (same org), org B with site ``foreign``; one unit on each.

    The technician has a work order on the ``own`` unit; the property manager is granted ``own`` only.
    """
    org_a = OrganisationFactory(name="Testing Air A", slug="air-a")
    org_b = OrganisationFactory(name="Testing Air B", slug="air-b")
    sites, units = {}, {}
    for key, org in (("own", org_a), ("other", org_a), ("foreign", org_b)):
        sites[key] = SiteFactory(organisation=org, code=f"{key}-site", name=f"{key.title()} Site")
        units[key] = make_full_unit(building=BuildingFactory(site=sites[key], code=f"{key}-b"), tag=f"AHU-{key}")
    people = {
        Role.TECHNICIAN: make_person(organisation=org_a, role=Role.TECHNICIAN, username="tech"),
        Role.SUPERVISOR: make_person(organisation=org_a, role=Role.SUPERVISOR, username="super"),
        Role.PROPERTY_MANAGER: make_person(organisation=org_a, role=Role.PROPERTY_MANAGER, username="pm"),
        Role.ADMIN: make_person(organisation=org_a, role=Role.ADMIN, username="admin"),
    }
    site_grant(user=people[Role.PROPERTY_MANAGER], site=sites["own"])
    WorkOrder.objects.create(
        organisation=org_a,
        ahu=units["own"],
        title="Quarterly filter check",
        assignee=people[Role.TECHNICIAN],
        state=WorkOrder.State.ASSIGNED,
        due_date=dt.date(2026, 3, 1),
    )
    return SimpleNamespace(org_a=org_a, org_b=org_b, sites=sites, units=units, people=people)
