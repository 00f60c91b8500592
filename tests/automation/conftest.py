"""A unit with its usual parts and a point map, in one organisation, and a second organisation beside it."""

from types import SimpleNamespace

import pytest

from accounts.models import Role
from automation.services import point_create
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit


def part(ahu, name):
    return ahu.components.get(name=name)


def map_points(ahu, by=None):
    """The points a mixed-air unit's automation system usually has (names as a BAS might give them)."""
    specs = [
        ("AHU1.SAT", "Supply_Air_Temperature_Sensor", None, (1001, "analog-input", 1)),
        ("AHU1.MAT", "Mixed_Air_Temperature_Sensor", None, (1001, "analog-input", 2)),
        ("AHU1.RAT", "Return_Air_Temperature_Sensor", None, (1001, "analog-input", 3)),
        ("AHU1.OAT", "Outside_Air_Temperature_Sensor", None, (1001, "analog-input", 4)),
        ("AHU1.FILT-DP", "Filter_Differential_Pressure_Sensor", "Final filters", (1001, "analog-input", 5)),
        ("AHU1.SF-SPD", "Fan_Speed_Command", "Supply fan", (1001, "analog-output", 1)),
        ("AHU1.SF-STS", "Fan_Status", "Supply fan", (1001, "binary-input", 1)),
        ("AHU1.OAD-CMD", "Damper_Position_Command", "Outdoor-air damper", (1001, "analog-output", 2)),
        ("AHU1.HCV", "Valve_Position_Command", "Heating coil", (1001, "analog-output", 3)),
        ("AHU1.CCV", "Valve_Position_Command", "Cooling coil", None),
        ("AHU1.SAT-SP", "Supply_Air_Temperature_Setpoint", None, None),
        ("AHU1.CO2", "CO2_Level_Sensor", "Return CO2 sensor", None),
    ]
    points = {}
    for name, brick_class, component, address in specs:
        bacnet = {}
        if address:
            device, object_type, instance = address
            bacnet = {
                "bacnet_device_instance": device,
                "bacnet_object_type": object_type,
                "bacnet_object_instance": instance,
            }
        points[name] = point_create(
            ahu=ahu,
            by=by,
            name=name,
            brick_class=brick_class,
            component=part(ahu, component) if component else None,
            **bacnet,
        )
    return points


@pytest.fixture
def plant(db):
    """Organisation A (supervisor, technician, property manager without a grant) with one site, one unit and
    its points; organisation B with its own supervisor and a site."""
    org_a = OrganisationFactory(name="Testing Air A", slug="air-a")
    org_b = OrganisationFactory(name="Testing Air B", slug="air-b")
    site = SiteFactory(organisation=org_a, code="harbour", name="Harbour Offices", time_zone="Europe/Amsterdam")
    ahu = make_full_unit(building=BuildingFactory(site=site, code="main", name="Main block"), tag="AHU-01")
    foreign_site = SiteFactory(organisation=org_b, code="quay", name="Quay House", time_zone="America/New_York")
    foreign_ahu = make_full_unit(building=BuildingFactory(site=foreign_site, code="q1"), tag="AHU-01")
    supervisor = make_person(organisation=org_a, role=Role.SUPERVISOR, username="super")
    people = SimpleNamespace(
        supervisor=supervisor,
        technician=make_person(organisation=org_a, role=Role.TECHNICIAN, username="tech"),
        manager=make_person(organisation=org_a, role=Role.PROPERTY_MANAGER, username="pm"),
        foreign=make_person(organisation=org_b, role=Role.SUPERVISOR, username="b-super"),
    )
    points = map_points(ahu, by=supervisor)
    foreign_points = map_points(foreign_ahu)
    return SimpleNamespace(
        org_a=org_a,
        org_b=org_b,
        site=site,
        ahu=ahu,
        points=points,
        foreign_site=foreign_site,
        foreign_ahu=foreign_ahu,
        foreign_points=foreign_points,
        people=people,
    )
