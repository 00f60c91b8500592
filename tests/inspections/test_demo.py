"""The demo history: a year of visits with realistic filter curves, deterministic."""

import datetime as dt
import itertools

import pytest

from accounts.models import Role
from inspections.demo import demo_history_load
from inspections.models import Finding, Inspection, Reading
from scheduling.models import WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit


@pytest.mark.django_db
def test_demo_history_has_a_year_of_completed_visits_filter_curves_and_findings():
    org = OrganisationFactory(slug="demo-org")
    make_person(organisation=org, role=Role.TECHNICIAN)
    site = SiteFactory(organisation=org, code="DEMO-1")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-01")  # the seed is made of these names
    counts = demo_history_load(organisation=org, today=dt.date(2025, 3, 1), months=12)
    assert counts["inspections"] == 12
    assert Inspection.objects.filter(ahu=ahu).count() == 12
    assert WorkOrder.objects.filter(ahu=ahu, kind="preventive", state="completed").count() == 12
    final = ahu.components.get(name="Final filters")
    dps = list(
        Reading.objects.filter(component=final, item__key="dp", item__template__code="filter_check")
        .order_by("inspection__finished_at")
        .values_list("value_si", flat=True)
    )
    assert len(dps) == 12
    rises = sum(1 for a, b in itertools.pairwise(dps) if b > a)
    drops = [a - b for a, b in itertools.pairwise(dps) if b < a - 30]
    assert rises >= 7 and drops, dps  # rising with run-hours, at least one drop after a change
    assert Finding.objects.filter(ahu=ahu).exists()
    assert Finding.objects.filter(ahu=ahu, corrective_work_order__isnull=False).exists()
    # Deterministic and idempotent: a second run adds nothing.
    again = demo_history_load(organisation=org, today=dt.date(2025, 3, 1), months=12)
    assert again["inspections"] == 0 and Inspection.objects.count() == 12
